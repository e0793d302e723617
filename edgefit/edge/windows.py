"""Fitting machinery: the automatic search for linear windows, line fits and the bootstrap.

The criterion (documented in README.md, "How the window is chosen"):

* Admissible windows run between two *nodes* of the trusted points. With at most
  ``max_nodes`` points every point is a node; with more, nodes are placed at equal steps of a
  measure that is half point count and half accumulated |Δ ln α|, so the steep edge gets as
  many nodes as the flat parts. A window needs ``min_points`` points and ``min_span_ev``.
* Each admissible window gets the ordinary least-squares line y = m·E + c (the same numbers as
  ``numpy.polyfit(E, y, 1)``), its x-intercept Eg_w = −c/m, the rms residual, and the noise
  level σ̂: the rms over the window of the measurement noise propagated to the ordinate.
* A window is *acceptable* when the line rises (m > 0), the residual is small against the rise
  (rms ≤ τ·m·span) or within the noise (rms ≤ κ·σ̂ and no quadratic term significant at 3σ:
  Δχ² < 9 when x² is added to the fit), the rise is well above noise
  (m·span ≥ SNR·σ̂), and, for Tauc ordinates, the line is anchored at the edge: it starts above
  its own intercept and covers at least half of the extrapolated distance
  (span/(E_hi − Eg_w) ≥ coverage).
* Acceptable windows are grouped into *stretches*: the longest acceptable window (ties: the
  smaller relative residual, then the lower start) takes every acceptable window overlapping it
  as its family; repeat on what is left. The family gives the spread of Eg over acceptable
  windows. Several stretches mean several linear parts (e.g. two onsets). For Tauc ordinates
  the stretch's window is the lowest-lying among family members at least half as long as the
  longest: the linear part just above the onset (far above it, band non-parabolicity and, for
  phonon-assisted indirect edges, the emission branch bend the line: Macfarlane & Roberts 1955);
  for ln α it is the longest.

Statistics of all windows come from prefix sums, O(1) per window, so every admissible window is
evaluated exactly (``benchmarks/bench_windows.py`` checks the choice against numpy.polyfit).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np


@dataclass(frozen=True)
class WindowCriteria:
    """Settings of the window search (all documented defaults; see module docstring)."""

    min_points: int = 5
    min_span_ev: float = 0.04
    linearity_tol: float = 0.005    # τ: rms residual / rise across the window
    noise_factor: float = 1.5       # κ: rms residual allowed against the noise estimate
    min_snr: float = 10.0           # rise across the window / noise estimate
    min_coverage: float = 0.5       # span / (E_hi − Eg_w), Tauc ordinates only
    curvature_chi2: float = 9.0     # a window passing by the noise clause must show no
                                    # quadratic term at 3σ (Δχ² < 9)
    max_nodes: int = 160


@dataclass
class WindowTable:
    """Statistics of admissible windows (arrays, one entry per window)."""

    i: np.ndarray            # first point index (inclusive)
    j: np.ndarray            # last point index (inclusive)
    lo_ev: np.ndarray
    hi_ev: np.ndarray
    n: np.ndarray
    slope: np.ndarray
    intercept: np.ndarray
    rms: np.ndarray
    sigma: np.ndarray
    x_intercept: np.ndarray
    accepted: np.ndarray

    @property
    def span(self):
        return self.hi_ev - self.lo_ev

    def take(self, mask) -> "WindowTable":
        return WindowTable(**{k: getattr(self, k)[mask] for k in self.__dataclass_fields__})


@dataclass
class LineFit:
    """A straight line fitted to one window, with its uncertainty."""

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
    r2: float
    bootstrap_sd: float = float("nan")

    def to_dict(self) -> dict:
        return {"window_ev": [self.lo_ev, self.hi_ev], "n_points": self.n_points,
                "slope": self.slope, "intercept": self.intercept,
                "slope_err": self.slope_err, "intercept_err": self.intercept_err,
                "rms_residual": self.rms, "r2": self.r2}


@dataclass
class Stretch:
    """One linear part: its best window and the family of acceptable windows overlapping it."""

    best: int                              # index into the accepted table
    family: np.ndarray = field(default_factory=lambda: np.zeros(0, int))


def window_nodes(energy_ev, alpha, max_nodes: int) -> np.ndarray:
    """Indices of the window nodes (see module docstring)."""
    n = len(energy_ev)
    if n <= max_nodes:
        return np.arange(n)
    la = np.log(np.clip(alpha, 1e-300, None))
    step = np.abs(np.diff(la))
    s = 0.5 * np.arange(n) / (n - 1)
    tot = step.sum()
    if tot > 0:
        s[1:] += 0.5 * np.cumsum(step) / tot
    s /= s[-1]
    nodes = np.searchsorted(s, np.linspace(0, 1, max_nodes))
    return np.unique(np.clip(nodes, 0, n - 1))


@lru_cache(maxsize=8)
def _pairs(m: int):
    return np.triu_indices(m, k=1)


def _prefix(v):
    out = np.zeros(len(v) + 1)
    np.cumsum(v, out=out[1:])
    return out


def window_table(x, y, y_sd, nodes, crit: WindowCriteria, *, tauc: bool) -> WindowTable:
    """Evaluate every admissible window between ``nodes`` (prefix sums, O(1) per window).

    ``y_sd`` is the measurement noise (one standard deviation) of each ordinate value; the
    window's noise level σ̂ is the rms of ``y_sd`` over its points.
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    a, b = _pairs(len(nodes))
    i, j = nodes[a], nodes[b]
    n = j - i + 1
    ok = (n >= max(crit.min_points, 3)) & (x[j] - x[i] >= crit.min_span_ev)
    i, j, n = i[ok], j[ok], n[ok].astype(float)
    x0 = x.mean()
    ys = np.max(np.abs(y)) or 1.0
    xc, yc = x - x0, y / ys
    px, py = _prefix(xc), _prefix(yc)
    pxx, pxy, pyy = _prefix(xc * xc), _prefix(xc * yc), _prefix(yc * yc)
    sx, sy = px[j + 1] - px[i], py[j + 1] - py[i]
    sxx = pxx[j + 1] - pxx[i] - sx * sx / n
    sxy = pxy[j + 1] - pxy[i] - sx * sy / n
    syy = pyy[j + 1] - pyy[i] - sy * sy / n
    with np.errstate(divide="ignore", invalid="ignore"):
        m = sxy / sxx
        c = sy / n - m * sx / n
        ssr = np.clip(syy - m * sxy, 0.0, None)
        rms = np.sqrt(ssr / (n - 2))
        pe = _prefix((np.asarray(y_sd, float) / ys) ** 2)
        sigma = np.sqrt((pe[j + 1] - pe[i]) / n)
        xint = -c / m
        slope, intercept = m * ys, (c - m * x0) * ys
        xint_abs = xint + x0
        lo, hi = x[i], x[j]
        rise = m * (hi - lo)
        # curvature test for windows that pass only through the noise clause: the drop of the
        # residual sum of squares when a quadratic term is added, in units of the noise
        curv = _curvature_chi2(xc, yc, i, j, n, sx, sxx, sxy, ssr, sigma)
        small = rms <= crit.linearity_tol * rise
        noisy_ok = (rms <= crit.noise_factor * sigma) & (curv < crit.curvature_chi2)
        acc = (m > 0) & (small | noisy_ok) & (rise >= crit.min_snr * sigma)
        if tauc:
            acc &= (xint_abs < lo) & ((hi - lo) >= crit.min_coverage * (hi - xint_abs))
    return WindowTable(i=i, j=j, lo_ev=lo, hi_ev=hi, n=n.astype(int), slope=slope,
                       intercept=intercept, rms=rms * ys, sigma=sigma * ys,
                       x_intercept=xint_abs, accepted=np.nan_to_num(acc, nan=0).astype(bool))


def _curvature_chi2(xc, yc, i, j, n, sx, sxx_c, sxy_c, ssr_lin, sigma):
    """Δχ² of adding a quadratic term to each window's line (prefix sums, vectorised)."""
    # orthogonalise x² against (1, x) within each window: q = x² − a − b·x
    p2, p3, p4 = _prefix(xc ** 2), _prefix(xc ** 3), _prefix(xc ** 4)
    px2y = _prefix(xc ** 2 * yc)
    py = _prefix(yc)
    s2 = p2[j + 1] - p2[i]
    s3 = p3[j + 1] - p3[i]
    s4 = p4[j + 1] - p4[i]
    sy = py[j + 1] - py[i]
    s2y = px2y[j + 1] - px2y[i]
    xm = sx / n
    # regression of x² on x within the window
    b = (s3 - xm * s2) / sxx_c
    a = s2 / n - b * xm
    sqq = s4 - a * s2 - b * s3                       # Σ q·x² = Σ q² (q ⟂ 1, x)
    sqy = s2y - a * sy - b * (sxy_c + xm * sy)       # Σ q·y
    with np.errstate(divide="ignore", invalid="ignore"):
        gain = np.where(sqq > 0, sqy * sqy / sqq, 0.0)
        return np.minimum(gain, ssr_lin) / np.maximum(sigma * sigma, 1e-300)


def stretches(table: WindowTable, *, nearest_onset: bool = False
              ) -> tuple[WindowTable, list[Stretch]]:
    """Group the acceptable windows into non-overlapping stretches (longest first).

    With ``nearest_onset`` the stretch's chosen window is, among the family members at least
    half as long as the longest, the one lowest in energy (lowest end, then lowest start): the
    linear part just above the absorption onset, as the Tauc construction asks. Otherwise it is
    the longest.
    """
    acc = table.take(table.accepted)
    if acc.i.size == 0:
        return acc, []
    span = acc.span
    rel = acc.rms / np.maximum(acc.slope * span, 1e-300)
    order = np.lexsort((acc.lo_ev, rel, -span))
    free = np.ones(acc.i.size, bool)
    out = []
    for k in order:
        if not free[k]:
            continue
        fam = free & (acc.lo_ev <= acc.hi_ev[k]) & (acc.hi_ev >= acc.lo_ev[k])
        members = np.flatnonzero(fam)
        best = int(k)
        if nearest_onset:
            long_ = members[span[members] >= 0.5 * span[k]]
            best = int(long_[np.lexsort((acc.lo_ev[long_], acc.hi_ev[long_]))[0]])
        out.append(Stretch(best=best, family=members))
        free &= ~fam
    return acc, out


def fit_line(x, y, i: int, j: int) -> LineFit:
    """Ordinary least-squares line through points i..j (inclusive) with standard errors."""
    xs, ys = np.asarray(x[i:j + 1], float), np.asarray(y[i:j + 1], float)
    n = xs.size
    xm, ym = xs.mean(), ys.mean()
    sxx = np.sum((xs - xm) ** 2)
    m = np.sum((xs - xm) * (ys - ym)) / sxx
    c = ym - m * xm
    res = ys - (m * xs + c)
    dof = max(n - 2, 1)
    s2 = np.sum(res ** 2) / dof
    var_m = s2 / sxx
    var_c = s2 * (1.0 / n + xm * xm / sxx)
    cov_mc = -xm * s2 / sxx
    x0 = -c / m
    # delta method for x0 = -c/m
    g = np.array([c / m ** 2, -1.0 / m])
    var_x0 = g @ np.array([[var_m, cov_mc], [cov_mc, var_c]]) @ g
    syy = np.sum((ys - ym) ** 2)
    r2 = 1.0 - np.sum(res ** 2) / syy if syy > 0 else float("nan")
    return LineFit(lo_ev=float(xs[0]), hi_ev=float(xs[-1]), i=int(i), j=int(j), n_points=n,
                   slope=float(m), intercept=float(c), slope_err=float(np.sqrt(var_m)),
                   intercept_err=float(np.sqrt(var_c)), x_intercept=float(x0),
                   x_intercept_err=float(np.sqrt(max(var_x0, 0.0))), rms=float(np.sqrt(s2)),
                   r2=float(r2))


def bootstrap_line(x, y, fit: LineFit, *, n_boot: int, seed: int):
    """Residual bootstrap of a line fit: resampled slopes and x-intercepts (vectorised).

    References
    ----------
    B. Efron and R. J. Tibshirani, An Introduction to the Bootstrap (1993), ch. 9.
    """
    xs, ys = np.asarray(x[fit.i:fit.j + 1], float), np.asarray(y[fit.i:fit.j + 1], float)
    if n_boot <= 0 or xs.size < 4:
        return np.zeros(0), np.zeros(0)
    yhat = fit.slope * xs + fit.intercept
    res = ys - yhat
    res = (res - res.mean()) * np.sqrt(xs.size / max(xs.size - 2, 1))
    rng = np.random.default_rng(seed)
    yb = yhat[None, :] + res[rng.integers(0, xs.size, size=(n_boot, xs.size))]
    xm = xs.mean()
    dx = xs - xm
    m = (yb - yb.mean(axis=1, keepdims=True)) @ dx / np.sum(dx * dx)
    c = yb.mean(axis=1) - m * xm
    with np.errstate(divide="ignore", invalid="ignore"):
        x0 = -c / m
    return m, x0[np.isfinite(x0)]
