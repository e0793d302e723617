"""Stage 1 of the edge analysis: where the fundamental absorption edge is.

The fundamental edge is the *first major rise* of α from its floor, not the steepest Tauc
ordinate anywhere: above the gap, (αhν)² keeps growing towards the higher interband
transitions, while ln α rises fastest at the onset itself. A power law α ∝ (E − Eg)^r/E has
d ln α/dE = r/(E − Eg) − 1/E, which is largest just above Eg, where the Urbach tail caps it at
about 1/Eu; higher transitions start from absorption that is already strong, so ln α rises
there far more slowly. An excitonic step (Elliott, Phys. Rev. 108, 1384, 1957) rises within
tens of meV and then flattens or falls; a broadened edge rises over a few tenths of an eV.
In every case the edge is where the slope of ln α stands out, and it ends where that slope
has fallen back.

The rule, in full (the numbers are this module's constants):

1. ln α is smoothed by a Savitzky–Golay filter only as much as its noise needs (tables and
   clean spectra are not smoothed at all), and its logarithmic slope s = d ln α/d ln E
   is taken as the chord over ``CHORD_EV`` (or one grid step, if coarser) on a uniform
   energy grid. On that scale an edge stands out (α ∝ (E − Eg)^r gives r·E/(E − Eg), capped
   by the tail at E/Eu, tens to hundreds), while the wing of a free-carrier or lattice band
   rising towards the edge grows as a power of E (a slope of a few).
2. The *rises* are the runs where s ≥ ``RISE_FRACTION`` of the steepest slope; each has its
   rise Δln α. An edge is a step up, not a band: a rise *persists* when α at its end stands
   1/``MAX_DIP`` times above any α below the rise, and α never falls below ``MAX_DIP`` of
   the top it leads to (the largest α within ``TOP_EV`` above it), nor below the middle of the
   rise in ln α, anywhere above it (an absorber does not turn transparent above its edge; an
   excitonic peak dips by tens of per cent; a lattice or defect band falls back towards the
   floor; the flank of an interference fringe rises only to the fringe maxima below it). A
   persisting rise is *major* when Δln α ≥ ``MAJOR_RISE`` (a factor 2), at least
   ``MAJOR_SHARE`` of the largest persisting rise, and when it rises at least
   ``STEEP_SHARE`` as steeply as the steepest. The edge is the lowest-lying major rise.
3. The edge region runs from ``TAIL_EV`` below the start of that rise (the tail and the floor,
   which the Urbach fit and the edge models need) to the *knee*: the first energy above the
   steepest point where s falls below ``KNEE_FRACTION`` of that rise's own steepest slope,
   or the end of the data.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.signal import savgol_filter

#: chord of the ln α slope [eV]: long enough to average a few points of a fine grid, short
#: against an edge (common practice, no source)
CHORD_EV = 0.02
#: above an edge α never falls below this fraction of its value at the top of the rise (an
#: excitonic peak dips by tens of per cent; a band falls back further)
MAX_DIP = 0.5
#: a rise is where the slope of ln α is at least this fraction of its steepest value
RISE_FRACTION = 0.2
#: a major rise lifts ln α by at least this (α twofold: the step of an excitonic edge on a
#: model table's strong sub-gap absorption) ...
MAJOR_RISE = 0.7
#: ... and by at least this share of the largest rise in the data, rising at its steepest at
#: least STEEP_SHARE as fast as the steepest rise (a fringe's flank or a slow sub-gap ramp
#: is no edge; a weak indirect onset below a direct edge rises as steeply, at about E/Eu)
MAJOR_SHARE = 0.3
STEEP_SHARE = 0.5
#: the top a rise leads to is sought this far above it [eV]
TOP_EV = 0.3
#: the first rise ends where the slope of ln α has fallen below this fraction of its peak
KNEE_FRACTION = 0.25
#: the region reaches this far below the start of the rise (tail and floor) [eV]
TAIL_EV = 0.4
#: the smoothing aims at this noise of smoothed ln α (1 %) ...
TARGET_LN_NOISE = 0.01
#: ... over at most this width [eV]
MAX_SMOOTHING_EV = 0.05


@dataclass
class EdgeRegion:
    """The first absorption edge found in the trusted data (energies in eV)."""

    lo_ev: float            # lower end of the region (tail and floor below the rise)
    start_ev: float         # where the first major rise begins
    steepest_ev: float      # where ln α rises fastest
    knee_ev: float          # where the rise levels off (or the end of the data)
    peak_log_slope: float   # d ln α/d ln E at the steepest point
    rise_ln: float          # Δ ln α across the rise
    smoothing_points: int
    at_data_end: bool       # the rise runs into the end of the data
    rises: list             # every rise: (start, end, Δ ln α, persists), lowest first

    def to_dict(self) -> dict:
        return {"lo_ev": self.lo_ev, "start_ev": self.start_ev, "steepest_ev": self.steepest_ev,
                "knee_ev": self.knee_ev, "peak_log_slope": self.peak_log_slope,
                "rise_decades": self.rise_ln / np.log(10.0),
                "smoothing_points": self.smoothing_points, "at_data_end": self.at_data_end,
                "rises": [{"from_ev": a, "to_ev": b, "decades": d / np.log(10.0), "persists": p}
                          for a, b, d, p in self.rises],
                "rule": "the lowest-lying major rise of ln α (edgefit.edge.locate)"}


def smoothing_points(ln_sd, e) -> int:
    """Odd Savitzky–Golay length that brings the typical noise of ln α near
    :data:`TARGET_LN_NOISE` (1 for noise-free data), spanning at most ``MAX_SMOOTHING_EV``
    (a filter wider than an edge would smear it) and a fifteenth of the points."""
    finite = ln_sd[np.isfinite(ln_sd)]
    if finite.size == 0 or e.size < 2:
        return 1
    noise = float(np.median(finite))
    k = int(np.ceil((noise / TARGET_LN_NOISE) ** 2))
    step = float(np.median(np.diff(e)))
    k = min(k, max(1, e.size // 15), int(MAX_SMOOTHING_EV / step) if step > 0 else 1)
    if k < 5:
        return 1
    return k | 1


def smooth_ln(ln_a, k):
    """ln α smoothed by a quadratic Savitzky–Golay filter of ``k`` points (none for k = 1)."""
    if k <= 1:
        return ln_a
    return savgol_filter(ln_a, k, 2, mode="interp")


def ln_slope(e, la_s):
    """(grid, d ln α/d ln E) as chords over :data:`CHORD_EV` on a uniform energy grid."""
    steps = np.diff(e)
    step = float(np.median(steps)) if steps.size else CHORD_EV
    chord = max(CHORD_EV, step)
    h = max(step, 0.25 * chord, (e[-1] - e[0]) / 4000.0)
    grid = np.arange(e[0] + chord / 2, e[-1] - chord / 2 + 1e-12, h)
    if grid.size < 2:
        grid = np.array([0.5 * (e[0] + e[-1])])
        chord = e[-1] - e[0]
    s = (np.interp(grid + chord / 2, e, la_s) - np.interp(grid - chord / 2, e, la_s)) / chord
    return grid, s * grid


def _runs(mask):
    """(start, stop) index pairs of the True runs of a boolean array (stop exclusive)."""
    edges = np.flatnonzero(np.diff(np.concatenate(([0], mask.astype(np.int8), [0]))))
    return list(zip(edges[::2].tolist(), edges[1::2].tolist()))


def locate_edge(e, alpha, ln_sd) -> EdgeRegion | None:
    """The first major rise of ln α (see the module docstring); None when there is none.

    Parameters
    ----------
    e : ndarray
        Photon energy of the trusted points [eV], ascending.
    alpha : ndarray
        α (or α·d, or F(R∞)) at those points, positive.
    ln_sd : ndarray
        Noise (1σ) of ln α at those points.
    """
    if e.size < 4:
        return None
    k = smoothing_points(ln_sd, e)
    la_s = smooth_ln(np.log(alpha), k)
    grid, s = ln_slope(e, la_s)
    # the lowest ln α at and above each point: whether a rise falls back later
    floor_above = np.minimum.accumulate(la_s[::-1])[::-1]
    s_left = s.copy()
    rises = []
    for _ in range(8):              # set bands aside until a rise that persists is found
        smax = float(s_left.max())
        if not smax > 0:
            break
        found = []
        for a, b in _runs(s_left >= RISE_FRACTION * smax):
            lo, hi = grid[a], grid[b - 1]
            l0 = float(np.interp(lo - CHORD_EV / 2, e, la_s))
            l1 = float(np.interp(hi + CHORD_EV / 2, e, la_s))
            d = l1 - l0
            # the top the rise leads to (within TOP_EV above it) and the least α above that
            near = np.flatnonzero((e > hi) & (e <= hi + TOP_EV))
            top = int(near[np.argmax(la_s[near])]) if near.size else e.size - 1
            l_top = max(l1, float(la_s[top]))
            below = la_s[e < lo - CHORD_EV / 2]
            persists = bool(floor_above[top] >= max(l_top + np.log(MAX_DIP), l0 + 0.5 * d)
                            and (below.size == 0 or l1 >= below.max() - np.log(MAX_DIP)))
            found.append((float(lo), float(hi), d, a, b, persists, float(s_left[a:b].max())))
        rises += [r for r in found if not r[5]]
        if any(r[5] for r in found):
            rises += [r for r in found if r[5]]
            break
        for r in found:         # a band: leave it out, up to where ln α has fallen back
            back = np.flatnonzero((grid > r[1]) & (np.interp(grid, e, la_s)
                                                   < float(np.interp(r[0], e, la_s)) + 0.5 * r[2]))
            s_left[r[3]:(back[0] if back.size else s.size)] = 0.0
    if not rises:
        return None
    rises.sort()
    steps = [r for r in rises if r[5]] or rises
    biggest = max(r[2] for r in steps)
    steepest = max(r[6] for r in steps)
    major = [r for r in steps if r[2] >= max(MAJOR_RISE, MAJOR_SHARE * biggest)
             and r[6] >= STEEP_SHARE * steepest]
    if not major:
        major = [max(steps, key=lambda r: r[2])]
    lo, hi, d, a, b = major[0][:5]
    peak = a + int(np.argmax(s_left[a:b]))
    speak = float(s[peak])
    after = np.flatnonzero(s[peak:] < KNEE_FRACTION * speak)
    knee = float(grid[peak + after[0]]) if after.size else float(e[-1])
    return EdgeRegion(lo_ev=float(max(e[0], lo - TAIL_EV)), start_ev=lo,
                      steepest_ev=float(grid[peak]), knee_ev=max(knee, hi),
                      peak_log_slope=speak, rise_ln=d, smoothing_points=k,
                      at_data_end=not after.size, rises=[r[:3] + r[5:6] for r in rises])
