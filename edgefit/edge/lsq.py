"""Bounded Levenberg–Marquardt least squares on plain arrays: the single-edge fits' solver.

lmfit wraps MINPACK's Levenberg–Marquardt (``scipy.optimize.leastsq``) with bounds by the
MINUIT transformation: each bounded parameter is fitted as an unbounded internal variable u,
with value = lo + (sin u + 1)(hi − lo)/2 for two bounds, lo − 1 + √(u² + 1) for a lower bound
only, hi + 1 − √(u² + 1) for an upper bound only. Its Parameters objects are copied and wrapped
on every fit and every evaluation, which for the quick, four-parameter edge fits costs more
than the fit's own arithmetic. :func:`fit_bounded` applies the same recipe on plain arrays: the
same transformation, the same MINPACK call and settings (ftol, xtol, gtol = 0, factor 100),
the covariance taken to the external parameters by the MINUIT gradient scaling and scaled by
the reduced χ². tests/test_edge.py checks that it gives lmfit's values and errors.
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
from scipy.optimize import leastsq


TINY = 1e-15      # an internal start this close to zero is taken as zero (as lmfit does)


@dataclass
class BoundedFit:
    values: np.ndarray          # best external values, in the order of ``lo``/``hi``
    stderr: np.ndarray | None   # 1σ, scaled by the reduced χ²; None without a covariance
    residual: np.ndarray        # the residual at ``values``
    success: bool               # MINPACK ended on a tolerance (ier 1–4)


class _Bounds:
    """The MINUIT transformation between external values and internal variables, as lmfit
    applies it: arcsin for two bounds, a square root for one."""

    def __init__(self, lo, hi):
        self.lo = np.array(lo, float)
        self.hi = np.array(hi, float)
        fl, fh = np.isfinite(self.lo), np.isfinite(self.hi)
        self.both, self.low, self.high = fl & fh, fl & ~fh, fh & ~fl

    def to_internal(self, value):
        v = np.array(value, float)
        u = v.copy()
        b, lo_, hi_ = self.both, self.low, self.high
        u[b] = np.arcsin(np.clip(2.0 * (v[b] - self.lo[b]) / (self.hi[b] - self.lo[b]) - 1.0,
                                 -1.0, 1.0))
        u[lo_] = np.sqrt(np.maximum(v[lo_] - self.lo[lo_] + 1.0, 1.0) ** 2 - 1.0)
        u[hi_] = np.sqrt(np.maximum(self.hi[hi_] - v[hi_] + 1.0, 1.0) ** 2 - 1.0)
        u[np.abs(u) < TINY] = 0.0
        return u

    def to_external(self, u):
        u = np.asarray(u, float)
        v = u.copy()
        b, lo_, hi_ = self.both, self.low, self.high
        v[b] = self.lo[b] + (np.sin(u[b]) + 1.0) * (self.hi[b] - self.lo[b]) / 2.0
        v[lo_] = self.lo[lo_] - 1.0 + np.sqrt(u[lo_] ** 2 + 1.0)
        v[hi_] = self.hi[hi_] + 1.0 - np.sqrt(u[hi_] ** 2 + 1.0)
        return v

    def gradient(self, u):
        """d(external)/d(internal) per parameter."""
        u = np.asarray(u, float)
        g = np.ones_like(u)
        b, lo_, hi_ = self.both, self.low, self.high
        g[b] = np.cos(u[b]) * (self.hi[b] - self.lo[b]) / 2.0
        g[lo_] = u[lo_] / np.sqrt(u[lo_] ** 2 + 1.0)
        g[hi_] = -u[hi_] / np.sqrt(u[hi_] ** 2 + 1.0)
        return g


def fit_bounded(residual, start, lo, hi, *, jacobian=None, ftol=1.5e-8, xtol=1.5e-8,
                max_nfev=2000, errors=True) -> BoundedFit:
    """Minimise Σ residual(θ)² over lo ≤ θ ≤ hi from ``start``, by lmfit's leastsq recipe.

    ``residual(θ)`` and ``jacobian(θ)`` (d residual/dθ, one row per point, one column per
    parameter; optional) take the external values as one array. ``errors=False`` skips the
    covariance (``stderr`` None). Values and errors match lmfit's ``minimize(method="leastsq")``
    to rounding (tests/test_edge.py); lmfit stops at ``max_nfev`` by raising inside MINPACK,
    this function by MINPACK's own limit, which only matters for a fit that does not converge.
    """
    bounds = _Bounds(lo, hi)

    def remembered(fn):
        """fn of the internal variables, remembering its last point: scipy's leastsq checks
        the residual and the Jacobian at the start, then MINPACK asks for both there again.
        Each call gets a copy: MINPACK may overwrite the array it is given."""
        last = [None, None]

        def call(u):
            key = u.tobytes()
            if key != last[0]:
                last[0], last[1] = key, fn(u)
            return last[1].copy()
        return call

    f = remembered(lambda u: residual(bounds.to_external(u)))
    dfun = None
    if jacobian is not None:
        dfun = remembered(lambda u: jacobian(bounds.to_external(u)) * bounds.gradient(u))

    u0 = bounds.to_internal(start)
    # trial steps may overflow (lmfit silences them too); without errors, no full output:
    # leastsq then skips the covariance, and warns where it would otherwise report (``success``
    # says it here)
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        out = leastsq(f, u0, Dfun=dfun, full_output=errors, col_deriv=False, ftol=ftol,
                      xtol=xtol, gtol=0.0, maxfev=max_nfev, epsfcn=1e-10, factor=100, diag=None)
        u, cov, ier = (out[0], out[1], out[4]) if errors else (out[0], None, out[1])
        values = bounds.to_external(u)
        res = f(u)
    return BoundedFit(values=values, stderr=_stderr(cov, bounds, u, res), residual=res,
                      success=ier in SUCCESS)


#: MINPACK's info values of a fit that ended on a tolerance
SUCCESS = (1, 2, 3, 4)


def _stderr(cov, bounds, u, res):
    """1σ of the external values from the covariance of the internal ones: the MINUIT
    gradient scaling, times the reduced χ² (lmfit's convention); None without a covariance."""
    if cov is None:
        return None
    g = bounds.gradient(u)
    redchi = float(np.sum(res ** 2)) / max(1, res.size - u.size)
    return np.sqrt(np.diag(cov) * g * g * redchi)
