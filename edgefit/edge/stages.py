"""The edge analysis of one absorption spectrum, stage by stage.

1. locate the first edge (:mod:`edgefit.edge.locate`);
2. the gap of each Tauc form from its tangent on that rise, of α less a constant sub-gap
   baseline (:mod:`edgefit.edge.tangent`);
3. the continuous edge models of each kind over the same rise (:mod:`edgefit.edge.models`);
4. evidence and verdict (:mod:`edgefit.edge.evidence`), two onsets;
5. the Urbach tail on its baseline below the window of the kind decided
   (:mod:`edgefit.edge.tail`), then the reported gaps;
6. quality flags (:mod:`edgefit.edge.flags`).

:func:`analyse_edge` fills an :class:`edgefit.result.EdgeResult` from an
:class:`edgefit.spectrum.Absorption`; :func:`edgefit.analysis.analyse` calls it.
"""
from __future__ import annotations

import numpy as np

from ..errors import EdgefitError
from ..options import _range_text
from ..result import TRANSITIONS
from . import flags as quality
from . import models as edge_models
from . import evidence as edge_verdict
from .locate import locate_edge, smooth_ln
from .tail import subgap_baseline, urbach_tail
from .tangent import (apply_baseline, baseline_intersection, manual_tangent, steepest_tangent,
                      tangent_entry)
from .tauc import EXPONENT_R, ORDINATE_LABEL, cody_ordinate, tauc_ordinate

#: α must vary at least this much over the trusted data for an edge to be sought at all ...
MIN_EDGE_CONTRAST = 2.0
#: ... and this much for a verdict that is not "ambiguous" (a weak edge on a strong
#: background, or a metal's gently sloping absorption)
WEAK_EDGE_CONTRAST = 10.0
#: at most this many points reach the edge models (evenly spaced by index)
MAX_MODEL_POINTS = 60
DEFAULT_EU_EV = 0.03
#: a tangent and the edge model of the same kind that differ by more than this disagree [eV]
MODEL_AGREEMENT_EV = 0.1
MIN_POINTS = 8
#: a sub-gap baseline below this share of α at the knee of the edge is left in place
BASELINE_SHARE = 0.02
#: the edge models see the data from this far below the onset [eV]
MODEL_TAIL_EV = 0.2


def _ordinate(e, a, transition):
    """(ordinate, its noise factor per unit noise of ln α)."""
    if transition == "cody":
        return cody_ordinate(e, a), 0.5
    return tauc_ordinate(e, a, transition), 1.0 / EXPONENT_R[transition]


def _thin(fe, fa, points=MAX_MODEL_POINTS):
    if fe.size > points:
        pick = np.unique(np.linspace(0, fe.size - 1, points).round().astype(int))
        fe, fa = fe[pick], fa[pick]
    return fe, fa


def _manual_window(opts, transition):
    """The manual window that applies to ``transition`` (None where none does)."""
    if opts.window_ev is None:
        return None
    forced = {"direct": "direct-allowed", "indirect": "indirect-allowed"}.get(opts.model)
    if forced is not None:
        return opts.window_ev if transition == forced else None
    return opts.window_ev if transition in ("direct-allowed", "indirect-allowed") else None


def _subgap_baseline(e, a, ln_sd, region):
    """The constant sub-gap baseline below the edge (reflection losses in a film's −ln T,
    scattering, a substrate), fitted with the Urbach tail below the steepest rise; 0 when it
    is below ``BASELINE_SHARE`` of α at the knee (then it does not bend a Tauc plot)."""
    b = subgap_baseline(e, a, ln_sd, region.lo_ev, 0.5 * (region.steepest_ev + region.knee_ev))
    if b is None:
        return 0.0
    top = float(np.interp(region.knee_ev, e, a))
    return b if b >= BASELINE_SHARE * top else 0.0


def _less_baseline(res, e, a, a_smooth, ln_sd, region):
    """(α, smoothed α, noise of ln α) less the constant sub-gap baseline, when one is found
    (Tauc's construction assumes no absorption below the gap); unchanged otherwise."""
    base = _subgap_baseline(e, a, ln_sd, region) if region is not None else 0.0
    if not base > 0:
        return a, a_smooth, ln_sd
    with np.errstate(divide="ignore", invalid="ignore"):
        ln_sd = np.where(a > base, ln_sd * a / (a - base), np.inf)
    res.edge_region["baseline_subtracted"] = base
    res.flag("baseline-subtracted", f"a constant sub-gap baseline of {base:.3g} "
             f"({'α·d' if res.alpha_kind == 'relative' else 'α'}) is taken off before the "
             "Tauc plots (reflection losses, scattering or a substrate lift α below the "
             "edge); the Urbach tail is fitted on top of it")
    return a - base, a_smooth - base, ln_sd


def _tauc_forms(res, e, a, a_smooth, ln_sd, region, opts):
    """Stage 2: the tangent of every Tauc form (and Cody's) on the first rise (of α as given:
    the caller takes the baseline off)."""
    for tr in TRANSITIONS + ("cody",):
        y, factor = _ordinate(e, a, tr)
        ys, _ = _ordinate(e, a_smooth, tr)
        y_sd = y * factor * ln_sd
        window = _manual_window(opts, tr)
        if window is not None:
            tg = manual_tangent(e, y, y_sd, window)
            if tg is None:
                raise EdgefitError(
                    f"the window {window[0]}:{window[1]} eV holds fewer than 3 trusted points",
                    fix=f"widen --window or check the energy range of the data "
                        f"({_range_text(e)})", code="bad-option")
        else:
            tg = steepest_tangent(e, y, y_sd, ys, region) if region is not None else None
        if tg is None:
            entry = None
        else:
            entry = tangent_entry(e, y, y_sd, tg, ORDINATE_LABEL[tr], n_boot=opts.bootstrap,
                                  seed=opts.seed, manual=window is not None)
        if tr == "cody":
            res.cody = entry
        else:
            res.tauc[tr] = entry


def _manual_tail(res, e, a, ln_sd, window_ev):
    """The Urbach tail over the window the user chose (--urbach-window)."""
    lo, hi = window_ev
    res.urbach = urbach_tail(e, a, ln_sd, lo, hi, manual=True)
    if res.urbach is None:
        raise EdgefitError(f"the Urbach window {lo}:{hi} eV holds fewer than 4 trusted "
                           "points", fix="widen --urbach-window", code="bad-option")


def _fit_models(res, e, a, region, opts):
    """Stage 4: the continuous edge models of each kind over the first rise."""
    tops = [t["window_ev"][1] for t in (res.tauc["direct-allowed"],
                                        res.tauc["indirect-allowed"]) if t]
    hi = max(tops + [region.knee_ev])
    # the tail just below the onset, not decades of it: the models weigh the edge's shape
    lo = max(region.lo_ev, _onset_ev(res, region) - MODEL_TAIL_EV)
    if res.urbach is not None:
        lo = min(lo, res.urbach["window_ev"][0])
    sel = (e >= lo) & (e <= hi)
    fe, fa = _thin(e[sel], a[sel])
    eu0 = res.urbach["eu_mev"] / 1e3 if res.urbach else DEFAULT_EU_EV
    fits, guess = {}, {}
    for kind in ("direct", "indirect"):
        t = res.tauc[f"{kind}-allowed"]
        guess[kind] = t["eg_ev"] if t else region.steepest_ev
        f = edge_models.fit_hypothesis(kind, fe, fa, eg_guess=guess[kind], eu_guess=eu0)
        if f is not None:
            fits[kind] = f
    # a local minimum of the losing model would make the winner look better than the data
    # say: the loser is fitted from further starts, and the other one too when it then loses
    for _ in range(2):
        if len(fits) < 2:
            break
        loser = max(fits, key=lambda h: fits[h].bic)
        if fits[loser].starts > 1:
            break
        fits[loser] = edge_models.try_more_starts(fits[loser], fe, fa, eg_guess=guess[loser],
                                                  eu_guess=eu0)
    return fits, fe


def _onset_ev(res, region, *, upper=False):
    """The onset of the edge: the lower (``upper``: the higher) of the two allowed Tauc gaps,
    or the steepest rise of ln α where neither form has a tangent."""
    gaps = [t["eg_ev"] for t in (res.tauc["direct-allowed"], res.tauc["indirect-allowed"]) if t]
    if not gaps:
        return region.steepest_ev
    return max(gaps) if upper else min(gaps)


def _magnitude(ab, e, a, onset_ev):
    """log10 of the largest α [cm⁻¹] within the magnitude window above the onset, or None
    where α is not absolute."""
    if ab.alpha_kind != "absolute":
        return None
    sel = (e >= onset_ev) & (e <= onset_ev + edge_verdict.MAGNITUDE_WINDOW_EV)
    if not sel.any():
        return None
    return float(np.log10(a[sel].max()))


def _span(entry):
    return 0.0 if entry is None else entry["linear_span_ev"]


def _gap(res, kind, e, a, ln_sd, fits, candidate):
    """The reported gap of ``kind``: its tangent (with the sub-gap baseline when one lifts the
    ordinate, ``a`` being the α the tangents were fitted to), checked against the edge model
    of the same kind."""
    tr = f"{kind}-allowed"
    entry = res.tauc[tr]
    fit = fits.get(kind)
    model_eg = fit.params["eg_ev"] if fit is not None else None
    model_err = fit.errors.get("eg_ev") if fit is not None else None
    if entry is None:
        if model_eg is None:
            return None
        res.flag("gap-from-model", f"the {kind} gap comes from the edge model: the "
                 f"{ORDINATE_LABEL[tr]} Tauc plot has no straight part at the edge")
        gap = {"kind": kind, "eg_ev": model_eg, "eg_err_ev": model_err,
               "window_ev": res.models.get("fit_range_ev"),
               "method": "continuous edge model (no straight Tauc part)", "transition": tr}
    else:
        gap = {"kind": kind, "eg_ev": entry["eg_ev"], "eg_err_ev": entry["eg_err_ev"],
               "window_ev": entry["window_ev"], "method": f"Tauc {ORDINATE_LABEL[tr]}, "
               f"{entry['window_choice']} tangent at the steepest straight part",
               "transition": tr, "uncertainty": entry["uncertainty"]}
        top_ev = res.urbach["window_ev"][0] if res.urbach else entry["eg_ev"] - 0.05
        y, factor = _ordinate(e, a, tr)
        base = baseline_intersection(e, y, y * factor * ln_sd, entry, (top_ev - 0.4, top_ev))
        if base is not None:
            apply_baseline(res, gap, base, tr, ORDINATE_LABEL[tr])
        if model_eg is not None:
            gap["model_eg_ev"] = model_eg
            if abs(model_eg - gap["eg_ev"]) > MODEL_AGREEMENT_EV:
                thin = entry["chord_only"] or entry["n_points"] < 4
                res.flag("model-disagrees", f"the {kind} Tauc tangent ({gap['eg_ev']:.3f} eV) "
                         f"and the {kind} edge model ({model_eg:.3f} eV) differ by more than "
                         f"{MODEL_AGREEMENT_EV:.2f} eV"
                         + ("; the tangent rests on too few points, so the model's gap is "
                            "given" if thin and model_err is not None else
                            "; check the Tauc window in the report"))
                if thin and model_err is not None:
                    gap.update({"eg_tangent_ev": gap["eg_ev"], "eg_ev": model_eg,
                                "eg_err_ev": model_err,
                                "method": "continuous edge model (the tangent rests on "
                                          f"{entry['n_points']} points)"})
    if not gap["eg_ev"] > 0:
        return None              # a line that extrapolates to no energy at all is no gap
    if candidate:
        gap["candidate"] = True
    return gap


def analyse_edge(res, ab, opts) -> None:
    """Fill ``res`` (an EdgeResult) with the edge analysis of ``ab`` (an Absorption)."""
    trusted = ab.trusted
    e, a, ln_sd = ab.energy_ev[trusted], ab.alpha[trusted], ab.ln_alpha_sd[trusted]
    res.tauc = {tr: None for tr in TRANSITIONS}
    if e.size < MIN_POINTS:
        res.flag("too-few-points", f"only {e.size} trusted points: no edge analysis possible")
        res.verdict = {"transition": "ambiguous", "strength": None,
                       "reason": "too few trusted points"}
        return
    contrast = float(np.exp(min(np.log(a.max()) - np.log(a.min()), 700.0)))
    region = locate_edge(e, a, ln_sd)
    if (contrast < MIN_EDGE_CONTRAST or region is None) and opts.window_ev is None:
        res.flag("no-absorption-edge", f"α varies by a factor of only {contrast:.3g} over the "
                 f"trusted data ({_range_text(e)}) or never rises: these data hold no "
                 "absorption edge (a metal, free-carrier absorption, or a range that misses the "
                 "edge), so no gap is given; set --window to fit a Tauc line anyway")
        res.verdict = {"transition": "ambiguous", "strength": None,
                       "reason": "no absorption edge in the data"}
        return
    if region is not None:
        res.edge_region = region.to_dict()
    a_smooth = np.exp(smooth_ln(np.log(a), region.smoothing_points if region else 1))
    # the Tauc forms (and the baseline intersection of their gaps) see α less the baseline
    a_tauc, a_tauc_smooth, sd_tauc = _less_baseline(res, e, a, a_smooth, ln_sd, region)
    _tauc_forms(res, e, a_tauc, a_tauc_smooth, sd_tauc, region, opts)
    if region is None:          # a manual window on data without an edge
        region = _window_region(opts.window_ev)
    if opts.urbach_window_ev is not None:
        _manual_tail(res, e, a, ln_sd, opts.urbach_window_ev)
    fits, fe = _fit_models(res, e, a, region, opts)
    res.models = {h: f.to_dict() for h, f in fits.items()}
    res.models["fit_range_ev"] = [float(fe.min()), float(fe.max())] if fe.size else None
    res.data["models"] = {h: {"energy_ev": fe, "alpha": f.curve} for h, f in fits.items()}

    td, ti = res.tauc["direct-allowed"], res.tauc["indirect-allowed"]
    items = {"magnitude": edge_verdict.magnitude_item(
                 _magnitude(ab, e, a, _onset_ev(res, region, upper=True))),
             "straightness": edge_verdict.straightness_item(_span(td), _span(ti)),
             "edge_models": edge_verdict.models_item(
                 fits["direct"].bic if "direct" in fits else None,
                 fits["indirect"].bic if "indirect" in fits else None)}
    transition, strength, reason, evidence = edge_verdict.decide(items)
    if contrast < WEAK_EDGE_CONTRAST:
        res.flag("weak-edge-contrast", f"α varies by a factor of only {contrast:.3g} over the "
                 "trusted data: either a weak edge on a strong background (check the baseline, "
                 "or subtract the substrate) or no absorption edge at all (a metal, "
                 "free-carrier absorption); the gaps are candidates")
        if transition != "ambiguous":
            reason = f"α varies too little for a defensible edge; the evidence alone says " \
                     f"{transition} ({reason})"
            evidence["decided"], transition, strength = transition, "ambiguous", None
    if opts.model != "auto":
        imposed = {"direct": "direct", "indirect": "indirect", "both": "direct+indirect"}
        evidence["decided"] = transition
        reason = f"imposed by --model {opts.model} (the evidence alone says {transition})"
        transition, strength = imposed[opts.model], None
    res.transition = transition
    res.verdict = {"transition": transition, "strength": strength, "reason": reason,
                   "evidence": evidence}
    if transition == "ambiguous":
        res.flag("verdict-uncertain", "the data do not decide between a direct and an indirect "
                 "edge: " + reason + "; both candidate gaps are listed, the likelier first")

    if (transition == "indirect" and opts.model == "auto") or opts.model == "both":
        two = _two_onsets(res, e, a, ln_sd, region, fits, opts)
        if two is not None and opts.model == "auto":
            transition, strength = "direct+indirect", two["strength"]
            reason = two["reason"] + "; " + reason
            res.transition = transition
            res.verdict.update({"transition": transition, "strength": strength,
                                "reason": reason})
    # the tail below the window of the kind decided (the likelier one when undecided, the
    # indirect onset of two)
    lead_kind = {"direct+indirect": "indirect",
                 "ambiguous": evidence["candidates"][0]}.get(transition, transition)
    lead = res.tauc[f"{lead_kind}-allowed"]
    if lead is not None and opts.urbach_window_ev is None:
        res.urbach = urbach_tail(e, a, ln_sd, region.lo_ev,
                                 max(lead["window_ev"][0], region.start_ev))
    if res.urbach is None:
        res.flag("no-urbach-region", "no exponential tail found below the edge (too few points "
                 "below it, no data there, or no rise above the sub-gap baseline)")
    kinds = {"direct": ["direct"], "indirect": ["indirect"],
             "direct+indirect": ["indirect", "direct"],
             "ambiguous": evidence["candidates"]}[transition]
    for kind in kinds:
        if transition == "direct+indirect" and kind == "direct" and res.tauc_direct_over_indirect:
            over = res.tauc_direct_over_indirect
            res.gaps.append({"kind": "direct", "eg_ev": over["eg_ev"],
                             "eg_err_ev": over["eg_err_ev"], "window_ev": over["window_ev"],
                             "method": "Tauc (αhν)² of α minus the fitted indirect edge, "
                                       "automatic tangent", "transition": "direct-allowed",
                             "uncertainty": over["uncertainty"]})
            continue
        gap = _gap(res, kind, e, a_tauc, sd_tauc, fits, candidate=transition == "ambiguous")
        if gap is not None:
            res.gaps.append(gap)
    quality.quality_flags(res, ab, e, a, ln_sd, region)


def _two_onsets(res, e, a, ln_sd, region, fits, opts):
    """A weak indirect onset followed by a strong direct edge (Ge-like): a second major rise of
    ln α 0.05–1 eV above the first, which the two-onset model (an indirect edge plus a direct
    one sharing Eu) fits better than the single indirect edge by ΔBIC ≥ 10 over the range of
    both. The direct gap is the tangent of (αhν)² of α minus the fitted indirect edge."""
    later = [r for r in region.rises if r[3] and r[0] > region.knee_ev
             and edge_verdict.MIN_GAP_STEP_EV <= r[0] - region.start_ev
             <= edge_verdict.MAX_GAP_STEP_EV]
    if not later:
        return None
    second = locate_edge(e[e >= later[0][0] - 0.1], a[e >= later[0][0] - 0.1],
                         ln_sd[e >= later[0][0] - 0.1])
    if second is None:
        return None
    lo = res.models.get("fit_range_ev", [region.lo_ev])[0]
    sel = (e >= lo) & (e <= second.knee_ev + 0.1)
    fe, fa = _thin(e[sel], a[sel])
    ind = res.tauc["indirect-allowed"]
    eg1 = ind["eg_ev"] if ind else region.steepest_ev
    eu0 = res.urbach["eu_mev"] / 1e3 if res.urbach else DEFAULT_EU_EV
    single = edge_models.fit_hypothesis("indirect", fe, fa, eg_guess=eg1, eu_guess=eu0)
    both = edge_models.fit_hypothesis("direct+indirect", fe, fa, eg_guess=eg1, eu_guess=eu0,
                                      eg2_guess=second.steepest_ev)
    if single is None or both is None:
        return None
    delta = single.bic - both.bic
    res.models["direct+indirect"] = {**both.to_dict(), "delta_bic_vs_indirect": delta,
                                     "fit_range_ev": [float(fe.min()), float(fe.max())]}
    if delta < edge_verdict.BIC_STEPS[2]:
        res.models["direct+indirect"]["rejected"] = (
            f"ΔBIC = {delta:.1f} against the single indirect edge over the same range")
        return None
    p = both.params
    under = edge_models.alpha_single(e, p["eg_ind_ev"], p["eu_ev"], p["ln_amp_ind"],
                                     p["background"], edge_models.R_INDIRECT)
    keep = (a - under > 0.5 * a) & (e >= second.lo_ev)
    if keep.sum() < MIN_POINTS:
        return None
    er, ar = e[keep], (a - under)[keep]
    sr = ln_sd[keep] * a[keep] / ar
    reg2 = locate_edge(er, ar, sr)
    if reg2 is None:
        return None
    y, factor = _ordinate(er, ar, "direct-allowed")
    ys, _ = _ordinate(er, np.exp(smooth_ln(np.log(ar), reg2.smoothing_points)),
                      "direct-allowed")
    tg = steepest_tangent(er, y, y * factor * sr, ys, reg2)
    if tg is None or not (edge_verdict.MIN_GAP_STEP_EV <= tg.fit.x_intercept - eg1
                          <= edge_verdict.MAX_GAP_STEP_EV):
        return None
    over = tangent_entry(er, y, y * factor * sr, tg, ORDINATE_LABEL["direct-allowed"],
                         n_boot=opts.bootstrap, seed=opts.seed)
    over["note"] = "α minus the fitted indirect edge and background"
    res.tauc_direct_over_indirect = over
    res.data["direct_over_indirect"] = {"energy_ev": er, "alpha": ar}
    res.data.setdefault("models", {})["direct+indirect"] = {"energy_ev": fe, "alpha": both.curve}
    return {"strength": "strong" if delta >= 2 * edge_verdict.BIC_STEPS[2] else "moderate",
            "reason": f"a second, direct edge rises {tg.fit.x_intercept - eg1:.2f} eV above "
                      f"the indirect onset and the two-onset model beats the single indirect "
                      f"edge by ΔBIC = {delta:.0f}"}


def _window_region(window_ev):
    """An edge region spanning a manual window (data in which no rise was found)."""
    from .locate import EdgeRegion
    lo, hi = window_ev
    return EdgeRegion(lo_ev=lo - 0.3, start_ev=lo, steepest_ev=lo, knee_ev=hi,
                      peak_log_slope=float("nan"), rise_ln=float("nan"), smoothing_points=1,
                      at_data_end=False, rises=[])
