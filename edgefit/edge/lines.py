"""Fitting machinery: weighted straight lines, their errors, and the residual bootstrap
(plain numpy). The Tauc tangent (:mod:`edgefit.edge.tangent`) fits its lines here."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass
class LineFit:
    """A straight line fitted to the points i..j (inclusive), with its uncertainty."""

    lo_ev: float
    hi_ev: float
    i: int
    j: int
    n_points: int
    slope: float
    intercept: float
    slope_err: float
    intercept_err: float
    x_intercept: float
    x_intercept_err: float
    rms: float
    chi2_red: float

    def to_dict(self) -> dict:
        return {"window_ev": [self.lo_ev, self.hi_ev], "n_points": self.n_points,
                "slope": self.slope, "intercept": self.intercept,
                "slope_err": self.slope_err, "intercept_err": self.intercept_err,
                "rms_residual": self.rms, "chi2_reduced": self.chi2_red}


def weights_from_sd(y_sd, y):
    """Weights 1/σ², with σ floored at 1e-9 of the largest |y| so that none is infinite."""
    y_sd, y = np.asarray(y_sd, float), np.asarray(y, float)
    top = float(np.nanmax(np.abs(y))) if np.isfinite(y).any() else 1.0
    floor = max(1e-9 * (top or 1.0), 1e-300)
    return 1.0 / np.maximum(np.where(np.isfinite(y_sd), y_sd, np.inf), floor) ** 2


def fit_line(x, y, y_sd, i: int, j: int) -> LineFit:
    """Weighted least-squares line through the points i..j (inclusive) with standard errors.

    Weights 1/σ² (``numpy.polyfit(x, y, 1, w=1/σ)`` gives the same line); the covariance is
    scaled by the reduced χ² when it exceeds 1 (the noise estimate is then too optimistic), as
    ``scipy.optimize.curve_fit(absolute_sigma=False)`` does; the x-intercept's error by the
    delta method.
    """
    i, j = int(i), int(j)
    xs = np.asarray(x[i:j + 1], float)
    ys = np.asarray(y[i:j + 1], float)
    w = weights_from_sd(np.asarray(y_sd, float)[i:j + 1], np.asarray(y, float))
    sw = w.sum()
    xm = (w * xs).sum() / sw
    ym = (w * ys).sum() / sw
    dx = xs - xm
    sxx = (w * dx * dx).sum()
    n = xs.size
    with np.errstate(divide="ignore", invalid="ignore"):
        m = (w * dx * (ys - ym)).sum() / sxx
        c = ym - m * xm
        res = ys - (m * xs + c)
        chi2_red = float((w * res * res).sum() / max(n - 2, 1))
        rms = float(np.sqrt((res * res).mean()))
        scale = max(chi2_red, 1.0)
        var_m = scale / sxx
        var_c = scale * (1.0 / sw + xm * xm / sxx)
        cov_mc = -xm * scale / sxx
        g_m, g_c = c / m ** 2, -1.0 / m
        var_x0 = g_m * g_m * var_m + 2.0 * g_m * g_c * cov_mc + g_c * g_c * var_c
        x0 = -c / m
    return LineFit(lo_ev=float(xs[0]), hi_ev=float(xs[-1]), i=i, j=j, n_points=int(n),
                   slope=float(m), intercept=float(c), slope_err=float(np.sqrt(var_m)),
                   intercept_err=float(np.sqrt(var_c)), x_intercept=float(x0),
                   x_intercept_err=float(np.sqrt(max(var_x0, 0.0))), rms=rms,
                   chi2_red=chi2_red)


def bootstrap_line(x, y, y_sd, fit: LineFit, *, n_boot: int, seed: int):
    """Residual bootstrap of a weighted line fit: (slopes, finite x-intercepts).

    Standardised residuals r/σ are resampled with replacement (numpy's PCG64 from ``seed``:
    the same seed, the same resamples) and put back with each point's own σ; every resample
    is refitted.

    References
    ----------
    B. Efron and R. J. Tibshirani, An Introduction to the Bootstrap (1993), ch. 9.
    """
    xs, ys = np.asarray(x[fit.i:fit.j + 1], float), np.asarray(y[fit.i:fit.j + 1], float)
    if n_boot <= 0 or xs.size < 4:
        return np.zeros(0), np.zeros(0)
    w = weights_from_sd(np.asarray(y_sd, float)[fit.i:fit.j + 1], np.asarray(y, float))
    if not (w > 0).all() or not np.isfinite(ys).all():
        return np.zeros(0), np.zeros(0)      # a point without a noise estimate
    sd = 1.0 / np.sqrt(w)
    yhat = fit.slope * xs + fit.intercept
    z = (ys - yhat) / sd
    z = (z - z.mean()) * np.sqrt(xs.size / max(xs.size - 2, 1))
    rng = np.random.default_rng(int(seed) % 2 ** 63)
    yb = yhat + sd * z[rng.integers(0, xs.size, size=(int(n_boot), xs.size))]
    sw = w.sum()
    xm = (w * xs).sum() / sw
    dx = xs - xm
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        m = (yb * (w * dx)).sum(axis=1) / (w * dx * dx).sum()
        c = (yb * w).sum(axis=1) / sw - m * xm
        x0 = -c / m
    return m, x0[np.isfinite(x0)]
