"""Stage 6 of the edge analysis: quality flags a reader of the numbers must see."""
from __future__ import annotations

import numpy as np
from scipy.signal import find_peaks

#: a window with fewer points than this is flagged
FEW_POINTS = 5


def exciton_suspected(e, a, ln_sd, eg):
    """A peak of (smoothed) ln α within 0.3 eV above the gap, standing out by at least 5 % and
    by five times the noise of the smoothed curve: an excitonic line (Elliott, Phys. Rev. 108,
    1384, 1957)."""
    sel = (e >= eg - 0.05) & (e <= eg + 0.3)
    if sel.sum() < 7:
        return False
    la = np.log(a[sel])
    k = max(3, (int(sel.sum()) // 10) | 1)
    if k < la.size:
        la = np.convolve(la, np.ones(k) / k, mode="same")[k // 2: -(k // 2) or None]
    noise = float(np.median(ln_sd[sel])) / np.sqrt(k)
    peaks, _ = find_peaks(la, prominence=max(0.05, 5 * noise))
    return peaks.size > 0


def quality_flags(res, ab, e, a, ln_sd, region):
    for g in res.gaps:
        lo, hi = g["window_ev"] if g.get("window_ev") else (g["eg_ev"], g["eg_ev"])
        n = int(((e >= lo) & (e <= hi)).sum())
        if n < FEW_POINTS:
            res.flag("few-points-in-window", f"the {g['kind']} window {lo:.3f}–{hi:.3f} eV holds "
                     f"only {n} points")
        if g["eg_ev"] - e.min() < 0.05 or (e.max() - hi < 1e-9 and e.max() - g["eg_ev"] < 0.1):
            res.flag("edge-near-data-end", f"the {g['kind']} edge at {g['eg_ev']:.3f} eV is close "
                     f"to the end of the trusted data ({e.min():.3f}–{e.max():.3f} eV)")
        if exciton_suspected(e, a, ln_sd, g["eg_ev"]):
            res.flag("exciton-suspected", f"α has a peak just above the {g['kind']} gap: an "
                     "excitonic edge biases Tauc extrapolation (Elliott 1957)")
    iso_absorption_gap(res, ab)


def iso_absorption_gap(res, ab):
    """E04, where α first reaches 10⁴ cm⁻¹ (interpolated in ln α), when α is absolute."""
    if ab.alpha_kind == "absolute":
        full_e, full_a = ab.energy_ev, ab.alpha
        ok = ab.trusted & (full_a > 0)
        above = np.flatnonzero(ok & (full_a >= 1e4))
        if above.size and above[0] > 0 and ok[above[0] - 1]:
            k = above[0]
            la0, la1 = np.log(full_a[k - 1]), np.log(full_a[k])
            res.e04_ev = float(full_e[k - 1] + (np.log(1e4) - la0) / (la1 - la0)
                               * (full_e[k] - full_e[k - 1]))
