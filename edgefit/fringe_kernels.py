"""Compiled inner loops (numba) of the fringe detection in :mod:`edgefit.films`.

Every transmittance spectrum of a film is searched for interference fringes, most of them
with none: the search must cost little when it finds nothing. These loops do what
``scipy.signal.find_peaks`` (local maxima, minimum distance, prominence) and the per-extremum
least-squares fit of :func:`edgefit.films._refine_sinusoid` did with many small array
operations; tests/test_films.py checks them against scipy and numpy.linalg.
"""
from __future__ import annotations

import math

import numpy as np

from .jit import compiled


@compiled
def peaks_by_prominence(x, min_prominence, distance):
    """Indices and prominences of the peaks of ``x`` that ``scipy.signal.find_peaks(x,
    distance=distance, prominence=min_prominence)`` returns: local maxima (the middle of a
    flat top), thinned to ``distance`` samples by height (the highest first), then kept
    where the prominence (the peak's height above the higher of the lowest points on either
    side before a higher sample) is at least ``min_prominence``. Peaks of equal height
    compete in index order here (scipy's order for ties is its sort's)."""
    n = x.size
    mids = np.empty(max(n // 2, 1), np.int64)
    count = 0
    i = 1
    while i < n - 1:
        if x[i - 1] < x[i]:
            ahead = i + 1
            while ahead < n - 1 and x[ahead] == x[i]:
                ahead += 1
            if x[ahead] < x[i]:
                mids[count] = (i + ahead - 1) // 2
                count += 1
                i = ahead
        i += 1
    peaks = mids[:count]
    keep = np.ones(count, np.bool_)
    reach = math.ceil(distance)
    if reach > 1 and count > 1:
        order = np.argsort(x[peaks], kind="mergesort")
        for q in range(count - 1, -1, -1):
            j = order[q]
            if not keep[j]:
                continue
            k = j - 1
            while k >= 0 and peaks[j] - peaks[k] < reach:
                keep[k] = False
                k -= 1
            k = j + 1
            while k < count and peaks[k] - peaks[j] < reach:
                keep[k] = False
                k += 1
    # lowest point on each side before a higher sample, for every index at once: a stack of
    # the samples not yet exceeded, each with the lowest point since the one before it
    # (O(n), where walking out from each peak as scipy does is O(n) per peak)
    left = _lowest_before_higher(x)
    right = _lowest_before_higher(x[::-1])[::-1]
    out_i = np.empty(count, np.int64)
    out_p = np.empty(count)
    m = 0
    for q in range(count):
        if not keep[q]:
            continue
        p = peaks[q]
        prom = x[p] - max(left[p], right[p])
        if prom >= min_prominence:
            out_i[m] = p
            out_p[m] = prom
            m += 1
    return out_i[:m], out_p[:m]


@compiled
def alternating_extrema(y, min_prominence, distance):
    """The maxima (+1) and minima (−1) of ``y`` by :func:`peaks_by_prominence` (of y and of
    −y), in index order, made to alternate: of two neighbours of one kind the more extreme
    stays (the first of two equal ones). Returns indices, kinds and prominences."""
    imax, pmax = peaks_by_prominence(y, min_prominence, distance)
    imin, pmin = peaks_by_prominence(-y, min_prominence, distance)
    total = imax.size + imin.size
    idx = np.empty(total, np.int64)
    kind = np.empty(total, np.int64)
    prom = np.empty(total)
    a = b = m = 0
    while a < imax.size or b < imin.size:
        if b >= imin.size or (a < imax.size and imax[a] < imin[b]):
            i, k, p = imax[a], 1, pmax[a]
            a += 1
        else:
            i, k, p = imin[b], -1, pmin[b]
            b += 1
        if m > 0 and kind[m - 1] == k:
            if k * y[i] > k * y[idx[m - 1]]:
                idx[m - 1], prom[m - 1] = i, p
            continue
        idx[m], kind[m], prom[m] = i, k, p
        m += 1
    return idx[:m], kind[:m], prom[:m]


@compiled
def _lowest_before_higher(x):
    """For each k, the lowest of x[j..k], j the first index after the last sample above x[k]
    (after 0 when there is none): the left half of a prominence."""
    n = x.size
    low = np.empty(n)
    stack = np.empty(n, np.int64)
    depth = 0
    for k in range(n):
        v = lowest = x[k]
        while depth > 0 and x[stack[depth - 1]] <= v:
            depth -= 1
            lowest = min(lowest, low[stack[depth]])
        low[k] = lowest
        stack[depth] = k
        depth += 1
    return low


@compiled
def sinusoid_fit(nu, t, lo, hi, centre, period):
    """Least-squares fit of 1/T = c0 + c1·u + a·cos u + b·sin u, u = 2π(ν − centre)/period,
    to the points lo..hi−1 with T > 0 (the fit of :func:`edgefit.films._refine_sinusoid`).

    Returns (points used, c0, c1, a, b, residual variance s² over n − 4 degrees of freedom,
    the (a, a) and (b, b) elements of the inverse normal matrix, first and last ν used, mean
    T used, whether the normal matrix could be inverted). With fewer than 8 points only the
    count is meaningful.
    """
    g = np.zeros((4, 4))
    rhs = np.zeros(4)
    row = np.empty(4)
    used = 0
    first = last = mean_t = 0.0
    for k in range(lo, hi):
        if not t[k] > 0.0:
            continue
        u = 2.0 * math.pi * (nu[k] - centre) / period
        row[0], row[1], row[2], row[3] = 1.0, u, math.cos(u), math.sin(u)
        y = 1.0 / t[k]
        for p in range(4):
            rhs[p] += row[p] * y
            for q in range(4):
                g[p, q] += row[p] * row[q]
        if used == 0:
            first = nu[k]
        last = nu[k]
        mean_t += t[k]
        used += 1
    if used < 8:
        return used, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, first, last, 0.0, False
    mean_t /= used
    # Gauss-Jordan inverse with partial pivoting
    inv = np.eye(4)
    for col in range(4):
        piv = col
        for r in range(col + 1, 4):
            if abs(g[r, col]) > abs(g[piv, col]):
                piv = r
        if g[piv, col] == 0.0:
            return used, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, first, last, mean_t, False
        for q in range(4):
            g[col, q], g[piv, q] = g[piv, q], g[col, q]
            inv[col, q], inv[piv, q] = inv[piv, q], inv[col, q]
        d = g[col, col]
        for q in range(4):
            g[col, q] /= d
            inv[col, q] /= d
        for r in range(4):
            if r != col:
                f = g[r, col]
                for q in range(4):
                    g[r, q] -= f * g[col, q]
                    inv[r, q] -= f * inv[col, q]
    coef = inv @ rhs
    ss = 0.0
    for k in range(lo, hi):
        if not t[k] > 0.0:
            continue
        u = 2.0 * math.pi * (nu[k] - centre) / period
        r = 1.0 / t[k] - (coef[0] + coef[1] * u + coef[2] * math.cos(u) + coef[3] * math.sin(u))
        ss += r * r
    s2 = ss / max(used - 4, 1)
    return (used, coef[0], coef[1], coef[2], coef[3], s2, inv[2, 2], inv[3, 3], first, last,
            mean_t, True)
