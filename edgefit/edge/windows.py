"""Fitting machinery: the automatic search for linear windows, line fits and the bootstrap.

The criterion (documented in README.md, "How the numbers are made"):

* Admissible windows run between two *nodes* of the trusted points. With at most
  ``max_nodes`` (100) points every point is a node; with more, ``max_nodes`` nodes are placed
  at equal steps of a measure that is half point count and half accumulated |Δ ln α|, so the
  steep edge gets as many nodes as the flat parts. A window needs ``min_points`` points and
  ``min_span_ev``.
* Each admissible window gets the weighted least-squares line y = m·E + c, weights 1/σ² from
  the measurement noise σ of each ordinate (the same numbers as
  ``numpy.polyfit(E, y, 1, w=1/σ)``), its x-intercept Eg_w = −c/m, the rms residual about
  that line and its χ².
* A window is *acceptable* when the line rises (m > 0); its residual is small against the rise
  (rms ≤ τ·m·span) or within the noise (χ²/(n−2) ≤ κ² and no quadratic term
  significant at 3σ: Δχ² < 9 when x² is added); the rise is at least ``min_snr`` times the
  window's noise level; and, for Tauc ordinates, the line is anchored at the edge: it starts
  above its intercept but less than twice as high (a line extrapolated over more than half the
  photon energy, or to a gap of zero or below, is no edge), covers at least half of the
  extrapolated distance (span/(E_hi − Eg_w) ≥ ``min_coverage``), and the measured ordinate at
  Eg_w is at most half of its value at the top of the window (``max_foot_fraction``).
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

import numpy as np

from . import kernels


@dataclass(frozen=True)
class WindowCriteria:
    """Settings of the window search (all documented defaults; see module docstring)."""

    min_points: int = 5
    min_span_ev: float = 0.04
    linearity_tol: float = 0.005    # τ: rms residual / rise across the window
    noise_factor: float = 1.5       # κ: χ²/(n−2) ≤ κ² for a window within the noise
    curvature_chi2: float = 9.0     # ... and Δχ² of a quadratic term below 9 (3σ)
    min_snr: float = 10.0           # rise across the window / noise level
    min_coverage: float = 0.5       # span / (E_hi − Eg_w), Tauc ordinates only
    max_foot_fraction: float = 0.5  # data at Eg_w / data at the window top, Tauc only
    max_nodes: int = 100


class WindowTable:
    """Statistics of admissible windows (arrays, one entry per window).

    Columns: ``i``, ``j`` (first and last point index, inclusive), ``n`` (points), ``lo_ev``,
    ``hi_ev``, ``slope``, ``intercept``, ``rms`` (unweighted residual about the weighted line),
    ``sigma`` (noise level of the window: √(n / Σw)), ``x_intercept`` and ``accepted``. They
    are rows of one block per type, so that :meth:`take` gathers three arrays, not eleven
    (the search takes sub-tables a dozen times per spectrum).
    """

    FLOATS = ("lo_ev", "hi_ev", "slope", "intercept", "rms", "sigma", "x_intercept")
    INTS = ("i", "j", "n")
    __slots__ = ("accepted", "floats", "ints")

    def __init__(self, *, i, j, lo_ev, hi_ev, n, slope, intercept, rms, sigma, x_intercept,
                 accepted):
        self.floats = np.array([lo_ev, hi_ev, slope, intercept, rms, sigma, x_intercept],
                               float).reshape(len(self.FLOATS), -1)
        self.ints = np.array([i, j, n], np.intp).reshape(len(self.INTS), -1)
        self.accepted = np.asarray(accepted, bool)

    @classmethod
    def _of_blocks(cls, floats, ints, accepted) -> WindowTable:
        table = cls.__new__(cls)
        table.floats, table.ints, table.accepted = floats, ints, accepted
        return table

    # the columns: rows of the blocks (views, no copies)
    lo_ev = property(lambda self: self.floats[0])
    hi_ev = property(lambda self: self.floats[1])
    slope = property(lambda self: self.floats[2])
    intercept = property(lambda self: self.floats[3])
    rms = property(lambda self: self.floats[4])
    sigma = property(lambda self: self.floats[5])
    x_intercept = property(lambda self: self.floats[6])
    i = property(lambda self: self.ints[0])
    j = property(lambda self: self.ints[1])
    n = property(lambda self: self.ints[2])

    @property
    def span(self):
        return self.hi_ev - self.lo_ev

    def take(self, which) -> WindowTable:
        """The windows selected by a boolean mask or by indices."""
        which = np.asarray(which)
        # one scan of a mask, not one per block
        which = np.flatnonzero(which) if which.dtype == bool else which.astype(np.intp)
        return self._of_blocks(self.floats.take(which, axis=1), self.ints.take(which, axis=1),
                               self.accepted.take(which))


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
    chi2_red: float

    def to_dict(self) -> dict:
        return {"window_ev": [self.lo_ev, self.hi_ev], "n_points": self.n_points,
                "slope": self.slope, "intercept": self.intercept,
                "slope_err": self.slope_err, "intercept_err": self.intercept_err,
                "rms_residual": self.rms, "chi2_reduced": self.chi2_red}


@dataclass
class Stretch:
    """One linear part: its chosen window and the family of acceptable windows overlapping it."""

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
    nodes = np.minimum(np.searchsorted(s, np.linspace(0, 1, max_nodes)), n - 1)
    # ascending already: np.unique(nodes) is dropping repeats, without its sort
    return nodes[np.concatenate(([True], nodes[1:] != nodes[:-1]))] if nodes.size else nodes


def weights_from_sd(y_sd, y):
    """Weights 1/σ², with σ floored at 1e-9 of the largest |y| so none is infinite."""
    y_sd, y = np.asarray(y_sd, float), np.asarray(y, float)
    if y_sd.ndim == 1 and y.ndim == 1 and y.size:   # compiled, the same numbers
        return kernels.inverse_variance(np.ascontiguousarray(y_sd), np.ascontiguousarray(y))
    floor = 1e-9 * (np.max(np.abs(y)) or 1.0)
    return 1.0 / np.maximum(y_sd, floor) ** 2


def window_table(x, y, y_sd, nodes, crit: WindowCriteria, *, tauc: bool) -> WindowTable:
    """Evaluate every admissible window between ``nodes`` (prefix sums, O(1) per window).

    ``y_sd`` is the measurement noise (one standard deviation) of each ordinate value. The
    line, its noise level and its intercept are computed for every admissible window; the
    residual statistics only for the windows that pass the tests needing no residual (rising,
    rise above the noise, and for Tauc ordinates anchored at the edge): ``rms`` is NaN for
    the others, which are not acceptable whatever their residual. The loop over windows is
    compiled (:func:`edgefit.edge.kernels.window_statistics`).
    """
    x = np.ascontiguousarray(x, float)
    y = np.ascontiguousarray(y, float)
    return WindowTable._of_blocks(*kernels.window_statistics(
        x, y, weights_from_sd(y_sd, y), np.ascontiguousarray(nodes, np.int64),
        crit.min_points, crit.min_span_ev, crit.linearity_tol, crit.noise_factor,
        crit.curvature_chi2, crit.min_snr, crit.min_coverage, crit.max_foot_fraction, tauc))


def stretches(table: WindowTable, *, nearest_onset: bool = False, where=None
              ) -> tuple[WindowTable, list[Stretch]]:
    """Group the acceptable windows into non-overlapping stretches (longest first).

    With ``nearest_onset`` the stretch's chosen window is, among the family members at least
    half as long as the longest, the one lowest in energy (lowest end, then lowest start): the
    linear part just above the absorption onset, as the Tauc construction asks. Otherwise it is
    the longest. ``where`` (a mask of the table's windows) limits the search to those windows.
    """
    acc = table.take(table.accepted if where is None
                     else table.accepted & np.asarray(where, bool))
    if acc.i.size == 0:
        return acc, []
    rel = acc.rms / np.maximum(acc.slope * acc.span, 1e-300)
    label, best = kernels.group_stretches(acc.lo_ev, acc.hi_ev, rel, nearest_onset)
    if best.size == 1:
        return acc, [Stretch(best=int(best[0]), family=np.arange(acc.i.size))]
    by_stretch = np.argsort(label, kind="stable")
    cuts = np.searchsorted(label[by_stretch], np.arange(1, best.size))
    return acc, [Stretch(best=int(b), family=fam)
                 for b, fam in zip(best.tolist(), np.split(by_stretch, cuts))]


def fit_line(x, y, y_sd, i: int, j: int) -> LineFit:
    """Weighted least-squares line through points i..j (inclusive) with standard errors.

    The covariance is scaled by the reduced χ² when it exceeds 1 (the noise estimate is then
    too optimistic), as ``scipy.optimize.curve_fit(absolute_sigma=False)`` does. The sums are
    compiled (:func:`edgefit.edge.kernels.weighted_line`).
    """
    x, i, j = np.ascontiguousarray(x, float), int(i), int(j)
    # numpy scalars: a flat or one-point window gives inf/NaN (with numpy's warning), as the
    # numpy form did, not a ZeroDivisionError
    m, c, sw, xm, sxx, chi2_red, rms = map(np.float64, kernels.weighted_line(
        x, np.ascontiguousarray(y, float), np.ascontiguousarray(y_sd, float), i, j))
    scale = max(chi2_red, 1.0)
    var_m = scale / sxx
    var_c = scale * (1.0 / sw + xm * xm / sxx)
    cov_mc = -xm * scale / sxx
    # delta method for x0 = −c/m: gradient g = (c/m², −1/m), var = g·Σ·g
    g_m, g_c = c / m ** 2, -1.0 / m
    var_x0 = g_m * g_m * var_m + 2.0 * g_m * g_c * cov_mc + g_c * g_c * var_c
    return LineFit(lo_ev=float(x[i]), hi_ev=float(x[j]), i=i, j=j, n_points=j - i + 1,
                   slope=float(m), intercept=float(c), slope_err=float(np.sqrt(var_m)),
                   intercept_err=float(np.sqrt(var_c)), x_intercept=float(-c / m),
                   x_intercept_err=float(np.sqrt(max(var_x0, 0.0))), rms=float(rms),
                   chi2_red=float(chi2_red))


def line_intercepts(x, y, y_sd, i, j) -> np.ndarray:
    """x-intercepts −c/m of the weighted lines through the windows i..j (arrays, inclusive):
    the numbers :func:`fit_line` gives, for many windows at once (compiled:
    :func:`edgefit.edge.kernels.window_intercepts`)."""
    i, j = np.asarray(i, np.int64), np.asarray(j, np.int64)
    if i.size == 0:
        return np.zeros(0)
    return kernels.window_intercepts(np.ascontiguousarray(x, float),
                                     np.ascontiguousarray(y, float),
                                     np.ascontiguousarray(y_sd, float),
                                     np.ascontiguousarray(i), np.ascontiguousarray(j))


def bootstrap_line(x, y, y_sd, fit: LineFit, *, n_boot: int, seed: int):
    """Residual bootstrap of a weighted line fit: resampled slopes and x-intercepts.

    Standardised residuals r/σ are resampled with replacement and put back with each point's
    own σ, then every resample is refitted. The resamples are drawn by
    :func:`edgefit.edge.kernels.resample_indices` from ``seed`` (the same seed, the same
    resamples) and summed as they are drawn (:func:`edgefit.edge.kernels.bootstrap_sums`).

    References
    ----------
    B. Efron and R. J. Tibshirani, An Introduction to the Bootstrap (1993), ch. 9.
    """
    xs, ys = np.asarray(x[fit.i:fit.j + 1], float), np.asarray(y[fit.i:fit.j + 1], float)
    if n_boot <= 0 or xs.size < 4:
        return np.zeros(0), np.zeros(0)
    w = weights_from_sd(np.asarray(y_sd, float)[fit.i:fit.j + 1], np.asarray(y, float))
    sd = 1.0 / np.sqrt(w)
    yhat = fit.slope * xs + fit.intercept
    z = (ys - yhat) / sd
    z = (z - z.sum() / z.size) * np.sqrt(xs.size / max(xs.size - 2, 1))   # z.mean(), bit for bit
    sw = w.sum()
    xm = (w * xs).sum() / sw
    dx = xs - xm
    # resample b is y_k = yhat_k + sd_k·z[pick[b, k]]; its weighted mean and slope are linear
    # in it: ȳ = y·w/Σw and m = y·(w dx)/Σw dx² (Σ w dx = 0), so only z[pick] is summed
    pa, pb = w / sw, w * dx / (w * dx * dx).sum()
    # the generator's state is 64 bits; any whole number is a seed (reduced to 63 bits)
    za, zb = kernels.bootstrap_sums(int(seed) % 2 ** 63, int(n_boot), z, sd * pa, sd * pb)
    ymb, m = yhat @ pa + za, yhat @ pb + zb
    c = ymb - m * xm
    with np.errstate(divide="ignore", invalid="ignore"):
        x0 = -c / m
    return m, x0[np.isfinite(x0)]
