"""Stage 2 of the edge analysis: the practitioner's Tauc tangent on the first rise.

For each Tauc form y = (αhν)^(1/r) the gap is where the tangent at the steepest straight part
of the first rise meets the energy axis (Tauc, Grigorovici & Vancu, Phys. Status Solidi 15,
627, 1966), or the sub-gap baseline when one lifts the ordinate (Makuła, Pacia & Macyk, J.
Phys. Chem. Lett. 9, 6814, 2018). The rule:

1. Seeds: the steepest point of the first rise (the lowest-lying local maximum of the
   ordinate's slope, taken over chords of ``CHORD_EV`` of the ordinate smoothed as ln α was
   for locating the edge, at least ``PEAK_HEIGHT`` of the steepest slope and standing out by
   ``PEAK_PROMINENCE``, searched over the rise of ln α from its start to its knee,
   :mod:`edgefit.edge.locate`: an excitonic step, or the knee itself where the ordinate
   still steepens there), the point where ln α rises fastest, and the knee.
2. From each seed's chord the window grows one point at a time, to the side that keeps the
   line straighter, while it stays straight: the rms residual about the unweighted line is
   at most ``TOLERANCE`` of the line's rise across the window, or, where the data are noisy,
   at most ``NOISE_FACTOR`` times the ordinate's noise with no quadratic term significant at
   3σ; and no point lies below the line's own axis intercept. Where the ordinate is not
   straight even over the chord (coarse tables: two points on the steep part) the chord
   itself is the tangent.
3. A tangent of the onset leaves the measured ordinate at its axis intercept below
   ``MAX_FOOT_FRACTION`` of the window top's (a line standing on absorption that is already
   strong belongs to a higher transition). Of the seeds' windows that pass, the steepest is
   the tangent (the practitioner's: at the steepest straight part of the rise); its line is refitted with weights 1/σ² and Eg is its axis
   intercept. For the wrong exponent the ordinate curves (a power law of another exponent),
   so its straight part is shorter: the spans of the two allowed forms are evidence for the
   verdict (:mod:`edgefit.edge.evidence`).

Uncertainty: the larger of the fit's standard error and the bootstrap, combined with the
spread of Eg when either end of the window moves by one point.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.signal import find_peaks

from .lines import LineFit, bootstrap_line, fit_line
from .locate import CHORD_EV

#: straight: rms residual ≤ TOLERANCE × the line's rise across the window (+ the noise term)
TOLERANCE = 0.01
#: ... or, within the noise: an rms residual of at most NOISE_FACTOR noise levels and no
#: quadratic term significant at 3σ (Δχ² < 9)
NOISE_FACTOR = 2.0
CURVATURE_CHI2 = 9.0
#: a tangent of the onset leaves the ordinate at its intercept below this fraction of the
#: window top's (a line standing on absorption already strong is a higher transition)
MAX_FOOT_FRACTION = 0.5
#: a local maximum of the ordinate's slope that falls back by this fraction of its height on
#: both sides is the steepest point of a rise
PEAK_PROMINENCE = 0.25
#: ... and whose height is at least this fraction of the steepest slope searched (a wiggle in
#: the tail, where the ordinate is still near zero, is no rise)
PEAK_HEIGHT = 0.2


@dataclass
class Tangent:
    """The straight part of one Tauc form at the first rise."""

    fit: LineFit
    steepest_ev: float
    relative_extent: float       # window span / width of the rise
    alternatives: list           # (lo, hi, Eg) of the windows with an end moved by one point
    chord_only: bool             # two points: the steepest chord, no residual to judge by


class _Sums:
    """Prefix sums for O(1) unweighted line (and quadratic) fits over any window i..j."""

    def __init__(self, x, y, y_sd):
        def cum(v):
            return np.concatenate(([0.0], np.cumsum(v)))
        self.x, self.y = x, y
        self.x0 = float(x.mean())              # centred powers keep the sums well scaled
        u = x - self.x0
        # plain lists: the window loop reads single elements, which lists serve fastest
        self.su = [cum(u ** p).tolist() for p in range(5)]
        self.suy = [cum(u ** p * y).tolist() for p in range(3)]
        self.syy = cum(y * y).tolist()
        self.svar = cum(np.where(np.isfinite(y_sd), y_sd, 0.0) ** 2).tolist()
        self.xl = x.tolist()

    def badness(self, i, j):
        """How far the window i..j is from straight, 1 being the limit (inf when the line does
        not rise, or when a point lies below its axis intercept): the rms residual about the
        unweighted line against ``TOLERANCE`` of its rise; or, where the noise is larger,
        the residual against ``NOISE_FACTOR`` noise levels together with the significance of
        a quadratic term (at 3σ: Δχ² = 9 against the noise)."""
        a, b = i, j + 1
        S = [self.su[p][b] - self.su[p][a] for p in range(5)]
        T = [self.suy[p][b] - self.suy[p][a] for p in range(3)]
        n = S[0]
        uu = S[2] - S[1] * S[1] / n
        if uu <= 0:
            return np.inf
        m = (T[1] - S[1] * T[0] / n) / uu
        if not m > 0:
            return np.inf
        c = T[0] / n - m * S[1] / n          # y = c + m·u
        if c + m * (self.xl[i] - self.x0) < 0:
            return np.inf                     # the window reaches below its own axis intercept
        rss1 = max(self.syy[b] - self.syy[a] - c * T[0] - m * T[1], 0.0)
        rms = math.sqrt(rss1 / n)
        straight = rms / (TOLERANCE * m * (self.xl[j] - self.xl[i]))
        var = (self.svar[b] - self.svar[a]) / n
        if straight <= 1.0 or var <= 0:
            return straight
        within = rms / (NOISE_FACTOR * math.sqrt(var))
        if n < 4 or within > 1.0:             # three points: no curvature to test
            return min(straight, within)
        # the quadratic fit's residual from its 3×3 normal equations (Cramer's rule)
        g00, g01, g02, g11, g12, g22 = S[0], S[1], S[2], S[2], S[3], S[4]
        det = (g00 * (g11 * g22 - g12 * g12) - g01 * (g01 * g22 - g12 * g02)
               + g02 * (g01 * g12 - g11 * g02))
        if not abs(det) > 0:
            return min(straight, within)
        t0, t1, t2 = T
        q0 = (t0 * (g11 * g22 - g12 * g12) - g01 * (t1 * g22 - g12 * t2)
              + g02 * (t1 * g12 - g11 * t2)) / det
        q1 = (g00 * (t1 * g22 - t2 * g12) - t0 * (g01 * g22 - g12 * g02)
              + g02 * (g01 * t2 - t1 * g02)) / det
        q2 = (g00 * (g11 * t2 - g12 * t1) - g01 * (g01 * t2 - t1 * g02)
              + t0 * (g01 * g12 - g11 * g02)) / det
        rss2 = max(self.syy[b] - self.syy[a] - (q0 * t0 + q1 * t1 + q2 * t2), 0.0)
        curved = (rss1 - rss2) / var / CURVATURE_CHI2
        return min(straight, max(within, curved))


def _grow(sums, i, j, last):
    """Grow the straight window i..j one point at a time, to the side that keeps the line
    straighter, while it stays straight."""
    while True:
        options = []
        if i > 0:
            options.append((sums.badness(i - 1, j), i - 1, j))
        if j < last:
            options.append((sums.badness(i, j + 1), i, j + 1))
        options = [o for o in options if o[0] <= 1.0]
        if not options:
            return i, j
        _, i, j = min(options)


def _first_steep_point(d, index):
    """Index (into ``index``) of the steepest point of the first rise: the lowest-lying local
    maximum of the slope ``d`` at least ``PEAK_HEIGHT`` of the steepest slope searched that
    stands out by ``PEAK_PROMINENCE`` of its height (the ends count, so that a slope still
    growing at the end of the search is its own maximum)."""
    padded = np.concatenate(([0.0], np.where(d > 0, d, 0.0), [0.0]))
    peaks, props = find_peaks(padded, prominence=0.0)
    peaks = peaks - 1
    height = d[peaks]
    major = peaks[(height >= PEAK_HEIGHT * d.max()) & (height > 0)
                  & (props["prominences"] >= PEAK_PROMINENCE * height)]
    return int(index[major[0]] if major.size else index[int(np.argmax(d))])


def _foot_fraction(xs, ys, x0, top):
    """The ordinate measured at the line's axis intercept, as a fraction of the window top's
    (0 where the intercept lies below the data)."""
    if x0 <= xs[0]:
        return 0.0
    return float(np.interp(x0, xs, ys)) / top if top > 0 else np.inf


def steepest_tangent(e, y, y_sd, y_smooth, region) -> Tangent | None:
    """The tangent at the steepest straight part of ``y`` on the first rise ``region``.

    Parameters
    ----------
    e : ndarray
        Photon energy [eV], ascending (trusted points).
    y, y_sd : ndarray
        Tauc ordinate and its noise (1σ).
    y_smooth : ndarray
        The ordinate smoothed as for locating the edge (only to find the steepest chords).
    region : edgefit.edge.locate.EdgeRegion
        The first rise: windows start from chords between its start and its knee, and may
        grow from its lower end to the end of the data.
    """
    ok = np.isfinite(y) & np.isfinite(y_smooth)
    i0 = int(np.searchsorted(e, region.lo_ev))
    good = np.flatnonzero(ok[i0:]) + i0
    if good.size < 2:
        return None
    # the run of finite ordinates that holds the steepest point
    seed_at = min(max(int(np.searchsorted(e, region.steepest_ev)), good[0]), good[-1])
    bad = np.flatnonzero(~ok[good[0]:good[-1] + 1]) + good[0]
    lo = int(bad[bad < seed_at][-1]) + 1 if (bad < seed_at).any() else int(good[0])
    hi = int(bad[bad > seed_at][0]) - 1 if (bad > seed_at).any() else int(good[-1])
    if hi - lo < 1:
        return None
    xs, ys = e[lo:hi + 1], y[lo:hi + 1]
    # the slope over chords of at least CHORD_EV (one grid step where coarser), at the
    # chord's first point: noise between neighbouring points of a fine grid averages out
    step = float(np.median(np.diff(xs)))
    span = max(1, int(round(CHORD_EV / step))) if step > 0 else 1
    span = min(span, max(1, xs.size - 1))
    with np.errstate(divide="ignore", invalid="ignore"):
        d = (y_smooth[lo + span:hi + 1] - y_smooth[lo:hi + 1 - span]) / (xs[span:] - xs[:-span])
    mid = 0.5 * (xs[span:] + xs[:-span])
    # the chords over the rise, at least one grid step beyond either end (a coarse table may
    # hold no chord midpoint inside a narrow rise)
    pad = max(step, 1e-9)
    inside = np.flatnonzero((mid >= region.start_ev - pad) & (mid <= region.knee_ev + pad)
                            & np.isfinite(d))
    if inside.size == 0 or not (d[inside] > 0).any():
        return None
    steepest = _first_steep_point(d[inside], inside)
    at_onset = int(np.argmin(np.abs(mid - region.steepest_ev)))
    at_knee = int(np.argmin(np.abs(mid - region.knee_ev)))
    sums = _Sums(xs, ys, y_sd[lo:hi + 1])
    last = xs.size - 1
    tried = {}
    for k in dict.fromkeys((steepest, at_onset, at_knee)):
        starts = [(a, a + 2) for a in (k - 1, k) if a >= 0 and a + 2 <= last]
        if span > 2:                         # a fine grid: start from the chord itself
            starts = [(k, min(k + span, last))]
        scored = sorted((sums.badness(a, b), a, b) for a, b in starts)
        if scored and scored[0][0] <= 1.0:
            i, j = _grow(sums, scored[0][1], scored[0][2], last)
            chord = False
        else:
            i, j, chord = k, min(k + span, last), True
        m = (ys[j] - ys[i]) / (xs[j] - xs[i])
        x0 = xs[i] - ys[i] / m if m > 0 else np.inf
        foot = _foot_fraction(xs, ys, x0, ys[j]) if np.isfinite(x0) and x0 > 0 else np.inf
        tried[(i, j)] = (foot > MAX_FOOT_FRACTION, -m, foot, chord, k)
    (i, j), (_, _, _, chord, k) = min(tried.items(), key=lambda t: t[1][:3])
    fit = fit_line(e, y, y_sd, lo + i, lo + j)
    if not (fit.slope > 0 and np.isfinite(fit.x_intercept) and fit.x_intercept > 0):
        return None
    alternatives = _ends_moved(e, y, y_sd, lo + i, lo + j, lo, lo + last, both=True)
    width = max(region.knee_ev - region.start_ev, 1e-9)
    return Tangent(fit=fit, steepest_ev=float(mid[k]),
                   relative_extent=float(min((fit.hi_ev - fit.lo_ev) / width, 1.0)),
                   alternatives=alternatives, chord_only=chord)


def _ends_moved(e, y, y_sd, i, j, first, last, *, both=False):
    """(lo, hi, Eg) of the rising lines over the window i..j with one end moved by one point
    (``both``: also both ends together), within first..last and over finite ordinates."""
    moves = [(i - 1, j), (i + 1, j), (i, j - 1), (i, j + 1)]
    if both:
        moves += [(i - 1, j - 1), (i + 1, j + 1)]
    out = []
    for a, b in moves:
        if first <= a and b <= last and b - a >= 2 and np.isfinite(y[a:b + 1]).all():
            f = fit_line(e, y, y_sd, a, b)
            if f.slope > 0 and np.isfinite(f.x_intercept):
                out.append((f.lo_ev, f.hi_ev, f.x_intercept))
    return out


def tangent_entry(e, y, y_sd, tangent: Tangent, label, *, n_boot, seed, manual=False) -> dict:
    """The Tauc entry of a result (``result.tauc[transition]``) for one tangent."""
    fit = tangent.fit
    _, x0 = bootstrap_line(e, y, y_sd, fit, n_boot=n_boot, seed=seed)
    boot = float(np.std(x0, ddof=1)) if x0.size > 2 else float("nan")
    ends = [a[2] for a in tangent.alternatives]
    spread = float(np.std(ends, ddof=1)) if len(ends) >= 2 else 0.0
    stat = max(fit.x_intercept_err if np.isfinite(fit.x_intercept_err) else 0.0,
               0.0 if np.isnan(boot) else boot)
    total = float(np.hypot(stat, spread))
    out = {"eg_ev": fit.x_intercept, "eg_err_ev": total if total > 0 else None,
           "window_ev": [fit.lo_ev, fit.hi_ev], "linear_span_ev": fit.hi_ev - fit.lo_ev,
           "relative_extent": tangent.relative_extent, "steepest_ev": tangent.steepest_ev,
           "chord_only": tangent.chord_only, "ordinate": label,
           "window_choice": "manual" if manual else "automatic",
           "uncertainty": {"fit_stderr_ev": fit.x_intercept_err, "bootstrap_sd_ev": boot,
                           "window_spread_ev": spread, "window_ends_spread_ev": spread,
                           "n_windows": len(ends), "n_bootstrap": int(x0.size),
                           "meaning": "eg_err_ev = √(max(fit stderr, bootstrap sd)² + "
                                      "spread²), spread = the sd of Eg when either end of the "
                                      "window moves by one point; one standard deviation, "
                                      "statistical only (the choice of exponent and model is "
                                      "not in it)"},
           "acceptable_windows": [list(a) for a in tangent.alternatives],
           "stretches": [{"window_ev": [fit.lo_ev, fit.hi_ev], "eg_ev": fit.x_intercept,
                          "linear_span_ev": fit.hi_ev - fit.lo_ev}]}
    out.update(fit.to_dict())
    return out


def manual_tangent(e, y, y_sd, window_ev) -> Tangent | None:
    """The line over a window the user chose (all trusted points inside it)."""
    sel = np.flatnonzero((e >= window_ev[0]) & (e <= window_ev[1]) & np.isfinite(y))
    if sel.size < 3:
        return None
    fit = fit_line(e, y, y_sd, sel[0], sel[-1])
    return Tangent(fit=fit, steepest_ev=float("nan"), relative_extent=float("nan"),
                   alternatives=_ends_moved(e, y, y_sd, sel[0], sel[-1], 0, e.size - 1),
                   chord_only=False)


def baseline_intersection(e, y, y_sd, entry, region_ev, min_points=5):
    """Makuła et al. (J. Phys. Chem. Lett. 9, 6814, 2018): intersect the edge line with a line
    fitted to the sloping baseline just below the edge (``region_ev``), when that baseline
    lifts the ordinate to at least 5 % of the edge's top."""
    lo, hi = entry["window_ev"]
    top = float(np.nanmax(y[(e >= lo) & (e <= hi)]))
    sel = np.flatnonzero((e >= region_ev[0]) & (e <= region_ev[1]) & np.isfinite(y))
    if sel.size < min_points:
        return None
    fit = fit_line(e, y, y_sd, sel[0], sel[-1])
    m1, c1 = entry["slope"], entry["intercept"]
    if not fit.slope < m1 / 3:
        return None
    ex = (fit.intercept - c1) / (m1 - fit.slope)
    level = fit.slope * ex + fit.intercept
    if not (level >= 0.05 * top and max(e[sel[0]], 0.0) < ex < lo):
        return None
    return {"eg_ev": float(ex), "baseline_window_ev": [fit.lo_ev, fit.hi_ev],
            "baseline_slope": fit.slope, "baseline_intercept": fit.intercept,
            "baseline_level_fraction": float(level / top),
            "method": "baseline intersection (Makuła, Pacia & Macyk 2018)"}


def apply_baseline(res, gap, base, transition, label):
    """Report ``gap`` at its intersection ``base`` with the sub-gap baseline, with the flag."""
    res.baseline = {**base, "transition": transition}
    gap["eg_axis_intercept_ev"] = gap["eg_ev"]
    gap["eg_ev"] = base["eg_ev"]
    gap["method"] = f"Tauc {label}, intersection with the sub-gap baseline"
    res.flag("subgap-absorption", f"sub-gap absorption raises the {label} baseline to "
             f"{100 * base['baseline_level_fraction']:.0f}% of the edge: the gap is the "
             "intersection with the baseline (Makuła et al. 2018), not the axis intercept")
