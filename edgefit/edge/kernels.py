"""Compiled inner loops (numba) of the fitting machinery.

The window search evaluates every window between up to 100 nodes (about 5,000 windows, six
searches per spectrum), each edge-model fit evaluates its residual and Jacobian some thirty
times on up to 100 points, and each reported line gets a 200-resample bootstrap. Written
with numpy, all of them spend their time in the overhead of many small array operations
rather than in arithmetic; these loops do the same arithmetic once per point, window or
resample. The formulas are those of :mod:`edgefit.edge.windows` (the module docstring states
the criterion) and :func:`edgefit.edge.tauc.edge_model_alpha`; tests/test_windows.py and
tests/test_edge.py check them against numpy.polyfit, scipy's curve_fit, the numpy formula and
lmfit. Results agree with the numpy forms to rounding (last digits), not bit for bit, except
where a docstring says bit for bit (the Tauc ordinate and the weights).

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
    the order of ``np.triu_indices`` over the nodes, the blocks of
    :class:`edgefit.edge.windows.WindowTable`: floats (lo_ev, hi_ev, slope, intercept, rms,
    sigma, x-intercept; rms NaN where the residual is not needed: the window fails an earlier
    test, sigma = √(n/Σw)), indices (i, j, n) and whether each window is acceptable
    (criterion: edgefit.edge.windows).
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
    fl = np.empty((7, size))
    ix = np.empty((3, size), np.int64)
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
            # the line's moments first; the residual's only for a window that gets that far
            for q in range(5):
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
            ix[0, count], ix[1, count], ix[2, count] = i, j, n
            fl[0, count], fl[1, count] = lo, hi
            fl[2, count], fl[3, count] = m * ys, (c - m * x0) * ys
            fl[4, count], fl[5, count], fl[6, count] = math.nan, sg * ys, xi
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
            for q in range(5, 14):
                s[q] = p[j + 1, q] - p[i, q]
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
            fl[4, count - 1] = r * ys
            acc[count - 1] = (r <= linearity_tol * rise) or (
                chi2_red <= noise_factor * noise_factor and gain < curvature_chi2)
    return fl[:, :count].copy(), ix[:, :count].copy(), acc[:count].copy()


@_compiled
def positive_power(p, exponent):
    """p**exponent where p > 0, NaN elsewhere, for exponent 2 or 1/2: the allowed transitions'
    Tauc ordinate (αhν)^(1/r) of :func:`edgefit.edge.tauc.tauc_ordinate`, equal to numpy's
    ``np.where(p > 0, |p|**x, nan)`` to the last bit (numpy, too, takes the square and the
    square root, both exactly rounded on every CPU; tests/test_edge.py). Other exponents go
    through libm's pow here, where numpy may use a vectorised pow that differs in the last
    bit on some CPUs: tauc_ordinate leaves those to numpy."""
    out = np.empty(p.size)
    for k in range(p.size):
        v = p[k]
        out[k] = _power(v, exponent) if v > 0.0 else math.nan
    return out


@_compiled
def inverse_variance(y_sd, y):
    """Weights 1/σ² of :func:`edgefit.edge.windows.weights_from_sd`, σ floored at 1e-9 of the
    largest |y| (1 when all are zero; NaN when any y is, as np.max gives)."""
    big = 0.0
    for k in range(y.size):
        v = abs(y[k])
        if math.isnan(v):
            big = math.nan
            break
        big = max(big, v)
    floor = 1e-9 * (big if big != 0.0 else 1.0)
    out = np.empty(y_sd.size)
    for k in range(y_sd.size):
        s = y_sd[k]
        s = s if s >= floor or math.isnan(s) else floor
        if math.isnan(floor):
            s = math.nan
        out[k] = 1.0 / (s * s)
    return out


# ------------------------------------------------------------- bounds of the least-squares fits

#: kinds of bound of a parameter in :func:`minuit_external` and :func:`minuit_gradient`
FREE, BOTH, LOW, HIGH = 0, 1, 2, 3


@_compiled
def minuit_kinds(lo, hi):
    """The kind of bound of each parameter: BOTH, LOW, HIGH or FREE (infinite = no bound)."""
    out = np.empty(lo.size, np.int64)
    for k in range(lo.size):
        a, b = math.isfinite(lo[k]), math.isfinite(hi[k])
        out[k] = BOTH if a and b else LOW if a else HIGH if b else FREE
    return out


@_compiled
def minuit_internal(v, kind, lo, hi, tiny):
    """Internal variables of the external values ``v`` (clipped to the bounds) by the MINUIT
    transformation; one closer to zero than ``tiny`` is taken as zero (as lmfit does)."""
    out = np.empty(v.size)
    for k in range(v.size):
        x = min(max(v[k], lo[k]), hi[k])
        if kind[k] == BOTH:
            u = math.asin(2.0 * (x - lo[k]) / (hi[k] - lo[k]) - 1.0)
        elif kind[k] == LOW:
            u = math.sqrt((x - lo[k] + 1.0) ** 2 - 1.0)
        elif kind[k] == HIGH:
            u = math.sqrt((hi[k] - x + 1.0) ** 2 - 1.0)
        else:
            u = x
        out[k] = 0.0 if abs(u) < tiny else u
    return out


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
def _sd_floor(y):
    """The floor of σ of :func:`edgefit.edge.windows.weights_from_sd`: 1e-9 of the largest |y|
    of the whole array (1e-9 when all are zero)."""
    top = 0.0
    for k in range(y.size):
        top = max(top, abs(y[k]))
    return 1e-9 * (top if top > 0.0 else 1.0)


@_compiled
def _line(x, y, y_sd, i, j, floor):
    n = j - i + 1
    w = np.empty(n)
    for k in range(n):
        s = max(y_sd[i + k], floor)
        w[k] = 1.0 / (s * s)
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
def weighted_line(x, y, y_sd, i, j):
    """The weighted least-squares line through points i..j (inclusive), weights 1/σ² as
    :func:`edgefit.edge.windows.weights_from_sd` gives them, centred two-pass sums: (slope,
    intercept, Σw, weighted mean of x, Σw(x − x̄)², reduced χ², unweighted rms)."""
    return _line(x, y, y_sd, i, j, _sd_floor(y))


@_compiled
def window_intercepts(x, y, y_sd, i, j):
    """x-intercepts −c/m of :func:`weighted_line` through the windows i[k]..j[k]."""
    floor = _sd_floor(y)
    out = np.empty(i.size)
    for k in range(i.size):
        m, c = _line(x, y, y_sd, i[k], j[k], floor)[:2]
        out[k] = -c / m
    return out


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


# ------------------------------------------------- Levenberg–Marquardt (MINPACK lmder, compiled)
#
# The single-edge fits' solver, compiled with the model: MINPACK's lmder (J. J. Moré, B. S.
# Garbow and K. E. Hillstrom, Argonne ANL-80-74, 1980; the algorithm: Moré, Lecture Notes in
# Mathematics 630, 105, 1978) followed step by step, with its qrfac, lmpar and qrsolv, as
# scipy.optimize.leastsq runs it (mode 1: scaling by the Jacobian's column norms). What
# scipy gives the same problem through Python callbacks this gives without them;
# tests/test_edge.py compares the two path by path.

_EPSMCH = 2.220446049250313e-16
_DWARF = 2.2250738585072014e-308


@_compiled
def _enorm(v):
    """Euclidean norm (MINPACK's enorm without its rescaling of tiny and huge components,
    which the residuals of ln α never come near)."""
    s = 0.0
    for k in range(v.size):
        s += v[k] * v[k]
    return math.sqrt(s)


@_compiled
def _qrfac(a, ipvt, rdiag, acnorm, wa):
    """Householder QR of a (m×n, in place) with column pivoting (MINPACK qrfac)."""
    m, n = a.shape
    for j in range(n):
        acnorm[j] = _enorm(a[:, j])
        rdiag[j] = acnorm[j]
        wa[j] = rdiag[j]
        ipvt[j] = j
    for j in range(min(m, n)):
        kmax = j
        for k in range(j, n):
            if rdiag[k] > rdiag[kmax]:
                kmax = k
        if kmax != j:
            for i in range(m):
                a[i, j], a[i, kmax] = a[i, kmax], a[i, j]
            rdiag[kmax] = rdiag[j]
            wa[kmax] = wa[j]
            ipvt[j], ipvt[kmax] = ipvt[kmax], ipvt[j]
        ajnorm = _enorm(a[j:, j])
        if ajnorm != 0.0:
            if a[j, j] < 0.0:
                ajnorm = -ajnorm
            for i in range(j, m):
                a[i, j] /= ajnorm
            a[j, j] += 1.0
            for k in range(j + 1, n):
                s = 0.0
                for i in range(j, m):
                    s += a[i, j] * a[i, k]
                temp = s / a[j, j]
                for i in range(j, m):
                    a[i, k] -= temp * a[i, j]
                if rdiag[k] != 0.0:
                    temp = a[j, k] / rdiag[k]
                    rdiag[k] *= math.sqrt(max(0.0, 1.0 - temp * temp))
                    if 0.05 * (rdiag[k] / wa[k]) ** 2 <= _EPSMCH:
                        rdiag[k] = _enorm(a[j + 1:, k])
                        wa[k] = rdiag[k]
        rdiag[j] = -ajnorm


@_compiled
def _qrsolv(r, ipvt, diag, qtb, x, sdiag, wa):
    """Least-squares solution of [R; D]·z = [Qᵀb; 0] by Givens rotations (MINPACK qrsolv);
    r's strict lower triangle is overwritten."""
    n = diag.size
    for j in range(n):
        for i in range(j, n):
            r[i, j] = r[j, i]
        x[j] = r[j, j]
        wa[j] = qtb[j]
    for j in range(n):
        dl = diag[ipvt[j]]
        if dl != 0.0:
            for k in range(j, n):
                sdiag[k] = 0.0
            sdiag[j] = dl
            qtbpj = 0.0
            for k in range(j, n):
                if sdiag[k] == 0.0:
                    continue
                if abs(r[k, k]) < abs(sdiag[k]):
                    cotan = r[k, k] / sdiag[k]
                    sin = 0.5 / math.sqrt(0.25 + 0.25 * cotan * cotan)
                    cos = sin * cotan
                else:
                    tan = sdiag[k] / r[k, k]
                    cos = 0.5 / math.sqrt(0.25 + 0.25 * tan * tan)
                    sin = cos * tan
                r[k, k] = cos * r[k, k] + sin * sdiag[k]
                temp = cos * wa[k] + sin * qtbpj
                qtbpj = -sin * wa[k] + cos * qtbpj
                wa[k] = temp
                for i in range(k + 1, n):
                    temp = cos * r[i, k] + sin * sdiag[i]
                    sdiag[i] = -sin * r[i, k] + cos * sdiag[i]
                    r[i, k] = temp
        sdiag[j] = r[j, j]
        r[j, j] = x[j]
    nsing = n
    for j in range(n):
        if sdiag[j] == 0.0 and nsing == n:
            nsing = j
        if nsing < n:
            wa[j] = 0.0
    for q in range(nsing):
        j = nsing - 1 - q
        s = 0.0
        for i in range(j + 1, nsing):
            s += r[i, j] * wa[i]
        wa[j] = (wa[j] - s) / sdiag[j]
    for j in range(n):
        x[ipvt[j]] = wa[j]


@_compiled
def _lmpar(r, ipvt, diag, qtb, delta, par, x, sdiag, wa1, wa2):
    """The Levenberg–Marquardt parameter for the trust region ``delta`` and its step x
    (MINPACK lmpar). Returns par."""
    n = diag.size
    nsing = n
    for j in range(n):
        wa1[j] = qtb[j]
        if r[j, j] == 0.0 and nsing == n:
            nsing = j
        if nsing < n:
            wa1[j] = 0.0
    for q in range(nsing):
        j = nsing - 1 - q
        wa1[j] /= r[j, j]
        temp = wa1[j]
        for i in range(j):
            wa1[i] -= r[i, j] * temp
    for j in range(n):
        x[ipvt[j]] = wa1[j]
    it = 0
    for j in range(n):
        wa2[j] = diag[j] * x[j]
    dxnorm = _enorm(wa2)
    fp = dxnorm - delta
    if fp <= 0.1 * delta:
        return 0.0
    parl = 0.0
    if nsing >= n:
        for j in range(n):
            m = ipvt[j]
            wa1[j] = diag[m] * (wa2[m] / dxnorm)
        for j in range(n):
            s = 0.0
            for i in range(j):
                s += r[i, j] * wa1[i]
            wa1[j] = (wa1[j] - s) / r[j, j]
        temp = _enorm(wa1)
        parl = ((fp / delta) / temp) / temp
    for j in range(n):
        s = 0.0
        for i in range(j + 1):
            s += r[i, j] * qtb[i]
        wa1[j] = s / diag[ipvt[j]]
    gnorm = _enorm(wa1)
    paru = gnorm / delta
    if paru == 0.0:
        paru = _DWARF / min(delta, 0.1)
    par = max(par, parl)
    par = min(par, paru)
    if par == 0.0:
        par = gnorm / dxnorm
    while True:
        it += 1
        if par == 0.0:
            par = max(_DWARF, 0.001 * paru)
        temp = math.sqrt(par)
        for j in range(n):
            wa1[j] = temp * diag[j]
        _qrsolv(r, ipvt, wa1, qtb, x, sdiag, wa2)
        for j in range(n):
            wa2[j] = diag[j] * x[j]
        dxnorm = _enorm(wa2)
        temp = fp
        fp = dxnorm - delta
        if abs(fp) <= 0.1 * delta or (parl == 0.0 and fp <= temp and temp < 0.0) or it == 10:
            break
        for j in range(n):
            m = ipvt[j]
            wa1[j] = diag[m] * (wa2[m] / dxnorm)
        for j in range(n):
            wa1[j] /= sdiag[j]
            temp = wa1[j]
            for i in range(j + 1, n):
                wa1[i] -= r[i, j] * temp
        temp = _enorm(wa1)
        parc = ((fp / delta) / temp) / temp
        if fp > 0.0:
            parl = max(parl, par)
        if fp < 0.0:
            paru = min(paru, par)
        par = max(parl, par + parc)
    return par


@_compiled
def _edge_residual_u(u, kind, lo, hi, e, la, r):
    th = minuit_external(u, kind, lo, hi)
    return edge_log_residual(e, la, r, th[0], th[1], th[2], th[3])


@_compiled
def _edge_jacobian_u(u, kind, lo, hi, e, r):
    th = minuit_external(u, kind, lo, hi)
    jac = edge_log_jacobian(e, r, th[0], th[1], th[2], th[3])
    g = minuit_gradient(u, kind, lo, hi)
    for i in range(jac.shape[0]):
        for j in range(jac.shape[1]):
            jac[i, j] *= g[j]
    return jac


@_compiled
def edge_lmder(e, la, r, u0, kind, lo, hi, ftol, xtol, maxfev, factor):
    """Minimise Σ residual² of :func:`edge_log_residual` over the internal variables u of
    θ = (background, Eu, Eg, ln B) (MINUIT bounds ``kind``/``lo``/``hi``) from ``u0``, by
    MINPACK's lmder with gtol = 0 and mode 1, as ``scipy.optimize.leastsq`` calls it.

    Returns (u, residual at u, info, nfev, the final n×n block of MINPACK's fjac with R in
    its upper triangle, ipvt): what leastsq returns with ``full_output``.
    """
    m, n = e.size, u0.size
    x = u0.copy()
    fvec = _edge_residual_u(x, kind, lo, hi, e, la, r)
    nfev = 1
    fnorm = _enorm(fvec)
    par = 0.0
    it = 1
    info = 0
    ipvt = np.zeros(n, np.int64)
    diag = np.zeros(n)
    qtf = np.zeros(n)
    wa1, wa2, wa3, wa5 = np.zeros(n), np.zeros(n), np.zeros(n), np.zeros(n)
    wa4 = np.zeros(m)          # (MINPACK passes its wa4 to lmpar; its first n are used)
    delta = xnorm = 0.0
    fjac = np.zeros((m, n))
    while True:
        fjac = _edge_jacobian_u(x, kind, lo, hi, e, r)
        _qrfac(fjac, ipvt, wa1, wa2, wa3)
        if it == 1:
            for j in range(n):
                diag[j] = wa2[j] if wa2[j] != 0.0 else 1.0
                wa3[j] = diag[j] * x[j]
            xnorm = _enorm(wa3)
            delta = factor * xnorm
            if delta == 0.0:
                delta = factor
        for i in range(m):
            wa4[i] = fvec[i]
        for j in range(n):
            if fjac[j, j] != 0.0:
                s = 0.0
                for i in range(j, m):
                    s += fjac[i, j] * wa4[i]
                temp = -s / fjac[j, j]
                for i in range(j, m):
                    wa4[i] += fjac[i, j] * temp
            fjac[j, j] = wa1[j]
            qtf[j] = wa4[j]
        gnorm = 0.0
        if fnorm != 0.0:
            for j in range(n):
                q = ipvt[j]
                if wa2[q] != 0.0:
                    s = 0.0
                    for i in range(j + 1):
                        s += fjac[i, j] * (qtf[i] / fnorm)
                    gnorm = max(gnorm, abs(s / wa2[q]))
        if gnorm <= 0.0:
            info = 4
            break
        for j in range(n):
            diag[j] = max(diag[j], wa2[j])
        while True:
            par = _lmpar(fjac, ipvt, diag, qtf, delta, par, wa1, wa2, wa3, wa5)
            for j in range(n):
                wa1[j] = -wa1[j]
                wa2[j] = x[j] + wa1[j]
                wa3[j] = diag[j] * wa1[j]
            pnorm = _enorm(wa3)
            if it == 1:
                delta = min(delta, pnorm)
            trial = _edge_residual_u(wa2, kind, lo, hi, e, la, r)
            nfev += 1
            fnorm1 = _enorm(trial)
            actred = -1.0
            if 0.1 * fnorm1 < fnorm:
                actred = 1.0 - (fnorm1 / fnorm) ** 2
            for j in range(n):
                wa3[j] = 0.0
                temp = wa1[ipvt[j]]
                for i in range(j + 1):
                    wa3[i] += fjac[i, j] * temp
            temp1 = _enorm(wa3) / fnorm
            temp2 = (math.sqrt(par) * pnorm) / fnorm
            prered = temp1 ** 2 + temp2 ** 2 / 0.5
            dirder = -(temp1 ** 2 + temp2 ** 2)
            ratio = actred / prered if prered != 0.0 else 0.0
            if ratio <= 0.25:
                temp = 0.5 if actred >= 0.0 else 0.5 * dirder / (dirder + 0.5 * actred)
                if 0.1 * fnorm1 >= fnorm or temp < 0.1:
                    temp = 0.1
                delta = temp * min(delta, pnorm / 0.1)
                par = par / temp
            elif par == 0.0 or ratio >= 0.75:
                delta = pnorm / 0.5
                par = 0.5 * par
            if ratio >= 1e-4:
                for j in range(n):
                    x[j] = wa2[j]
                    wa2[j] = diag[j] * x[j]
                fvec = trial
                xnorm = _enorm(wa2)
                fnorm = fnorm1
                it += 1
            if abs(actred) <= ftol and prered <= ftol and 0.5 * ratio <= 1.0:
                info = 1
            if delta <= xtol * xnorm:
                info = 3 if info == 1 else 2
            if info != 0:
                break
            if nfev >= maxfev:
                info = 5
            if abs(actred) <= _EPSMCH and prered <= _EPSMCH and 0.5 * ratio <= 1.0:
                info = 6
            if delta <= _EPSMCH * xnorm:
                info = 7
            if gnorm <= _EPSMCH:
                info = 8
            if info != 0:
                break
            if ratio >= 1e-4:
                break
        if info != 0:
            break
    return x, fvec, info, nfev, fjac[:n, :].copy(), ipvt


@_compiled
def leastsq_stderr(rfac, ipvt, u, kind, lo, hi, res):
    """1σ errors of the external parameters from MINPACK's R (JP = QR, upper triangle of
    ``rfac``): the diagonal of (JᵀJ)⁻¹ = P R⁻¹ R⁻ᵀ Pᵀ (R inverted column by column, as LAPACK's
    trtri does), times the squared MINUIT gradient and the reduced χ² (lmfit's convention).
    Returns (whether R could be inverted, the errors)."""
    n = u.size
    inv = np.zeros((n, n))
    for j in range(n):
        if rfac[j, j] == 0.0:
            return False, np.zeros(n)
        inv[j, j] = 1.0 / rfac[j, j]
        # column j above the diagonal: −R⁻¹[:j, :j] · R[:j, j] / R[j, j]
        for i in range(j):
            s = 0.0
            for k in range(i, j):
                s += inv[i, k] * rfac[k, j]
            inv[i, j] = -s * inv[j, j]
    g = minuit_gradient(u, kind, lo, hi)
    ss = 0.0
    for k in range(res.size):
        ss += res[k] * res[k]
    redchi = ss / max(1, res.size - n)
    out = np.empty(n)
    for m in range(n):
        d = 0.0
        for q in range(n):
            d += inv[m, q] * inv[m, q]
        p = ipvt[m]
        out[p] = math.sqrt(d * g[p] * g[p] * redchi)
    return True, out


@_compiled
def fit_edge(e, la, r, start, lo, hi, ftol, xtol, maxfev, factor, tiny, errors):
    """The whole bounded single-edge fit of :func:`edgefit.edge.lsq.fit_edge_model`: bounds,
    internal start, :func:`edge_lmder`, external values and (with ``errors``) their 1σ.
    Returns (values, residual, MINPACK's info, whether errors were computed, errors)."""
    kind = minuit_kinds(lo, hi)
    u0 = minuit_internal(start, kind, lo, hi, tiny)
    u, res, info, _, rfac, ipvt = edge_lmder(e, la, r, u0, kind, lo, hi, ftol, xtol, maxfev,
                                             factor)
    have = False
    err = np.zeros(u.size)
    if errors and 1 <= info <= 4:
        have, err = leastsq_stderr(rfac, ipvt, u, kind, lo, hi, res)
    return minuit_external(u, kind, lo, hi), res, info, have, err
