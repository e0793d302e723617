"""Medians and percentiles of readings, with numpy's and scipy's results to the last bit.

Running median (``scipy.ndimage.median_filter(v, size=k, mode="nearest")``), compiled for the
finite readings that make up almost every spectrum.

The analysis smooths and estimates noise with running medians over 7 and 21 points several
times per spectrum; scipy's general n-dimensional filter spends more in its setup than in the
median. Here a sorted window slides along the readings (one removal and one insertion per
point). A median picks one of the readings, so the result is the same to the last bit;
readings that are not finite go to scipy (its order among NaNs is its own).
tests/test_analysis.py compares both.

:func:`median` and :func:`percentile` are ``np.median`` and ``np.percentile`` (linear) of one
array, by one ``np.partition`` and numpy's own formulas, without the general machinery (axes,
out arrays, dispatch) that costs most of their time on the few thousand values of a spectrum
(about ten calls per spectrum); tests/test_analysis.py compares them with numpy.
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


def median(values) -> float:
    """``float(np.median(values))`` (of all values, as numpy's axis=None): the middle value,
    or the mean of the two middle values ((a + b)/2, as numpy's mean of two); NaN when any
    value is NaN."""
    v = np.asarray(values, float).ravel()
    n = v.size
    if n == 0:
        return float(np.median(v))          # numpy's NaN and warning
    h = n // 2
    part = np.partition(v, [h - 1, h, n - 1] if n % 2 == 0 and n > 1 else [h, n - 1])
    if np.isnan(part[-1]):                  # NaNs sort last
        return float("nan")
    return float(part[h]) if n % 2 else float((part[h - 1] + part[h]) / 2)


def percentile(values, q: float) -> float:
    """``float(np.percentile(values, q))`` (linear interpolation, all values, 0 ≤ q ≤ 100) of
    finite values: s[k] and s[k + 1] of the sorted values by one partition, then numpy's
    _lerp."""
    v = np.asarray(values, float).ravel()
    n = v.size
    if n < 2:
        return float(np.percentile(v, q))
    pos = q / 100.0 * (n - 1)
    k = min(int(pos), n - 2)
    part = np.partition(v, [k, k + 1])
    t = pos - k
    a, b = part[k], part[k + 1]
    # numpy's _lerp: a + (b − a)·t, taken from b's side when t ≥ 1/2
    return float(b - (b - a) * (1 - t) if t >= 0.5 else a + (b - a) * t)
