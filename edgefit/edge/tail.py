"""Stage 4 of the edge analysis: the Urbach tail on top of a sub-gap baseline.

Below the edge α = b + α0·exp[(E − E0)/Eu] (Urbach, Phys. Rev. 92, 1324, 1953), where the
baseline b is what lifts α without an edge: reflection losses counted as absorption in a
film's −ln T, scattering, a substrate. The tail and the baseline are fitted together to ln α
(bounded Levenberg–Marquardt, :func:`edgefit.edge.lsq.fit_bounded`) from the lower end of the edge region
up to the start of the Tauc window; the tail's window is where the exponential stands above
the baseline. It counts as a tail when it rises by at least a factor e above the baseline (or
across the window) over at least ``MIN_POINTS`` points, with 1 meV ≤ Eu ≤ 500 meV.
"""
from __future__ import annotations

import numpy as np

from .lsq import fit_bounded

MIN_POINTS = 4
MIN_RISE = 1.0
EU_BOUNDS_EV = (0.001, 0.5)


def _model(theta, e, e_ref):
    ln_b, c, inv_eu = theta
    return np.logaddexp(ln_b, c + (e - e_ref) * inv_eu)


def _fit(e, alpha, ln_sd, lo_ev, hi_ev, manual):
    """(x, ln α, weights, reference energy, scipy's result) of the joint tail and baseline
    fit over the trusted points in [lo_ev, hi_ev], or None."""
    sel = np.flatnonzero((e >= lo_ev) & (e <= hi_ev) & (alpha > 0))
    if sel.size < MIN_POINTS:
        return None
    x, la = e[sel], np.log(alpha[sel])
    w = 1.0 / np.maximum(np.where(np.isfinite(ln_sd[sel]), ln_sd[sel], 1.0), 1e-3)
    e_ref = float(x[-1])
    # start: the slope of ln(α − 0.9·min α) over the top third (the tail above a baseline)
    lifted = np.log(np.maximum(np.exp(la) - 0.9 * np.exp(la.min()), 1e-300))
    top3 = slice(2 * x.size // 3, None)
    slope0 = (lifted[top3][-1] - lifted[top3][0]) / max(x[top3][-1] - x[top3][0], 1e-9)
    inv_eu0 = float(np.clip(slope0, 1.0 / EU_BOUNDS_EV[1] * 1.01, 1.0 / EU_BOUNDS_EV[0] * 0.99))
    ln_b0 = float(min(la.min() - 0.1, la[-1] - 1.0))
    theta0 = [ln_b0, float(la[-1]), inv_eu0]
    lo = [la.min() - 30.0, -np.inf, 1.0 / EU_BOUNDS_EV[1]]
    hi = [la.max() + 1.0, np.inf, 1.0 / EU_BOUNDS_EV[0]]
    if manual:
        lo[0], hi[0], theta0[0] = -745.0, -740.0, -742.0      # no baseline in a manual window

    u = x - e_ref

    def residual(th):
        return (_model(th, x, e_ref) - la) * w

    def jacobian(th):
        f = _model(th, x, e_ref)
        base, tail = np.exp(th[0] - f), np.exp(th[1] + u * th[2] - f)
        return np.column_stack([base, tail, u * tail]) * w[:, None]

    theta0 = np.clip(theta0, np.array(lo) + 1e-9, np.array(hi) - 1e-9)
    fit = fit_bounded(residual, theta0, lo, hi, jacobian=jacobian, ftol=1e-8, xtol=1e-8)
    if not np.all(np.isfinite(fit.values)):
        return None
    return x, la, w, e_ref, fit


def subgap_baseline(e, alpha, ln_sd, lo_ev, hi_ev) -> float | None:
    """The constant baseline b of a tail-and-baseline fit over [lo_ev, hi_ev] when the
    exponential reaches at least a tenth of it at the top of the range (the edge begins there),
    with Eu inside its bounds; else None."""
    got = _fit(e, alpha, ln_sd, lo_ev, hi_ev, manual=False)
    if got is None:
        return None
    x, la, w, e_ref, fit = got
    ln_b, c, inv_eu = fit.values
    inside = EU_BOUNDS_EV[0] * 1.0001 < 1.0 / inv_eu < EU_BOUNDS_EV[1] * 0.9999
    return float(np.exp(ln_b)) if inside and c >= ln_b + np.log(0.1) else None


def urbach_tail(e, alpha, ln_sd, lo_ev, hi_ev, *, manual=False) -> dict | None:
    """Fit the Urbach tail and a constant baseline to the trusted points in [lo_ev, hi_ev].

    Returns the ``urbach`` entry of a result (``eu_mev``, ``eu_err_mev``, ``window_ev``,
    ``baseline`` ...) or None when no tail stands there. ``manual`` (a window the user chose)
    fits there without the tail tests.
    """
    got = _fit(e, alpha, ln_sd, lo_ev, hi_ev, manual)
    if got is None:
        return None
    x, la, w, e_ref, fit = got
    ln_b, c, inv_eu = fit.values
    eu = 1.0 / inv_eu
    res = fit.residual / w
    err = fit.stderr[2] if fit.stderr is not None else float("nan")
    eu_err = float(err) / inv_eu ** 2 if np.isfinite(err) else float("nan")
    # the tail's own window: where the exponential stands above the baseline
    tail = c + (x - e_ref) * inv_eu
    above = tail >= ln_b if not manual else np.ones(x.size, bool)
    if above.sum() < MIN_POINTS and not manual:
        return None
    xa = x[above]
    rise = float(tail[above][-1] - max(ln_b, tail[above][0]))
    if not manual and (rise < MIN_RISE or not (EU_BOUNDS_EV[0] * 1.0001 < eu
                                               < EU_BOUNDS_EV[1] * 0.9999)):
        return None
    top = float(np.exp(la[-1]))
    baseline = None if manual else float(np.exp(ln_b))
    return {"eu_mev": eu * 1e3, "eu_err_mev": eu_err * 1e3 if np.isfinite(eu_err) else None,
            "window_ev": [float(xa[0]), float(xa[-1])], "slope_per_ev": float(inv_eu),
            "ln_alpha_intercept": float(c - e_ref * inv_eu), "decades": rise / np.log(10.0),
            "window_choice": "manual" if manual else "automatic",
            "baseline": None if manual else {
                "alpha": baseline, "fraction_of_tail_top": baseline / top if top > 0 else None,
                "model": "constant, fitted with the tail"},
            "uncertainty": {"fit_stderr_mev": eu_err * 1e3 if np.isfinite(eu_err) else None,
                            "meaning": "standard error of the joint tail and baseline fit, "
                                       "scaled by the residual; statistical only"},
            "fit_range_ev": [float(x[0]), float(x[-1])], "n_points": int(above.sum()),
            "rms_residual": float(np.sqrt(np.mean(res ** 2))),
            "method": "ln α = ln[b + α0·exp((E − E0)/Eu)], least squares"}
