"""Compiled inner loops (numba) of the fitting machinery.

The window search evaluates every window between up to 100 nodes (about 5,000 windows, six
searches per spectrum), each edge-model fit evaluates its residual and Jacobian some thirty
times on up to 100 points, and each reported line gets a 200-resample bootstrap. Written
with numpy, all of them spend their time in the overhead of many small array operations
rather than in arithmetic; these loops do the same arithmetic once per point, window or
resample. The formulas are those of :mod:`edgefit.edge.windows` (the module docstring states
the criterion) and :func:`edgefit.edge.tauc.edge_model_alpha`; tests/test_windows.py and
tests/test_edge.py check them against numpy.polyfit, scipy's curve_fit, the numpy formula and
lmfit. Results agree with the numpy forms to rounding (last digits), not bit for bit.

Compiled by :func:`edgefit.jit.compiled` (cached on disk after the first run).
"""
from __future__ import annotations

import math

import numpy as np

from ..jit import compiled as _compiled


# ----------------------------------------------------------------------- continuous edge model

@_compiled
def _joining(eg, eu, r):
    b = eg + (r - 1.0) * eu
    return 0.5 * (b + math.sqrt(b * b + 4.0 * eu * eg))


@_compiled
def _power(v, r):
    """v**r, by sqrt and a product for the allowed transitions' r = 1/2 and 2 (libm's pow is
    several times slower and agrees with them to the last bit or so)."""
    if r == 0.5:
        return math.sqrt(v)
    if r == 2.0:
        return v * v
    return v ** r


@_compiled
def edge_log_residual(e, la, r, background, eu, eg, ln_amplitude):
    """ln(α_edge(E) + background) − ln α per point, 50 where the model's logarithm is not
    finite (the same numbers as ``np.log(edge_model_alpha(...) + background) − la``)."""
    et = _joining(eg, eu, r)
    amp = math.exp(ln_amplitude)
    at_et = amp * _power(et - eg, r) / et
    out = np.empty(e.size)
    for k in range(e.size):
        x = e[k]
        if x >= et:
            edge = amp * _power(x - eg, r) / x
        else:
            edge = at_et * math.exp(max((x - et) / eu, -700.0))
        total = edge + background
        v = math.log(total) - la[k] if total > 0.0 else math.inf
        out[k] = v if math.isfinite(v) else 50.0
    return out


@_compiled
def edge_log_jacobian(e, r, background, eu, eg, ln_amplitude):
    """d ln(α_edge + background)/dθ for θ = (background, eu, eg, ln_amplitude), one row per
    point, 0 where not finite. Above Et only eg and the amplitude act; below it the
    slope-matching condition makes d ln α/d eg = −r/(Et − Eg) and d ln α/d Eu = (Et − E)/Eu²
    (common calculus)."""
    et = _joining(eg, eu, r)
    amp = math.exp(ln_amplitude)
    at_et = amp * _power(et - eg, r) / et
    out = np.empty((e.size, 4))
    for k in range(e.size):
        x = e[k]
        if x >= et:
            edge = amp * _power(x - eg, r) / x
            d_eg = -r * edge / (x - eg)
            d_eu = 0.0
        else:
            edge = at_et * math.exp(max((x - et) / eu, -700.0))
            d_eg = -r * edge / (et - eg)
            d_eu = (et - x) / eu ** 2 * edge
        total = edge + background
        row = (1.0 / total, d_eu / total, d_eg / total, edge / total)
        for c in range(4):
            out[k, c] = row[c] if math.isfinite(row[c]) else 0.0
    return out


# ----------------------------------------------------------------------------- window search

@_compiled
def _interp(v, x, y):
    """np.interp(v, x, y) for one v, x ascending."""
    if v <= x[0]:
        return y[0]
    if v >= x[-1]:
        return y[-1]
    k = np.searchsorted(x, v, side="right") - 1
    return y[k] + (y[k + 1] - y[k]) / (x[k + 1] - x[k]) * (v - x[k])


@_compiled
def window_statistics(x, y, w, nodes, min_points, min_span_ev, linearity_tol, noise_factor,
                      curvature_chi2, min_snr, min_coverage, max_foot_fraction, tauc):
    """Statistics and acceptance of every admissible window between ``nodes``.

    ``x`` ascending, ``w`` the weights 1/σ² of ``y``. Returns, for the admissible windows in
    the order of ``np.triu_indices`` over the nodes: i, j, slope, intercept, rms (NaN where
    the residual is not needed: the window fails an earlier test), sigma = √(n/Σw), the
    x-intercept and whether the window is acceptable (criterion: edgefit.edge.windows).
    """
    npt = x.size
    x0 = 0.0
    for k in range(npt):
        x0 += x[k]
    x0 /= npt
    ys = 0.0
    for k in range(npt):
        ys = max(ys, abs(y[k]))
    if ys == 0.0:
        ys = 1.0
    # running sums of the weighted and unweighted moments, centred and scaled
    p = np.zeros((npt + 1, 14))
    t = np.empty(14)
    for k in range(npt):
        xc, yc, wk = x[k] - x0, y[k] / ys, w[k] * ys * ys
        t[0], t[1], t[2], t[3], t[4] = wk, wk * xc, wk * yc, wk * xc * xc, wk * xc * yc
        t[5], t[6], t[7] = wk * yc * yc, wk * xc * xc * xc, wk * xc * xc * xc * xc
        t[8], t[9], t[10] = wk * xc * xc * yc, yc * yc, xc * yc
        t[11], t[12], t[13] = yc, xc * xc, xc
        for q in range(14):
            p[k + 1, q] = p[k, q] + t[q]
    m_nodes = nodes.size
    size = m_nodes * (m_nodes - 1) // 2
    oi = np.empty(size, np.int64)
    oj = np.empty(size, np.int64)
    slope = np.empty(size)
    intercept = np.empty(size)
    rms = np.empty(size)
    sigma = np.empty(size)
    xint = np.empty(size)
    acc = np.zeros(size, np.bool_)
    need = max(min_points, 4)
    count = 0
    s = np.empty(14)
    for a in range(m_nodes):
        i = nodes[a]
        for b in range(a + 1, m_nodes):
            j = nodes[b]
            n = j - i + 1
            lo, hi = x[i], x[j]
            if n < need or hi - lo < min_span_ev:
                continue
            for q in range(14):
                s[q] = p[j + 1, q] - p[i, q]
            sw = s[0]
            xm, ym = s[1] / sw, s[2] / sw
            sxx = s[3] - sw * xm * xm
            sxy = s[4] - sw * xm * ym
            m = sxy / sxx
            c = ym - m * xm
            sg = math.sqrt(n / sw)
            rise = m * (hi - lo)
            xi = -c / m + x0
            oi[count], oj[count] = i, j
            slope[count], intercept[count] = m * ys, (c - m * x0) * ys
            sigma[count], xint[count] = sg * ys, xi
            rms[count] = math.nan
            count += 1
            if not (m > 0.0 and rise >= min_snr * sg):
                continue
            if tauc:
                # anchored at the edge: enough of the way down to the intercept covered, and
                # the data there well below the top of the window
                if not (xi >= 0.5 * lo and xi < lo and hi - lo >= min_coverage * (hi - xi)):
                    continue
                if _interp(xi, x, y) > max_foot_fraction * y[j]:
                    continue
            syy = s[5] - sw * ym * ym
            chi2 = max(syy - m * sxy, 0.0)
            # quadratic term: x² made orthogonal to (1, x) under the weights
            bq = (s[6] - xm * s[3]) / sxx
            aq = s[3] / sw - bq * xm
            sqq = s[7] - aq * s[3] - bq * s[6]
            sqy = s[8] - aq * (ym * sw) - bq * s[4]
            gain = min(sqy * sqy / sqq if sqq > 0.0 else 0.0, chi2)
            chi2_red = chi2 / (n - 2)
            # unweighted residual sum of the weighted line: a geometric measure of straightness
            ssr_u = (s[9] - 2.0 * m * s[10] - 2.0 * c * s[11] + m * m * s[12]
                     + 2.0 * m * c * s[13] + c * c * n)
            r = math.sqrt(max(ssr_u, 0.0) / n)
            rms[count - 1] = r * ys
            acc[count - 1] = (r <= linearity_tol * rise) or (
                chi2_red <= noise_factor * noise_factor and gain < curvature_chi2)
    return (oi[:count], oj[:count], slope[:count], intercept[:count], rms[:count],
            sigma[:count], xint[:count], acc[:count])


# ------------------------------------------------------------- bounds of the least-squares fits

#: kinds of bound of a parameter in :func:`minuit_external` and :func:`minuit_gradient`
FREE, BOTH, LOW, HIGH = 0, 1, 2, 3


@_compiled
def minuit_external(u, kind, lo, hi):
    """External values of the internal variables ``u`` by the MINUIT transformation (see
    :mod:`edgefit.edge.lsq`), clipped to the bounds."""
    out = np.empty(u.size)
    for k in range(u.size):
        x = u[k]
        if kind[k] == BOTH:
            v = lo[k] + (math.sin(x) + 1.0) * (hi[k] - lo[k]) / 2.0
        elif kind[k] == LOW:
            v = lo[k] - 1.0 + math.sqrt(x * x + 1.0)
        elif kind[k] == HIGH:
            v = hi[k] + 1.0 - math.sqrt(x * x + 1.0)
        else:
            v = x
        out[k] = min(max(v, lo[k]), hi[k])
    return out


@_compiled
def minuit_gradient(u, kind, lo, hi):
    """d(external)/d(internal) per parameter of the MINUIT transformation."""
    out = np.empty(u.size)
    for k in range(u.size):
        x = u[k]
        if kind[k] == BOTH:
            out[k] = math.cos(x) * (hi[k] - lo[k]) / 2.0
        elif kind[k] == LOW:
            out[k] = x / math.sqrt(x * x + 1.0)
        elif kind[k] == HIGH:
            out[k] = -x / math.sqrt(x * x + 1.0)
        else:
            out[k] = 1.0
    return out


@_compiled
def group_stretches(lo, hi, rel, nearest_onset):
    """The stretches of :func:`edgefit.edge.windows.stretches`. The leading free window
    (longest; of equal length the straightest, lowest ``rel``; then the lowest start; then
    the first) takes every free window overlapping it as its family, until none is free.
    Returns each window's stretch number (in the order found) and each stretch's chosen
    window: the leading one, or with ``nearest_onset`` the one with the lowest end (then
    lowest start, then first) among the family members at least half as long."""
    n = lo.size
    label = np.full(n, -1, np.int64)
    best = np.empty(n, np.int64)
    count = 0
    free = n
    while free > 0:
        k = -1
        for m in range(n):
            if label[m] >= 0:
                continue
            if k < 0:
                k = m
                continue
            sm, sk = hi[m] - lo[m], hi[k] - lo[k]
            if sm > sk or (sm == sk and (rel[m] < rel[k]
                                         or (rel[m] == rel[k] and lo[m] < lo[k]))):
                k = m
        span_k = hi[k] - lo[k]
        pick = -1
        for m in range(n):
            if label[m] < 0 and lo[m] <= hi[k] and hi[m] >= lo[k]:
                label[m] = count
                free -= 1
                if nearest_onset and hi[m] - lo[m] >= 0.5 * span_k and (
                        pick < 0 or hi[m] < hi[pick]
                        or (hi[m] == hi[pick] and lo[m] < lo[pick])):
                    pick = m
        best[count] = pick if nearest_onset else k
        count += 1
    return label, best[:count]


# ------------------------------------------------------------------ one line and its bootstrap

@_compiled
def _weights(y_sd, y, i, j):
    """The weights 1/σ² of points i..j as :func:`edgefit.edge.windows.weights_from_sd` gives
    them (σ floored at 1e-9 of the largest |y| of the whole array)."""
    top = 0.0
    for k in range(y.size):
        top = max(top, abs(y[k]))
    floor = 1e-9 * (top if top > 0.0 else 1.0)
    w = np.empty(j - i + 1)
    for k in range(i, j + 1):
        s = max(y_sd[k], floor)
        w[k - i] = 1.0 / (s * s)
    return w


@_compiled
def weighted_line(x, y, y_sd, i, j):
    """The weighted least-squares line through points i..j (inclusive), centred two-pass sums:
    (slope, intercept, Σw, weighted mean of x, Σw(x − x̄)², reduced χ², unweighted rms)."""
    w = _weights(y_sd, y, i, j)
    n = j - i + 1
    sw = sx = sy = 0.0
    for k in range(n):
        sw += w[k]
        sx += w[k] * x[i + k]
        sy += w[k] * y[i + k]
    xm, ym = sx / sw, sy / sw
    sxx = sxy = 0.0
    for k in range(n):
        dx = x[i + k] - xm
        sxx += w[k] * dx * dx
        sxy += w[k] * dx * (y[i + k] - ym)
    m = sxy / sxx
    c = ym - m * xm
    chi2 = ss = 0.0
    for k in range(n):
        r = y[i + k] - (m * x[i + k] + c)
        chi2 += w[k] * r * r
        ss += r * r
    return m, c, sw, xm, sxx, chi2 / max(n - 2, 1), math.sqrt(ss / n)


@_compiled
def _splitmix64(state):
    """One step of SplitMix64 (Steele, Lea & Flood, OOPSLA 2014): (new state, 64-bit output)."""
    state = state + np.uint64(0x9E3779B97F4A7C15)
    z = state
    z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return state, z ^ (z >> np.uint64(31))


@_compiled
def _draw(state, word, half, nn):
    """The next draw from 0..nn−1: from the low half of a new SplitMix64 word, or the high
    half of the last one. Returns (state, word, half, draw)."""
    if half == 0:
        state, word = _splitmix64(state)
        return state, word, 1, ((word & np.uint64(0xFFFFFFFF)) * nn) >> np.uint64(32)
    return state, word, 0, (word >> np.uint64(32)) * nn >> np.uint64(32)


@_compiled
def resample_indices(seed, n_boot, n):
    """The resampling indices of :func:`bootstrap_sums`: row b holds resample b's n draws from
    0..n−1. Each 64-bit SplitMix64 output gives two draws, one per 32-bit half h, as
    ⌊h·n / 2³²⌋ (Lemire's multiply-shift, ACM TOMACS 29, 3, 2019, without the rejection step:
    a draw's probability is off 1/n by less than 1/2³²)."""
    out = np.empty((n_boot, n), np.int64)
    state = np.uint64(seed)
    word = np.uint64(0)
    half = 0
    nn = np.uint64(n)
    for b in range(n_boot):
        for k in range(n):
            state, word, half, out[b, k] = _draw(state, word, half, nn)
    return out


@_compiled
def bootstrap_sums(seed, n_boot, z, pa, pb):
    """Σ_k z[pick[b, k]]·pa[k] and Σ_k z[pick[b, k]]·pb[k] per resample b, for the indices
    ``pick = resample_indices(seed, n_boot, z.size)`` drawn on the fly (never stored)."""
    n = z.size
    out_a = np.empty(n_boot)
    out_b = np.empty(n_boot)
    state = np.uint64(seed)
    word = np.uint64(0)
    half = 0
    nn = np.uint64(n)
    for b in range(n_boot):
        sa = sb = 0.0
        for k in range(n):
            state, word, half, q = _draw(state, word, half, nn)
            sa += z[q] * pa[k]
            sb += z[q] * pb[k]
        out_a[b] = sa
        out_b[b] = sb
    return out_a, out_b
