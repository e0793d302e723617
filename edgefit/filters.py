"""Running median of readings (``scipy.ndimage.median_filter(v, size=k, mode="nearest")``),
compiled for the finite readings that make up almost every spectrum.

The analysis smooths and estimates noise with running medians over 7 and 21 points several
times per spectrum; scipy's general n-dimensional filter spends more in its setup than in the
median. Here a sorted window slides along the readings (one removal and one insertion per
point). A median picks one of the readings, so the result is the same to the last bit;
readings that are not finite go to scipy (its order among NaNs is its own).
tests/test_analysis.py compares both.
"""
from __future__ import annotations

import numpy as np
from scipy.ndimage import median_filter

from .jit import compiled


@compiled
def _sliding_median(v, k):
    n = v.size
    h = k // 2
    padded = np.empty(n + k - 1)
    for q in range(n + k - 1):
        padded[q] = v[min(max(q - h, 0), n - 1)]
    win = np.sort(padded[:k])
    out = np.empty(n)
    out[0] = win[h]
    for i in range(1, n):
        old, new = padded[i - 1], padded[i + k - 1]
        lo, hi = 0, k - 1                   # the place of the leaving reading (bisection)
        while lo < hi:
            mid = (lo + hi) // 2
            if win[mid] < old:
                lo = mid + 1
            else:
                hi = mid
        q = lo
        # the entering reading takes its place and moves to where it belongs
        if new > old:
            while q + 1 < k and win[q + 1] < new:
                win[q] = win[q + 1]
                q += 1
        else:
            while q > 0 and win[q - 1] > new:
                win[q] = win[q - 1]
                q -= 1
        win[q] = new
        out[i] = win[h]
    return out


def running_median(values, k: int) -> np.ndarray:
    """Median of each reading's window of ``k`` readings (the ends repeated beyond the data),
    as ``scipy.ndimage.median_filter(values, size=k, mode="nearest")``."""
    v = np.ascontiguousarray(values, float)
    if v.size == 0 or k < 1 or not np.isfinite(v).all():
        return median_filter(v, size=max(k, 1), mode="nearest")
    return _sliding_median(v, int(k))
