"""lmfit models of the continuous absorption edge, one per hypothesis.

Each model is fitted to ln α over the edge range: the power law joined smoothly to an Urbach
tail (:func:`edgefit.edge.tauc.edge_model_alpha`) plus a constant sub-gap background. The
two-onset hypothesis adds a direct edge above an indirect one, both sharing the tail's Eu.
"""
from __future__ import annotations

import threading
from dataclasses import dataclass, field

import lmfit
import numpy as np

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
    curve: np.ndarray     # model α on the fit energies
    at_bound: list = field(default_factory=list)   # fitted parameters that ended on a bound

    def to_dict(self) -> dict:
        eg = {k: v for k, v in self.params.items() if k.startswith("eg")}
        return {"hypothesis": self.hypothesis, "bic": self.bic, "aic": self.aic,
                "rms_ln_alpha": self.rms_log, "n_points": self.n_points,
                "converged": self.success, **eg,
                "eu_mev": self.params["eu_ev"] * 1e3,
                "params": self.params, "errors": self.errors, "at_bound": self.at_bound}


_local = threading.local()       # per thread: the reused parameter set of a single-edge fit


def _single_edge_params(**start) -> lmfit.Parameters:
    """The parameters of a single-edge fit: ``start`` maps each name to (value, min, max).

    Building an lmfit Parameters costs more than a quick fit's own arithmetic, so each thread
    builds one set once and then only resets its values and bounds (``Parameter.set``);
    lmfit fits a copy of it, never the set itself.
    """
    p = getattr(_local, "single", None)
    if p is None:
        p = lmfit.Parameters()
        for name, (value, lo, hi) in start.items():
            p.add(name, value=value, min=lo, max=hi)
        _local.single = p
    else:
        for name, (value, lo, hi) in start.items():
            p[name].set(value=value, min=lo, max=hi)   # set() applies the bounds first
    return p


def _amp_guess(e, a, eg, r):
    top = np.argmax(e)
    return float(np.log(max(a[top], 1e-300) * e[top] / max(e[top] - eg, 1e-3) ** r))


def fit_hypothesis(hypothesis: str, energy_ev, alpha, *, eg_guess: float, eu_guess: float,
                   eg2_guess: float | None = None, tolerance: float = 1e-7,
                   errors: bool = True) -> ModelFit | None:
    """Fit one hypothesis to ln α with lmfit (Levenberg–Marquardt, bounded parameters).

    ``tolerance`` is the relative change in the sum of squares and in the parameters at which
    Levenberg–Marquardt stops. ``errors=False`` skips the covariance (a fit that only locates
    the edge; the values of its ``errors`` are then None). A gap's error is None, too, when the
    data leave the gap undetermined (see below). Returns None when the data cannot support the
    model (too few points).
    """
    e = np.asarray(energy_ev, float)
    a = np.asarray(alpha, float)
    if e.size < 8:
        return None
    la = np.log(a)
    amin, emin, emax = float(a.min()), float(e.min()), float(e.max())
    eg_min = max(emin - 0.5, 1e-3)     # a gap is a positive energy
    eu_guess = float(np.clip(eu_guess, 0.004, 0.3))
    background = (0.1 * amin, 0.0, max(2.0 * amin, 1e-9 * float(a.max())))
    eu = (eu_guess, 0.002, 0.5)
    if hypothesis == "direct+indirect":
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

        def model(pv):
            return alpha_two_onsets(e, pv["eg_ind_ev"], pv["eg_ind_ev"] + pv["gap_step_ev"],
                                    pv["eu_ev"], pv["ln_amp_ind"], pv["ln_amp_dir"],
                                    pv["background"])
        jacobian = None
    else:
        r = R_DIRECT if hypothesis == "direct" else R_INDIRECT
        p = _single_edge_params(
            background=background, eu_ev=eu,
            eg_ev=(float(np.clip(eg_guess, eg_min, emax)), eg_min, emax),
            ln_amplitude=(_amp_guess(e, a, eg_guess, r), -np.inf, np.inf))

        last = {}

        def edge_at(pv):
            """The edge without background; kept for the Jacobian, which Levenberg–Marquardt
            asks for at the point of the last accepted evaluation."""
            key = (pv["eg_ev"], pv["eu_ev"], pv["ln_amplitude"])
            if last.get("key") != key:
                last["key"] = key
                last["edge"] = edge_model_alpha(e, key[0], key[1], np.exp(key[2]), r)
            return last["edge"]

        def model(pv):
            return edge_at(pv) + pv["background"]

        def jacobian(params):
            """d(ln α_model)/dθ, analytic: above Et only eg and the amplitude act; below it the
            slope-matching condition makes d ln α/d eg = −r/(Et − Eg) (common calculus)."""
            pv = params.valuesdict()
            eg, eu = pv["eg_ev"], pv["eu_ev"]
            et = joining_energy_ev(eg, eu, r)
            edge = edge_at(pv)
            tot = edge + pv["background"]
            up = e >= et
            d_eg = np.where(up, -r * edge / np.where(up, e - eg, 1.0), -r * edge / (et - eg))
            d_eu = np.where(up, 0.0, (et - e) / eu ** 2 * edge)
            cols = {"background": np.ones_like(e), "eu_ev": d_eu, "eg_ev": d_eg,
                    "ln_amplitude": edge}
            jac = np.column_stack([cols[n] for n in params if params[n].vary]) / tot[:, None]
            return np.where(np.isfinite(jac), jac, 0.0)

    def residual(params):
        pv = params.valuesdict()
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            out = np.log(model(pv)) - la
        return np.where(np.isfinite(out), out, 50.0)

    # the residual and the Jacobian are finite by construction: no NaN check per evaluation
    res = lmfit.minimize(residual, p, method="leastsq", max_nfev=2000, ftol=tolerance,
                         xtol=tolerance, Dfun=jacobian, nan_policy="propagate",
                         calc_covar=errors)
    pv = res.params.valuesdict()
    params = {k: float(v) for k, v in pv.items()}
    errors = {k: (float(res.params[k].stderr) if res.params[k].stderr is not None else None)
              for k in res.params}
    at_bound = [k for k, q in res.params.items() if q.vary and _at_bound(q)]
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
    rss = float(np.sum(res.residual ** 2))
    n, k = e.size, res.nvarys
    bic = n * np.log(max(rss, 1e-300) / n) + k * np.log(n)
    aic = n * np.log(max(rss, 1e-300) / n) + 2 * k
    return ModelFit(hypothesis=hypothesis, params=params, errors=errors, bic=float(bic),
                    aic=float(aic), rms_log=float(np.sqrt(rss / n)), n_points=int(n),
                    success=bool(res.success), curve=model(pv), at_bound=at_bound)


def _at_bound(q, rel=1e-6) -> bool:
    """Whether a fitted lmfit Parameter ended on (within ``rel`` of its range from) a bound."""
    lo, hi = q.min, q.max
    if not (np.isfinite(lo) and np.isfinite(hi)):
        return bool((np.isfinite(lo) and q.value <= lo) or (np.isfinite(hi) and q.value >= hi))
    tol = rel * (hi - lo)
    return bool(q.value - lo <= tol or hi - q.value <= tol)
