"""The verdict between direct, indirect, both, or ambiguous, with its evidence.

Evidence: the Bayesian information criterion of the continuous edge model per hypothesis
(fitted to the same points), and the linear range of each Tauc form at the first edge.
A difference of 10 in BIC is "very strong" evidence on the scale of Kass & Raftery
(J. Am. Stat. Assoc. 90, 773, 1995); 6 to 10 ("strong") decides only when the other form has no
linear Tauc window at the edge at all; otherwise the verdict is "ambiguous". Two onsets need
the two-onset model to beat both single edges by 10 and both Tauc forms linear at their own
onsets, the indirect linear part ending before the direct one begins.
"""
from __future__ import annotations

DELTA_BIC_DECISIVE = 10.0
#: "Strong" evidence (Kass & Raftery): enough when the Tauc linear ranges agree unequivocally.
DELTA_BIC_STRONG = 6.0
MIN_GAP_STEP_EV = 0.05
#: A direct edge more than this above the indirect one is a higher transition, not the second
#: onset of the fundamental edge (common practice, no source).
MAX_GAP_STEP_EV = 1.0


def decide(bic: dict, span_ev: dict, eg_tauc: dict, eg_model_two: tuple | None):
    """Return (transition, evidence, reason).

    Parameters
    ----------
    bic : dict
        BIC per hypothesis ("direct", "indirect", "direct+indirect"); missing = not fitted.
    span_ev : dict
        Linear range [eV] of the direct-allowed and indirect-allowed Tauc forms at the first
        edge ("direct", "indirect"); 0 when the form has no acceptable window there.
    eg_tauc : dict
        Tauc gap of the first stretch of each form ("direct", "indirect"), or None.
    eg_model_two : tuple or None
        (Eg indirect, Eg direct) of the two-onset model.
    """
    ev = {"bic": dict(bic), "linear_range_ev": dict(span_ev),
          "delta_bic_decisive": DELTA_BIC_DECISIVE}
    singles = {h: bic[h] for h in ("direct", "indirect") if bic.get(h) is not None}
    if not singles:
        return "ambiguous", ev, "no edge model could be fitted"
    best = min(singles, key=singles.get)
    other = "indirect" if best == "direct" else "direct"
    d_single = (singles[other] - singles[best]) if other in singles else float("inf")
    ev["delta_bic_single"] = d_single

    two = bic.get("direct+indirect")
    if two is not None and eg_model_two is not None:
        d_two = min(singles.values()) - two
        ev["delta_bic_two_onsets"] = d_two
        gi, gd = eg_tauc.get("indirect"), eg_tauc.get("direct")
        step_ok = eg_model_two[1] - eg_model_two[0] >= MIN_GAP_STEP_EV
        tauc_ok = gi is not None and gd is not None and gd - gi >= MIN_GAP_STEP_EV
        if d_two >= DELTA_BIC_DECISIVE and step_ok and tauc_ok:
            return ("direct+indirect", ev,
                    f"the two-onset model beats the best single edge by ΔBIC = {d_two:.0f} and "
                    f"both Tauc forms are linear at their own onsets")
    only_best_linear = span_ev.get(best, 0.0) > 0.0 and span_ev.get(other, 0.0) <= 0.0
    if d_single < DELTA_BIC_DECISIVE and not (d_single >= DELTA_BIC_STRONG and only_best_linear):
        return ("ambiguous", ev,
                f"ΔBIC between direct and indirect edge models is only {d_single:.1f} "
                f"(< {DELTA_BIC_DECISIVE:.0f})")
    if span_ev.get(best, 0.0) <= 0.0:
        return ("ambiguous", ev,
                f"the {best} edge model fits better (ΔBIC = {d_single:.0f}) but its Tauc form "
                f"has no linear window at the edge")
    if span_ev.get(other, 0.0) > span_ev.get(best, 0.0):
        return ("ambiguous", ev,
                f"the {best} edge model fits better (ΔBIC = {d_single:.0f}) but the {other} "
                f"Tauc form is linear over a longer range")
    return (best, ev,
            f"the {best} edge model fits better by ΔBIC = {d_single:.0f} and its Tauc form is "
            f"linear over {span_ev.get(best, 0) * 1e3:.0f} meV against "
            f"{span_ev.get(other, 0) * 1e3:.0f} meV")
