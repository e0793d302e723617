"""The staged edge method's verdict between direct and indirect, from explicit evidence.

Three pieces of evidence, each reported with the way it points and its strength:

* **Magnitude** (only where α is absolute: α given, or a thickness known). An allowed direct
  edge reaches α ≈ 10⁴–10⁵ cm⁻¹ within about 0.1–0.2 eV above its onset; a phonon-assisted
  indirect edge stays near 10¹–10³ cm⁻¹ for hundreds of meV (Pankove, Optical Processes in
  Semiconductors, 1971, ch. 3). The largest α within ``MAGNITUDE_WINDOW_EV`` above the higher
  of the two Tauc gaps (α must be strong just above either candidate for a direct edge) is
  compared with 10^3.5 cm⁻¹, the geometric middle.
* **Straightness**: the energy span over which each Tauc form stays straight at the onset
  (:mod:`edgefit.edge.tangent`). For the right exponent the ordinate is a straight line above
  the tail; for the wrong one it is a power law of another exponent, straight over less.
* **Edge models**: the Bayesian information criterion of the continuous edge model of each
  kind fitted to the same points (:mod:`edgefit.edge.models`); the scale of Kass & Raftery
  (J. Am. Stat. Assoc. 90, 773, 1995): ΔBIC ≥ 10 very strong, ≥ 6 strong, ≥ 2 positive.

Each item scores 3 (strong), 2 (moderate) or 1 (weak) for the kind it favours; magnitude,
the strongest single piece of evidence where it is available (the shape of broadened and
excitonic edges misleads both the straightness and the models), counts three times. The verdict is
the kind with the higher total, its strength ``strong`` (total margin ≥ 4 and nothing strong
against it), ``moderate`` (margin ≥ 2) or ``weak``; ``ambiguous`` only when the margin is
below 1, or when strong items point both ways and the margin is below 3. The candidates are
always ordered.
"""
from __future__ import annotations

import math

#: how far above the steepest rise of ln α the magnitude is read [eV]
MAGNITUDE_WINDOW_EV = 0.15
#: log10 α [cm⁻¹]: the geometric middle between direct (10⁴–10⁵) and indirect (10¹–10³)
MAGNITUDE_MIDDLE = 3.5
#: ... and the distances from it (in decades) that make the magnitude moderate, strong
MAGNITUDE_STEPS = (0.25, 0.5, 1.0)
#: ratio of straight spans that make straightness weak, moderate, strong evidence
SPAN_RATIOS = (1.3, 1.8, 3.0)
#: ΔBIC that makes the edge models weak, moderate, strong evidence (Kass & Raftery 1995)
BIC_STEPS = (2.0, 6.0, 10.0)
STRENGTH_POINTS = {"weak": 1.0, "moderate": 2.0, "strong": 3.0}
MAGNITUDE_WEIGHT = 3.0
#: A direct edge more than this above the indirect one is a higher transition, not the second
#: onset of the fundamental edge (common practice, no source).
MIN_GAP_STEP_EV = 0.05
MAX_GAP_STEP_EV = 1.0


def _grade(value, steps):
    """'weak', 'moderate', 'strong' or None for a value against three rising thresholds."""
    if value >= steps[2]:
        return "strong"
    if value >= steps[1]:
        return "moderate"
    if value >= steps[0]:
        return "weak"
    return None


def magnitude_item(log10_alpha):
    """The magnitude evidence for a largest log10 α [cm⁻¹] just above the onset."""
    if log10_alpha is None or not math.isfinite(log10_alpha):
        return None
    dist = log10_alpha - MAGNITUDE_MIDDLE
    grade = _grade(abs(dist), MAGNITUDE_STEPS)
    return {"favours": ("direct" if dist > 0 else "indirect") if grade else None,
            "strength": grade, "log10_alpha_per_cm": log10_alpha,
            "text": f"α reaches 10^{log10_alpha:.1f} cm⁻¹ within "
                    f"{MAGNITUDE_WINDOW_EV * 1e3:.0f} meV of the onset (direct edges reach "
                    "10⁴–10⁵, indirect ones stay at 10¹–10³)"}


def straightness_item(span_direct_ev, span_indirect_ev):
    """The straightness evidence from the straight spans of the two allowed Tauc forms."""
    sd, si = span_direct_ev or 0.0, span_indirect_ev or 0.0
    if sd <= 0 and si <= 0:
        return None
    if sd <= 0 or si <= 0:
        ratio = math.inf
    else:
        ratio = max(sd, si) / min(sd, si)
    grade = _grade(ratio, SPAN_RATIOS)
    return {"favours": ("direct" if sd > si else "indirect") if grade else None,
            "strength": grade, "span_direct_ev": sd, "span_indirect_ev": si,
            "text": f"(αhν)² is straight over {sd * 1e3:.0f} meV, (αhν)^(1/2) over "
                    f"{si * 1e3:.0f} meV at the onset"}


def models_item(bic_direct, bic_indirect):
    """The edge-model evidence from the BIC of the direct and indirect edge models."""
    if bic_direct is None or bic_indirect is None:
        return None
    delta = bic_indirect - bic_direct
    grade = _grade(abs(delta), BIC_STEPS)
    return {"favours": ("direct" if delta > 0 else "indirect") if grade else None,
            "strength": grade, "delta_bic": abs(delta), "bic_direct": bic_direct,
            "bic_indirect": bic_indirect,
            "text": f"the {'direct' if delta > 0 else 'indirect'} edge model fits better by "
                    f"ΔBIC = {abs(delta):.1f}"}


def decide(items: dict):
    """(transition, strength, reason, evidence) from the evidence items (None = not available).

    ``transition`` is "direct", "indirect" or "ambiguous"; ``strength`` "strong", "moderate",
    "weak" or None; ``evidence`` holds every item, the scores and the ordered candidates.
    """
    score = {"direct": 0.0, "indirect": 0.0}
    strong = {"direct": False, "indirect": False}
    for name, item in items.items():
        if not item or not item.get("favours"):
            continue
        pts = STRENGTH_POINTS[item["strength"]] * (MAGNITUDE_WEIGHT if name == "magnitude"
                                                    else 1.0)
        item["points"] = pts
        score[item["favours"]] += pts
        strong[item["favours"]] |= item["strength"] == "strong"
    best = "direct" if score["direct"] >= score["indirect"] else "indirect"
    other = "indirect" if best == "direct" else "direct"
    margin = score[best] - score[other]
    evidence = {"items": {k: v for k, v in items.items() if v}, "score": score,
                "margin": margin, "candidates": [best, other]}
    said = [v["text"] for v in items.values() if v and v.get("favours") == best]
    against = [v["text"] for v in items.values() if v and v.get("favours") == other]
    if margin < 1.0 or (strong[best] and strong[other] and margin < 3.0):
        reason = ("the evidence does not decide: " + "; ".join(
            [f"for {best}: " + ", ".join(said)] * bool(said)
            + [f"for {other}: " + ", ".join(against)] * bool(against))
                  if said or against else "no evidence either way")
        return "ambiguous", None, reason, evidence
    strength = ("strong" if margin >= 4.0 and not strong[other] else
                "moderate" if margin >= 2.0 else "weak")
    reason = "; ".join(said) + (f" (against: {'; '.join(against)})" if against else "")
    return best, strength, reason, evidence
