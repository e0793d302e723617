"""Films on substrates: interference fringes, thickness and refractive index; grid matching.

The film is a homogeneous layer (index n, thickness d, absorption α) on a thick transparent
substrate of index s, measured in transmission at normal incidence: the geometry of
Swanepoel's envelope method (R. Swanepoel, J. Phys. E 16, 1214, 1983). The module holds

* the pure formulas of that method (transmittance of the structure, its envelopes, n from the
  envelopes, thickness from two extrema, the absorbance x from the upper envelope, Cauchy's
  dispersion), arrays in and arrays out;
* the machinery that applies them to a measured spectrum (:func:`detect_fringes`,
  :func:`envelopes`, :func:`analyse_fringes`), kept apart from the formulas;
* helpers for films measured against a second file: :func:`interpolate_onto` (reflectance or
  bare substrate on the film's wavelength grid), :func:`substrate_corrected_transmittance`,
  :func:`substrate_edge_mask`.

Assumptions shared by the formulas (Swanepoel 1983): the extinction coefficient k is neglected
in the interface coefficients (k² ≪ (n−1)²; true where fringes are visible); the substrate is
thick (incoherent: no fringes of its own), non-absorbing and of known index; the film is
uniform in thickness across the light spot (no wedge: a wedge shrinks the fringes and biases n
low); light at normal incidence.
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field

import numpy as np
from scipy.signal import find_peaks
from scipy.interpolate import PchipInterpolator
from scipy.ndimage import convolve1d
from scipy.signal import savgol_coeffs

from .errors import EdgefitError
from .filters import median, percentile
from .optics import substrate_index_from_transmittance, substrate_transmittance
from .spectrum import Flag

__all__ = [
    "swanepoel_coefficients", "swanepoel_transmittance", "swanepoel_envelopes",
    "index_transparent", "index_from_envelopes", "thickness_from_extrema",
    "absorbance_x_from_upper_envelope", "absorbance_x_from_transmittance", "cauchy_index",
    "fit_cauchy",
    "FringeExtrema", "detect_fringes", "envelopes", "FringeAnalysis", "analyse_fringes",
    "interpolate_onto", "substrate_corrected_transmittance", "substrate_edge_mask",
]

_SWANEPOEL = "R. Swanepoel, J. Phys. E: Sci. Instrum. 16, 1214 (1983)"

# ------------------------------------------------------------------------------------------
# Formulas (pure)
# ------------------------------------------------------------------------------------------


def swanepoel_coefficients(refractive_index, substrate_index):
    """Coefficients A, B, C, D of Swanepoel's transmittance formula.

    A = 16n²s, B = (n+1)³(n+s²), C = 2(n²−1)(n²−s²), D = (n−1)³(n−s²).

    Parameters
    ----------
    refractive_index : array_like
        Film index n [-].
    substrate_index : array_like
        Substrate index s [-].

    Returns
    -------
    tuple of ndarray
        (A, B, C, D).

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983), eq. (1); k neglected in the coefficients.
    """
    n = np.asarray(refractive_index, dtype=float)
    s = np.asarray(substrate_index, dtype=float)
    a = 16 * n ** 2 * s
    b = (n + 1) ** 3 * (n + s ** 2)
    c = 2 * (n ** 2 - 1) * (n ** 2 - s ** 2)
    d = (n - 1) ** 3 * (n - s ** 2)
    return a, b, c, d


def swanepoel_transmittance(wavelength_nm, refractive_index, thickness_nm, alpha_per_cm,
                            substrate_index):
    """Transmittance of a film on a thick transparent substrate, in air.

    T = A·x / (B − C·x·cos φ + D·x²), φ = 4πnd/λ, x = exp(−αd).

    Parameters
    ----------
    wavelength_nm : array_like
        Vacuum wavelength λ [nm].
    refractive_index : array_like
        Film index n(λ) [-] (scalar or one value per wavelength).
    thickness_nm : float
        Film thickness d [nm].
    alpha_per_cm : array_like
        Film absorption coefficient α [cm⁻¹].
    substrate_index : float
        Substrate index s [-].

    Returns
    -------
    ndarray
        T (fraction), including the incoherent reflections at the substrate's back face.

    Notes
    -----
    Exact for k = 0 (it agrees with a transfer-matrix calculation to machine precision, see
    tests/test_films.py); with absorption, k is neglected in A..D, which is good to a few
    tenths of a per cent in T where fringes are visible.

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983), eq. (1).
    """
    lam = np.asarray(wavelength_nm, dtype=float)
    n = np.asarray(refractive_index, dtype=float)
    a, b, c, d = swanepoel_coefficients(n, substrate_index)
    x = np.exp(-np.asarray(alpha_per_cm, dtype=float) * thickness_nm * 1e-7)
    phi = 4 * np.pi * n * thickness_nm / lam
    return a * x / (b - c * x * np.cos(phi) + d * x ** 2)


def swanepoel_envelopes(refractive_index, absorbance_x, substrate_index):
    """Upper and lower envelopes of the fringes, T_M = Ax/(B − Cx + Dx²), T_m = Ax/(B + Cx + Dx²).

    Parameters
    ----------
    refractive_index : array_like
        Film index n [-].
    absorbance_x : array_like
        x = exp(−αd) [-].
    substrate_index : float
        Substrate index s [-].

    Returns
    -------
    (ndarray, ndarray)
        (T_M, T_m). For n > s, T_M passes through the maxima; for n < s the roles swap.

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983), eqs. (2)–(3).
    """
    a, b, c, d = swanepoel_coefficients(refractive_index, substrate_index)
    x = np.asarray(absorbance_x, dtype=float)
    return a * x / (b - c * x + d * x ** 2), a * x / (b + c * x + d * x ** 2)


def index_transparent(t_lower, substrate_index):
    """Film index in the transparent region from the lower envelope alone.

    n = √(M + √(M² − s²)), M = 2s/T_m − (s² + 1)/2.

    Parameters
    ----------
    t_lower : array_like
        Lower envelope T_m (fraction).
    substrate_index : float
        Substrate index s [-].

    Returns
    -------
    ndarray
        n [-]; NaN where there is no solution with n > s (T_m at or above the bare-substrate
        value 2s/(s² + 1)).

    Notes
    -----
    Assumes x = 1 (no absorption), so that T_M = 2s/(s² + 1); any absorption makes n too high.

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983), eqs. (5)–(6).
    """
    s = float(substrate_index)
    m = 2 * s / np.asarray(t_lower, dtype=float) - (s ** 2 + 1) / 2
    return _index_from_m(m, s)


def index_from_envelopes(t_upper, t_lower, substrate_index):
    """Film index in the weak and medium absorption region from both envelopes.

    n = √(N + √(N² − s²)), N = 2s(T_M − T_m)/(T_M·T_m) + (s² + 1)/2.

    Parameters
    ----------
    t_upper, t_lower : array_like
        Envelopes T_M and T_m (fractions) at the same wavelengths.
    substrate_index : float
        Substrate index s [-].

    Returns
    -------
    ndarray
        n [-]; NaN where there is no solution with n > s.

    Notes
    -----
    Reduces to :func:`index_transparent` when T_M = 2s/(s² + 1). Valid for n > s; k is
    neglected, which holds while the fringes are visible (weak and medium absorption).

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983), eqs. (11)–(12).
    """
    s = float(substrate_index)
    tu = np.asarray(t_upper, dtype=float)
    tl = np.asarray(t_lower, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        big_n = 2 * s * (tu - tl) / (tu * tl) + (s ** 2 + 1) / 2
    return _index_from_m(big_n, s)


def _index_from_m(m, s):
    """n = √(M + √(M² − s²)), kept only where n > s (the envelopes' geometry)."""
    with np.errstate(invalid="ignore"):
        disc = m ** 2 - s ** 2
        n = np.sqrt(np.abs(m + np.sqrt(np.abs(disc))))
        return np.where((m >= s) & (disc >= 0) & (n > s), n, np.nan)


def thickness_from_extrema(wavelength1_nm, n1, wavelength2_nm, n2, order_step=1.0):
    """Thickness from two extrema whose interference orders differ by ``order_step``.

    d = Δm·λ1λ2 / [2(λ1n2 − λ2n1)], λ1 > λ2; Δm = 1 for two adjacent extrema of one kind
    (two maxima or two minima), 1/2 for a maximum next to a minimum.

    Parameters
    ----------
    wavelength1_nm, wavelength2_nm : array_like
        Wavelengths of the two extrema [nm], λ1 > λ2.
    n1, n2 : array_like
        Film index at λ1 and λ2 [-].
    order_step : float
        Difference of interference order between them [-].

    Returns
    -------
    ndarray
        d [nm]; very sensitive to errors in n (the denominator is a small difference), hence
        the averaging and the order-number refinement in :func:`analyse_fringes`.

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983), eq. (23).
    """
    l1 = np.asarray(wavelength1_nm, dtype=float)
    l2 = np.asarray(wavelength2_nm, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return order_step * l1 * l2 / (2 * (l1 * np.asarray(n2) - l2 * np.asarray(n1)))


def absorbance_x_from_upper_envelope(t_upper, refractive_index, substrate_index):
    """Absorbance x = exp(−αd) from the upper envelope.

    x = [E_M − √(E_M² − (n²−1)³(n²−s⁴))] / [(n−1)³(n−s²)], E_M = 8n²s/T_M + (n²−1)(n²−s²),
    computed in the equivalent form x = B/(E_M + √(E_M² − B·D)) that stays finite at n = s².

    Parameters
    ----------
    t_upper : array_like
        T_M (fraction). Where the fringes have vanished (strong absorption) the measured T
        itself may be used: there T_M = T_m = T.
    refractive_index : array_like
        Film index n [-].
    substrate_index : float
        Substrate index s [-].

    Returns
    -------
    ndarray
        x in (0, 1]; 1 where T_M is at or above the transparent value (no absorption seen).
        Needs no thickness: α = −ln(x)/d once d is known.

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983), eq. (15).
    """
    n = np.asarray(refractive_index, dtype=float)
    s = float(substrate_index)
    tu = np.asarray(t_upper, dtype=float)
    _, b, _, d = swanepoel_coefficients(n, s)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        e_m = 8 * n ** 2 * s / tu + (n ** 2 - 1) * (n ** 2 - s ** 2)
        disc = np.maximum(e_m ** 2 - b * d, 0.0)
        x = b / (e_m + np.sqrt(disc))
    return np.where(tu > 0, np.minimum(x, 1.0), np.nan)


def absorbance_x_from_transmittance(transmittance, refractive_index, phase_rad,
                                    substrate_index):
    """Absorbance x = exp(−αd) at every wavelength, inverting the full formula for known n, φ.

    Solves T·D·x² − (A + T·C·cos φ)·x + T·B = 0 for its physical root,
    x = 2TB / [P + √(P² − 4T²BD)], P = A + T·C·cos φ.

    Parameters
    ----------
    transmittance : array_like
        Measured T (fraction), fringes and all.
    refractive_index : array_like
        Film index n [-] at the same wavelengths.
    phase_rad : array_like
        φ = 4πnd/λ [rad] at the same wavelengths.
    substrate_index : float
        Substrate index s [-].

    Returns
    -------
    ndarray
        x, clipped to (0, 1] (NaN where T ≤ 0). Exact where the formula holds (k neglected
        in the coefficients); an error δφ in the phase gives δT/T ≈ (C·x/B)·δφ, small where
        the film absorbs (x ≪ 1) and largest in the transparent region, where α is below the
        noise anyway.

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983), eq. (1), solved for x.
    """
    t = np.asarray(transmittance, dtype=float)
    a, b, c, d = swanepoel_coefficients(refractive_index, substrate_index)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        p = a + t * c * np.cos(np.asarray(phase_rad, dtype=float))
        disc = np.maximum(p ** 2 - 4 * t ** 2 * b * d, 0.0)
        x = 2 * t * b / (p + np.sqrt(disc))
    return np.where(t > 0, np.clip(x, 1e-300, 1.0), np.nan)


def cauchy_index(wavelength_nm, a, b_nm2):
    """Cauchy dispersion n(λ) = a + b/λ².

    Parameters
    ----------
    wavelength_nm : array_like
        λ [nm].
    a : float
        Constant term [-].
    b_nm2 : float
        Dispersion term [nm²].

    References
    ----------
    A.-L. Cauchy, Mémoire sur la dispersion de la lumière (1836); common practice for
    transparent films.
    """
    return a + b_nm2 / np.asarray(wavelength_nm, dtype=float) ** 2


def fit_cauchy(wavelength_nm, refractive_index):
    """Least-squares fit of n(λ) = a + b/λ².

    Parameters
    ----------
    wavelength_nm, refractive_index : array_like
        At least two points [nm], [-].

    Returns
    -------
    (float, float)
        (a, b_nm2).
    """
    lam = np.asarray(wavelength_nm, dtype=float)
    n = np.asarray(refractive_index, dtype=float)
    if lam.size < 2:
        raise ValueError("a Cauchy fit needs at least two points")
    design = np.column_stack([np.ones_like(lam), lam ** -2.0])
    (a, b), *_ = np.linalg.lstsq(design, n, rcond=None)
    return float(a), float(b)


# ------------------------------------------------------------------------------------------
# Machinery: fringes in a measured spectrum
# ------------------------------------------------------------------------------------------


@dataclass
class FringeExtrema:
    """Interference extrema found in a spectrum (see :func:`detect_fringes`).

    Attributes
    ----------
    maxima_nm, minima_nm : ndarray
        Wavelengths of the maxima and minima [nm], descending (lowest order first).
    maxima_t, minima_t : ndarray
        Smoothed transmittance at them (fraction).
    noise_t : float
        Estimated standard deviation of the measured T per point (fraction).
    smoothing_points : int
        Savitzky–Golay window used (points on the internal grid uniform in 1/λ).
    maxima_fitted, minima_fitted : ndarray of bool
        Whether each extremum was placed by the one-period fit of 1/T (True) or by the
        parabola through the smoothed peak (False: near the edge, or few points).
    """

    maxima_nm: np.ndarray
    maxima_t: np.ndarray
    minima_nm: np.ndarray
    minima_t: np.ndarray
    noise_t: float
    smoothing_points: int
    maxima_fitted: np.ndarray | None = None
    minima_fitted: np.ndarray | None = None

    @property
    def count(self) -> int:
        return int(self.maxima_nm.size + self.minima_nm.size)

    def sequence(self):
        """All extrema by decreasing wavelength: (wavelength_nm, kind, t, fitted) arrays.

        ``kind`` is +1 for a maximum, −1 for a minimum.
        """
        lam = np.concatenate([self.maxima_nm, self.minima_nm])
        kind = np.concatenate([np.ones(self.maxima_nm.size), -np.ones(self.minima_nm.size)])
        t = np.concatenate([self.maxima_t, self.minima_t])
        fitted = np.concatenate([
            self.maxima_fitted if self.maxima_fitted is not None
            else np.zeros(self.maxima_nm.size, bool),
            self.minima_fitted if self.minima_fitted is not None
            else np.zeros(self.minima_nm.size, bool)])
        order = np.argsort(-lam)
        return lam[order], kind[order].astype(int), t[order], fitted[order]


def _prepare(wavelength_nm, values):
    """Finite points sorted by ascending wavelength, duplicate wavelengths averaged."""
    lam = np.asarray(wavelength_nm, dtype=float).ravel()
    y = np.asarray(values, dtype=float).ravel()
    if lam.shape != y.shape:
        raise ValueError("wavelength and values must have the same length")
    ok = np.isfinite(lam) & np.isfinite(y) & (lam > 0)
    lam, y = lam[ok], y[ok]
    step = np.diff(lam)
    if np.all(step > 0):            # as exports mostly come: no sorting, no duplicates
        return lam, y
    if np.all(step < 0):
        return lam[::-1].copy(), y[::-1].copy()
    uniq, inverse, counts = np.unique(lam, return_inverse=True, return_counts=True)
    if uniq.size != lam.size:
        y = np.bincount(inverse, weights=y) / counts
    else:
        y = y[np.argsort(lam)]
    return uniq, y


@functools.lru_cache(maxsize=64)
def _savgol_kernel(window, order):
    return savgol_coeffs(window, order)


def _savgol(y, window, order):
    """``scipy.signal.savgol_filter(y, window, order, mode="mirror")`` with the coefficients
    computed once per (window, order): the same convolution, without refitting the filter."""
    return convolve1d(np.asarray(y, float), _savgol_kernel(window, order), mode="mirror")


def _hat_centre(window, order):
    """Weight of the centre point of a Savitzky–Golay filter (its hat-matrix diagonal)."""
    return float(_savgol_kernel(window, order)[window // 2])


def _noise_sigma(t):
    """Per-point noise of T: MAD of residuals from a short Savitzky–Golay fit, rescaled.

    Var(y − ŷ) = σ²(1 − h0) for a linear smoother with centre weight h0; the MAD makes the
    estimate robust against the few points where a sharp feature is not followed.
    """
    if t.size < 15:
        return 0.0
    window, order = 7, 3
    resid = t - _savgol(t, window, order)
    mad = median(np.abs(resid - median(resid)))
    return float(1.4826 * mad / np.sqrt(1 - _hat_centre(window, order)))


def _odd(v, lo, hi):
    v = int(min(max(round(v), lo), hi))
    return v if v % 2 else v + 1 if v + 1 <= hi else v - 1


def _find_extrema(y, prominence, distance):
    """Indices and kinds of alternating extrema of y (maxima +1, minima −1), ascending index,
    and their prominences: the peaks of y and of −y that ``scipy.signal.find_peaks`` finds
    with this ``prominence`` and ``distance``; of two neighbours of one kind the more extreme
    one is kept (the first of two equal ones)."""
    y = np.asarray(y, float)
    kw = {"prominence": float(prominence), "distance": max(float(distance), 1.0)}
    imax, pmax = find_peaks(y, **kw)
    imin, pmin = find_peaks(-y, **kw)
    idx = np.concatenate((imax, imin))
    kind = np.concatenate((np.ones(imax.size, np.int64), -np.ones(imin.size, np.int64)))
    prom = np.concatenate((pmax["prominences"], pmin["prominences"]))
    order = np.argsort(idx, kind="stable")
    out_i, out_k, out_p = [], [], []
    for i, k, p in zip(idx[order].tolist(), kind[order].tolist(), prom[order].tolist()):
        if out_k and out_k[-1] == k:
            if k * y[i] > k * y[out_i[-1]]:
                out_i[-1], out_p[-1] = i, p
            continue
        out_i.append(i)
        out_k.append(k)
        out_p.append(p)
    return (np.array(out_i, np.int64), np.array(out_k, np.int64), np.array(out_p, float))


def _longest_regular_run(idx):
    """Slice of the longest run of extrema whose spacings stay regular (no fringe missing)."""
    if idx.size < 3:
        return slice(0, idx.size)
    gaps = np.diff(idx).astype(float)
    med = np.median(gaps)
    good = (gaps > 0.4 * med) & (gaps < 1.9 * med)
    best, start, best_slice = 0, 0, slice(0, 1)
    for i in range(gaps.size + 1):
        if i == gaps.size or not good[i]:
            if i + 1 - start > best:
                best, best_slice = i + 1 - start, slice(start, i + 1)
            start = i + 1
    return best_slice


def detect_fringes(wavelength_nm, transmittance, *, prominence_sigma=6.0, min_prominence=5e-4,
                   min_significance=5.0):
    """Find the interference maxima and minima of a transmittance spectrum, robustly in noise.

    The spectrum is resampled on a grid uniform in 1/λ, where fringes are nearly periodic;
    a light Savitzky–Golay smoothing gives a first set of extrema and the fringe period; a
    second smoothing over about a sixth of that period (which leaves the fringe amplitude
    intact to a few parts in a thousand) gives the extrema kept, each refined by a parabola
    through its three neighbouring points. An extremum counts only when its prominence
    exceeds ``prominence_sigma`` times the noise left after smoothing (and
    ``min_prominence``). Maxima and minima must alternate; the longest run with regular
    spacing is kept, so isolated wiggles in the absorbing region (where fringes vanish) or
    artefacts far from the fringe train drop out. Finally each extremum is refined by a fit
    of 1/T over one period (a sinusoid in Swanepoel's formula) and kept only when the fitted
    fringe amplitude is ``min_significance`` standard errors or more: noise alone does not
    pass this test, even where smoothing has made it wander.

    Parameters
    ----------
    wavelength_nm : array_like
        λ [nm], any order.
    transmittance : array_like
        T (fraction).
    prominence_sigma : float
        Prominence threshold in units of the smoothed noise.
    min_prominence : float
        Absolute prominence threshold (fraction of T) for noise-free data.
    min_significance : float
        Smallest accepted ratio of fitted fringe amplitude to its standard error.

    Returns
    -------
    FringeExtrema
        Possibly empty (no fringes).

    Notes
    -----
    The noise is estimated from the residuals of a 7-point cubic Savitzky–Golay fit (median
    absolute deviation), so it assumes at least ~10 points per fringe period over most of the
    spectrum.

    References
    ----------
    A. Savitzky and M. J. E. Golay, Anal. Chem. 36, 1627 (1964); extrema and envelopes as in
    R. Swanepoel, J. Phys. E 16, 1214 (1983).
    """
    lam, t = _prepare(wavelength_nm, transmittance)
    empty = FringeExtrema(np.array([]), np.array([]), np.array([]), np.array([]),
                          _noise_sigma(t) if t.size else 0.0, 0)
    if lam.size < 20:
        return empty
    sigma = max(empty.noise_t, 1e-6)
    nu = 1.0 / lam[::-1]                       # ascending wavenumber [1/nm]
    t_nu = np.ascontiguousarray(t[::-1])       # T in that order
    npts = lam.size
    grid = np.linspace(nu[0], nu[-1], npts)
    tg = np.interp(grid, nu, t_nu)

    # Pass 1: light smoothing, rough extrema, fringe period.
    w1 = _odd(npts / 300, 5, max(5, npts // 4))
    y1 = _savgol(tg, w1, 3 if w1 > 5 else 2)
    p1 = max(prominence_sigma * sigma * np.sqrt(_hat_centre(w1, 3 if w1 > 5 else 2)),
             min_prominence)
    idx, kind, prom = _find_extrema(y1, p1, 1)
    if idx.size == 0:
        return empty
    # The period from the prominent extrema only (noise in a dark, absorbing part of the
    # spectrum gives many small ones).
    strong = prom >= 0.2 * percentile(prom, 90)
    idx = idx[strong]
    if idx.size >= 3:
        half_period = median(np.diff(idx))
    elif idx.size == 2:
        half_period = float(idx[1] - idx[0])
    else:
        half_period = npts / 4.0

    # Pass 2: smoothing over ~1/6 of the period, alternating extrema, refined positions.
    w2 = _odd(2 * half_period / 6, 5, max(5, npts // 3))
    order2 = 3 if w2 > 5 else 2
    y2 = _savgol(tg, w2, order2)
    p2 = max(prominence_sigma * sigma * np.sqrt(_hat_centre(w2, order2)), min_prominence)
    idx, kind, _ = _find_extrema(y2, p2, max(1, int(0.5 * half_period)))
    margin = w2 // 2
    inside = (idx >= max(1, margin)) & (idx <= npts - 1 - max(1, margin))
    idx, kind = idx[inside], kind[inside]
    if idx.size == 0:
        return FringeExtrema(np.array([]), np.array([]), np.array([]), np.array([]),
                             empty.noise_t, w2)
    ym, y0, yp = y2[idx - 1], y2[idx], y2[idx + 1]
    curv = ym - 2 * y0 + yp
    with np.errstate(divide="ignore", invalid="ignore"):
        delta = np.where(curv != 0, 0.5 * (ym - yp) / curv, 0.0)
    delta = np.clip(delta, -0.5, 0.5)
    t_ext = y0 - 0.25 * (ym - yp) * delta
    nu_ext = grid[idx] + delta * (grid[1] - grid[0])
    nu_ext, t_ext, z, fitted = _refine_sinusoid(nu, t_nu, nu_ext, t_ext, kind, sigma)
    # Keep significant extrema, alternating, in the longest regular run.
    sig = z >= min_significance
    nu_ext, t_ext, kind, idx, fitted = nu_ext[sig], t_ext[sig], kind[sig], idx[sig], fitted[sig]
    if nu_ext.size <= 2:   # one or two survivors: each tested as a lone extremum
        lone = np.array([_refine_sinusoid(nu, t_nu, nu_ext[i:i + 1], t_ext[i:i + 1],
                                          kind[i:i + 1], sigma)[2][0] >= min_significance
                         for i in range(nu_ext.size)], dtype=bool)
        nu_ext, t_ext, kind, idx, fitted = (nu_ext[lone], t_ext[lone], kind[lone], idx[lone],
                                            fitted[lone])
    alt = np.ones(kind.size, dtype=bool)
    for i in range(1, kind.size):
        if kind[i] == kind[i - 1]:
            worse = i if kind[i] * t_ext[i] < kind[i] * t_ext[i - 1] else i - 1
            alt[worse] = False
    nu_ext, t_ext, kind, idx, fitted = (nu_ext[alt], t_ext[alt], kind[alt], idx[alt],
                                        fitted[alt])
    run = _longest_regular_run(idx)
    nu_ext, t_ext, kind, fitted = nu_ext[run], t_ext[run], kind[run], fitted[run]
    lam_ext = 1.0 / nu_ext
    is_max = kind > 0
    # Descending wavelength = ascending index order reversed.
    return FringeExtrema(lam_ext[is_max][::-1], t_ext[is_max][::-1],
                         lam_ext[~is_max][::-1], t_ext[~is_max][::-1], empty.noise_t, w2,
                         fitted[is_max][::-1], fitted[~is_max][::-1])


def _refine_sinusoid(nu, t, nu_ext, t_ext, kind, sigma_t):
    """Tangent points of the envelopes from a local fit of 1/T over one fringe period.

    In Swanepoel's formula 1/T = (B − C·x·cos φ + D·x²)/(A·x) is exactly sinusoidal in φ
    for slowly varying n and x, so around each extremum the raw points within ± half a
    period are fitted (linear least squares) with 1/T = c0 + c1·u + a·cos u + b·sin u,
    u = 2π(ν − ν_e)/P. The extremum of the sinusoidal part gives the wavenumber where
    cos φ = ±1 and the envelope value there, free of the sampling and smoothing errors of
    the peak itself and averaged over a whole period of points. Extrema whose fit is not
    trustworthy (few points, window beyond the data, residual above the noise plus 3 % of the
    amplitude, shift beyond an eighth of a period) keep the parabola values.

    Also returns, per extremum, the significance z = amplitude / standard error of the
    fitted sinusoid (with too few points for a fit: the extremum's distance from the median
    of its period in noise widths; for a lone extremum: the smaller of the two drops on
    either side in standard errors). Noise has z of order 1, fringes far more.
    """
    nu_out, t_out = nu_ext.copy(), t_ext.copy()
    z_out = np.full(nu_ext.size, np.inf)
    ok_out = np.zeros(nu_ext.size, dtype=bool)
    if nu_ext.size == 1:
        # A lone extremum: no period to fit. It counts only if T falls away (for a maximum;
        # rises for a minimum) significantly on *both* sides, a quarter of the range out:
        # the shoulder of an absorption edge, flat on one side, does not pass.
        half = 0.25 * (nu[-1] - nu[0])
        centre = np.abs(nu - nu_ext[0]) <= half / 8
        left = (nu >= nu_ext[0] - half) & (nu <= nu_ext[0] - half / 2)
        right = (nu >= nu_ext[0] + half / 2) & (nu <= nu_ext[0] + half)
        if min(centre.sum(), left.sum(), right.sum()) >= 3:
            sig = max(sigma_t, 1e-6)
            peak = t[centre].mean()
            z_out[0] = min(kind[0] * (peak - t[side].mean())
                           / (sig * np.sqrt(1 / centre.sum() + 1 / side.sum()))
                           for side in (left, right))
        else:
            z_out[0] = 0.0
        return nu_out, t_out, z_out, ok_out
    gaps = np.diff(nu_ext)
    # Window of each extremum: ± half a period (the sum of its two neighbouring gaps).
    half_window = 0.5 * (np.concatenate((gaps[:1], gaps)) + np.concatenate((gaps, gaps[-1:])))
    lo_idx = np.searchsorted(nu, nu_ext - half_window)
    hi_idx = np.searchsorted(nu, nu_ext + half_window, side="right")
    for i in range(nu_ext.size):
        left = gaps[i - 1] if i > 0 else gaps[i]
        right = gaps[i] if i < gaps.size else gaps[i - 1]
        period = left + right
        (used, c0, c1, a, b, s2, inv_aa, inv_bb, nu_first, nu_last, mean_t,
         solved) = sinusoid_fit(nu, t, lo_idx[i], hi_idx[i], nu_ext[i], period)
        if used < 8:
            # Too few points for the fit (dense fringes, coarse sampling): the extremum must
            # stand out from the median of its period by several noise widths instead.
            t_w = t[lo_idx[i]:hi_idx[i]]
            t_w = t_w[t_w > 0]
            z_out[i] = (kind[i] * (t_ext[i] - median(t_w))
                        / max(sigma_t, 1e-6) if t_w.size >= 3 else 0.0)
            continue
        if not solved:
            continue
        amp = math.hypot(a, b)
        se_amp = math.sqrt(max(0.5 * s2 * (inv_aa + inv_bb), 1e-300))
        z_out[i] = amp / se_amp
        theta = np.arctan2(b, a)            # 1/T maximal (T minimal) at u = theta
        u_star = theta if kind[i] < 0 else theta + np.pi
        u_star = (u_star + np.pi) % (2 * np.pi) - np.pi
        # Use the fit only when the window lies inside the data and the sinusoid describes
        # it (residual within noise plus 3 % of the amplitude; near the absorption edge the
        # envelope bends within one period and the fit is no better than the peak itself).
        covered = (nu_first - (nu_ext[i] - 0.5 * period) < 0.1 * period
                   and (nu_ext[i] + 0.5 * period) - nu_last < 0.1 * period)
        sigma_inv = sigma_t / mean_t ** 2
        fits = math.sqrt(s2) <= math.hypot(0.03 * amp, 1.5 * sigma_inv)
        if not (covered and fits) or abs(u_star) > np.pi / 4 or amp <= 0:
            continue
        inv = c0 + c1 * u_star + (amp if kind[i] < 0 else -amp)
        if inv <= 0:
            continue
        nu_out[i] = nu_ext[i] + u_star * period / (2 * np.pi)
        t_out[i] = 1.0 / inv
        ok_out[i] = True
    return nu_out, t_out, z_out, ok_out


def sinusoid_fit(nu, t, lo, hi, centre, period):
    """Least-squares fit of 1/T = c0 + c1·u + a·cos u + b·sin u, u = 2π(ν − centre)/period,
    to the points lo..hi−1 with T > 0 (``numpy.linalg.lstsq``).

    Returns (points used, c0, c1, a, b, residual variance s² over n − 4 degrees of freedom,
    the (a, a) and (b, b) elements of the inverse normal matrix, first and last ν used, mean
    T used, whether the normal matrix could be inverted). With fewer than 8 points only the
    count is meaningful.
    """
    nu_w, t_w = np.asarray(nu[lo:hi], float), np.asarray(t[lo:hi], float)
    keep = t_w > 0
    nu_w, t_w = nu_w[keep], t_w[keep]
    used = int(nu_w.size)
    if used < 8:
        first = float(nu_w[0]) if used else 0.0
        last = float(nu_w[-1]) if used else 0.0
        return used, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, first, last, 0.0, False
    u = 2.0 * np.pi * (nu_w - centre) / period
    design = np.column_stack([np.ones_like(u), u, np.cos(u), np.sin(u)])
    unsolved = (used, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, float(nu_w[0]), float(nu_w[-1]),
                float(t_w.mean()), False)
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        y = 1.0 / t_w                   # a reading of T = 1e-310 has no finite 1/T
        if not (np.isfinite(y).all() and np.isfinite(design).all()):
            return unsolved
        try:
            inv = np.linalg.inv(design.T @ design)
            coef = np.linalg.lstsq(design, y, rcond=None)[0]
        except np.linalg.LinAlgError:
            return unsolved
        resid = y - design @ coef
        s2 = float(resid @ resid) / max(used - 4, 1)
    if not (np.isfinite(coef).all() and np.isfinite(s2) and np.isfinite(inv).all()):
        return unsolved
    return (used, float(coef[0]), float(coef[1]), float(coef[2]), float(coef[3]), s2,
            float(inv[2, 2]), float(inv[3, 3]), float(nu_w[0]), float(nu_w[-1]),
            float(t_w.mean()), True)


def _envelope_interpolant(lam_nodes, t_nodes):
    """Callable T(λ) through the nodes: PCHIP of ln T against 1/λ, NaN outside the nodes."""
    lam_nodes = np.asarray(lam_nodes, dtype=float)
    t_nodes = np.asarray(t_nodes, dtype=float)
    ok = np.isfinite(t_nodes) & (t_nodes > 0)
    lam_nodes, t_nodes = lam_nodes[ok], t_nodes[ok]
    if lam_nodes.size < 2:
        return lambda lam: np.full(np.shape(lam), np.nan)
    nu = 1.0 / lam_nodes
    order = np.argsort(nu)
    nu, logt = nu[order], np.log(t_nodes[order])
    if nu.size == 2:
        def f(lam):
            v = 1.0 / np.asarray(lam, dtype=float)
            out = np.exp(np.interp(v, nu, logt))
            return np.where((v >= nu[0]) & (v <= nu[-1]), out, np.nan)
        return f
    pchip = PchipInterpolator(nu, logt, extrapolate=False)

    def g(lam):
        return np.exp(pchip(1.0 / np.asarray(lam, dtype=float)))
    return g


def envelopes(wavelength_nm, maxima_nm, maxima_t, minima_nm, minima_t):
    """Upper and lower envelopes on a wavelength grid, each through its own extrema.

    Each envelope is a monotone piecewise-cubic (PCHIP) interpolation of ln T against 1/λ
    through its extrema: logarithms follow the exponential fall of T towards the absorption
    edge, and PCHIP does not overshoot there.

    Parameters
    ----------
    wavelength_nm : array_like
        Grid on which to evaluate [nm].
    maxima_nm, maxima_t : array_like
        Maxima: wavelengths [nm] and T (fraction).
    minima_nm, minima_t : array_like
        Minima: wavelengths [nm] and T (fraction).

    Returns
    -------
    (ndarray, ndarray)
        (T_M, T_m) on the grid; NaN outside the range of each envelope's own extrema (and
        everywhere for an envelope with fewer than two extrema).

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983), section 3 (envelopes through the extrema).
    """
    lam = np.asarray(wavelength_nm, dtype=float)
    return (_envelope_interpolant(maxima_nm, maxima_t)(lam),
            _envelope_interpolant(minima_nm, minima_t)(lam))


@dataclass
class FringeAnalysis:
    """What the fringes of one transmittance spectrum tell (see :func:`analyse_fringes`).

    Attributes
    ----------
    thickness_nm : float or None
        Film thickness from the order-number refinement [nm]; None when the fringes do not
        allow a trustworthy value (see ``flags``).
    thickness_err_nm : float or None
        Standard error of that mean: the standard deviation of the per-extremum thicknesses
        d_i = m_i·λ_i/(2n_i) divided by √N. It measures the scatter from noise and envelope
        errors only: not a wedge, a wrong substrate index or model error; the envelopes of
        neighbouring extrema are correlated, so treat it as a lower bound.
    thickness_spread_nm : float or None
        Standard deviation of the per-extremum thicknesses [nm].
    cauchy : tuple of float or None
        (a, b_nm2) of n(λ) = a + b/λ² fitted to the refined indices.
    n_at : dict
        n at reference wavelengths inside (or just beyond) the range of the extrema used,
        e.g. ``{"500nm": 2.31, "800nm": 2.25}``.
    maxima_nm, minima_nm : list of float
        The extrema found, by decreasing wavelength.
    tm_upper, tm_lower : ndarray
        T_M and T_m on the input grid (input order), NaN outside their extrema.
    fringe_free_t : ndarray
        Transmittance without interference, on the input grid. With a thickness: the
        geometric mean √(T_M·T_m) of Swanepoel's envelopes evaluated at the α of
        ``alpha_per_cm`` (so it exists at every point, equals √(T_M·T_m) of the measured
        envelopes where the model holds, and tends to T where the fringes vanish). Without
        a thickness: √(T_M·T_m) of the measured envelopes where both exist, T elsewhere.
    alpha_per_cm : ndarray
        α [cm⁻¹] at every input point from Swanepoel's formula inverted point by point
        (:func:`absorbance_x_from_transmittance`) with the thickness and the dispersion
        ``dispersion``; free of fringes where the film absorbs; noise-dominated (and 0 where
        T is above the transparent value) where it does not. The recommended input for the
        Tauc and Urbach analysis. All NaN when no thickness was found.
    flags : list of Flag
        ``fringes-found`` (thickness given), or one of ``fringes-too-few``,
        ``fringes-low-contrast``, ``fringes-above-substrate``, ``fringes-order-ambiguous``,
        ``fringes-inconsistent``, ``fringes-index-below-substrate`` (no thickness; the
        message says why and what to do).
    method : str
        What was done, in words, with the source.
    extrema : list of dict
        Per extremum: wavelength_nm, kind, t_upper, t_lower, n_envelope, order, d_nm,
        n_refined, used.
    noise_t : float
        Estimated noise of the measured T per point (fraction).
    alpha_envelope_per_cm : ndarray or None
        Swanepoel's own α from the upper envelope (:func:`absorbance_x_from_upper_envelope`),
        NaN outside T_M; coarse near the edge, where T_M is interpolated between nodes half
        a fringe apart. None without a thickness.
    n_grid : ndarray or None
        The film index used for ``alpha_per_cm`` on the input grid.
    dispersion : tuple or None
        Its coefficients (c0, c1 [nm²], c2 [nm⁴]) of n = c0 + c1/λ² + c2/λ⁴ (two terms
        when fewer than four extrema were placed by the one-period fit).
    """

    thickness_nm: float | None
    thickness_err_nm: float | None
    thickness_spread_nm: float | None
    cauchy: tuple | None
    n_at: dict
    maxima_nm: list
    minima_nm: list
    tm_upper: np.ndarray
    tm_lower: np.ndarray
    fringe_free_t: np.ndarray
    alpha_per_cm: np.ndarray
    flags: list = field(default_factory=list)
    method: str = ""
    extrema: list = field(default_factory=list)
    noise_t: float = 0.0
    alpha_envelope_per_cm: np.ndarray | None = None
    n_grid: np.ndarray | None = None
    dispersion: tuple | None = None

    def n(self, wavelength_nm):
        """Film index from the Cauchy fit at ``wavelength_nm`` [nm] (NaN when none)."""
        if self.cauchy is None:
            return np.full(np.shape(wavelength_nm), np.nan)
        return cauchy_index(wavelength_nm, *self.cauchy)

    def to_film(self):
        """An :class:`edgefit.spectrum.Film` with ``thickness_source="fringes"``."""
        from .spectrum import Film
        extra = {"cauchy": (None if self.cauchy is None
                            else {"a": self.cauchy[0], "b_nm2": self.cauchy[1]}),
                 "thickness_spread_nm": self.thickness_spread_nm}
        return Film(thickness_nm=self.thickness_nm, thickness_err_nm=self.thickness_err_nm,
                    thickness_source="fringes" if self.thickness_nm is not None else "none",
                    n_at=dict(self.n_at), method=self.method,
                    extrema={"maxima_nm": list(self.maxima_nm),
                             "minima_nm": list(self.minima_nm)},
                    extra=extra)


def _extrema_words(count):
    return f"{count} interference extremum" if count == 1 else f"{count} interference extrema"


_REFERENCE_NM = (400.0, 500.0, 600.0, 800.0, 1000.0, 1200.0, 1550.0, 2000.0)


def _fit_dispersion(wavelength_nm, n, terms):
    """Least-squares coefficients of n = c0 + c1/λ² (+ c2/λ⁴) [nm², nm⁴]."""
    lam = np.asarray(wavelength_nm, dtype=float)
    design = np.column_stack([lam ** (-2.0 * k) for k in range(terms)])
    coef, *_ = np.linalg.lstsq(design, np.asarray(n, dtype=float), rcond=None)
    return tuple(float(c) for c in coef)


def _dispersion(wavelength_nm, coef):
    lam = np.asarray(wavelength_nm, dtype=float)
    return sum(c * lam ** (-2.0 * k) for k, c in enumerate(coef))


def _robust_keep(values, floor_rel):
    """Mask of values within 3.5 robust standard deviations (at least floor_rel) of the median."""
    med = np.median(values)
    mad = 1.4826 * np.median(np.abs(values - med))
    return np.abs(values - med) <= max(3.5 * mad, floor_rel * abs(med))


def analyse_fringes(wavelength_nm, transmittance, *, substrate_index=1.52, min_extrema=5,
                    reference_wavelengths_nm=_REFERENCE_NM, max_spread=0.05,
                    min_contrast_sigma=10.0, min_contrast=0.005, x_min=0.25):
    """Thickness and refractive index of a film on a substrate from its transmission fringes.

    Swanepoel's envelope method, step by step:

    1. extrema found robustly (:func:`detect_fringes`), envelopes T_M, T_m through them
       (:func:`envelopes`);
    2. at every extremum where both envelopes exist, n from :func:`index_from_envelopes`
       (weak/medium absorption formula; it reduces to the transparent one where T_M equals
       the bare-substrate value);
    3. a first thickness d1 from pairs of adjacent extrema of one kind
       (:func:`thickness_from_extrema`), outliers dropped (median ± 3.5 robust σ), and a
       coarse one from the fringe spacing with the mean index (insensitive to noise in n);
    4. order numbers: maxima lie at integer orders, minima at half-integer ones (n > s), and
       neighbours differ by 1/2, so one number m0 (the order of the longest-wavelength
       extremum) fixes them all. m0 is the allowed value (thickness within 0.5–1.3 times the
       spacing estimate, or near d1) that makes d_i = m_i·λ_i/(2n_i) most nearly constant
       over the weakly absorbing extrema: a wrong order leaves a trend of d_i with λ_i/n_i
       that noise does not. When the runner-up is less than twice as scattered, the orders
       are ambiguous and no thickness is given;
    5. d = mean of the d_i (outliers dropped), its standard error and spread; the refined
       indices n_i = m_i·λ_i/(2d) and a Cauchy fit n = a + b/λ² to them;
    6. α at every wavelength by inverting Swanepoel's formula point by point with the phase
       φ = 4πnd/λ now known (:func:`absorbance_x_from_transmittance`), the envelope α from
       T_M (:func:`absorbance_x_from_upper_envelope`) and the fringe-free T = √(T_M·T_m).

    Parameters
    ----------
    wavelength_nm : array_like
        λ [nm] (any order; duplicates averaged).
    transmittance : array_like
        T of the film on its substrate, as a fraction (0..1), same length. Not divided by the
        substrate: use :func:`substrate_corrected_transmittance` with ``substrate_index`` to
        bring a substrate-referenced spectrum back to this geometry.
    substrate_index : float
        Substrate index s [-] (1.52 for soda-lime glass, 1.46 for fused silica).
    min_extrema : int
        Fewest extrema for a thickness (below: ``fringes-too-few``, thickness None). Besides,
        at least three extrema must lie between both envelopes (so five in all): with two,
        any choice of interference orders can be made to look consistent.
    reference_wavelengths_nm : sequence of float
        Wavelengths at which to report n (only those near the range of the extrema used).
    max_spread : float
        Largest relative spread of the per-extremum thicknesses accepted (above:
        ``fringes-inconsistent``, thickness None).
    min_contrast_sigma, min_contrast : float
        Fringes whose median peak-to-valley amplitude T_M − T_m is below
        ``min_contrast_sigma`` × the smoothed noise, or below ``min_contrast`` (fraction),
        are of low contrast: ``fringes-low-contrast``, thickness None.
    x_min : float
        Extrema where x = exp(−αd) from T_M is below this (strong absorption) are not used
        for the thickness.

    Returns
    -------
    FringeAnalysis or None
        None when no extremum at all is found (no fringes). Otherwise the analysis, with
        ``thickness_nm`` None and a flag saying why when the fringes do not allow one.

    Raises
    ------
    EdgefitError
        (code ``bad-option``) for a substrate index outside 1.0–4.0; (code ``bad-input``)
        for transmittance that looks like percent (a tenth of the points or more above 1.5)
        or arrays of different lengths. NaN points are ignored (set points that cannot be
        trusted, e.g. where the substrate absorbs, to NaN).

    Notes
    -----
    Assumptions: film uniform and homogeneous, n > s, k neglected in the coefficients,
    thick non-absorbing substrate of the given index, normal incidence (Swanepoel 1983). The
    index near the absorption edge rises faster than a two-term Cauchy form; n_at is given
    only where the fit is supported.

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983).

    Examples
    --------
    >>> fa = analyse_fringes(wavelength_nm, t_fraction, substrate_index=1.52)
    >>> if fa is not None and fa.thickness_nm is not None:
    ...     print(fa.thickness_nm, fa.thickness_err_nm, fa.n_at)
    """
    s = float(substrate_index)
    if not np.isfinite(s) or not 1.0 < s < 4.0:
        raise EdgefitError(f"substrate index {substrate_index!r} is outside 1.0–4.0",
                           fix="give the substrate's refractive index, e.g. 1.52 for glass",
                           code="bad-option")
    lam_in = np.asarray(wavelength_nm, dtype=float).ravel()
    t_in = np.asarray(transmittance, dtype=float).ravel()
    if lam_in.shape != t_in.shape:
        raise EdgefitError("wavelength and transmittance arrays differ in length",
                           code="bad-input")
    finite = t_in[np.isfinite(t_in)]
    if finite.size and percentile(finite, 90) > 1.5:
        raise EdgefitError("transmittance mostly above 1.5: it looks like percent",
                           fix="divide by 100 (give T as a fraction)", code="bad-input")

    ext = detect_fringes(lam_in, t_in)
    if ext.count == 0:
        return None

    upper = _envelope_interpolant(ext.maxima_nm, ext.maxima_t)
    lower = _envelope_interpolant(ext.minima_nm, ext.minima_t)
    with np.errstate(invalid="ignore"):
        tm_up, tm_lo = upper(lam_in), lower(lam_in)
        both = np.isfinite(tm_up) & np.isfinite(tm_lo)
        fringe_free = np.where(both, np.sqrt(np.where(both, tm_up * tm_lo, 1.0)), t_in)

    flags: list[Flag] = []
    seq_lam, seq_kind, _, seq_fitted = ext.sequence()
    span = f"{seq_lam.min():.0f}–{seq_lam.max():.0f} nm"
    up_ext, lo_ext = upper(seq_lam), lower(seq_lam)
    rows = [{"wavelength_nm": float(wl), "kind": "max" if k > 0 else "min",
             "t_upper": float(tu), "t_lower": float(tl), "n_envelope": None,
             "order": None, "d_nm": None, "n_refined": None, "used": False}
            for wl, k, tu, tl in zip(seq_lam, seq_kind, up_ext, lo_ext)]
    nan_grid = np.full(lam_in.shape, np.nan)
    result = FringeAnalysis(None, None, None, None, {}, [float(v) for v in ext.maxima_nm],
                            [float(v) for v in ext.minima_nm], tm_up, tm_lo, fringe_free,
                            nan_grid, flags, "", rows, ext.noise_t)
    method = (f"Swanepoel envelope method ({_SWANEPOEL}); {ext.count} extrema {span}, "
              f"substrate index {s:g}")
    result.method = method

    ts = float(substrate_transmittance(s))
    n_env = index_from_envelopes(np.array([r["t_upper"] for r in rows]),
                                 np.array([r["t_lower"] for r in rows]), s)
    for r, n_i in zip(rows, n_env):
        r["n_envelope"] = None if not np.isfinite(n_i) else float(n_i)
    # Extrema where the film absorbs strongly (x = exp(−αd) below 0.25) are left out of the
    # thickness: there the weak-absorption formulas and the envelopes both fail (thin films
    # still show fringes above the gap).
    x_env_ext = absorbance_x_from_upper_envelope(up_ext, np.where(np.isfinite(n_env), n_env,
                                                                  2.0), s)
    valid = np.isfinite(n_env) & (x_env_ext > x_min)
    amplitude = np.array([r["t_upper"] - r["t_lower"] for r in rows])

    if ext.count < min_extrema or valid.sum() < 3:
        flags.append(Flag("fringes-too-few",
                          f"{_extrema_words(ext.count)} found ({span}), {int(valid.sum())} "
                          f"between both envelopes; at least {max(min_extrema, 5)} extrema, 3 "
                          "of them between both envelopes, are needed for a thickness: no "
                          "thickness from the fringes"))
        return result
    noise_s = ext.noise_t * np.sqrt(_hat_centre(ext.smoothing_points,
                                                3 if ext.smoothing_points > 5 else 2))
    amp_med = float(np.median(amplitude[valid]))
    if amp_med < max(min_contrast_sigma * noise_s, min_contrast):
        flags.append(Flag("fringes-low-contrast",
                          f"fringes of low contrast ({100 * amp_med:.2f} % peak to valley, "
                          f"noise {100 * ext.noise_t:.2f} % per point): no thickness from the "
                          "fringes; give the thickness if it is known"))
        return result
    top = np.nanmax(np.where(seq_kind > 0, [r["t_upper"] for r in rows], np.nan)) \
        if np.any(seq_kind > 0) else np.nan
    if np.isfinite(top) and top > ts + max(0.01, 5 * noise_s):
        implied = (float(substrate_index_from_transmittance(min(top, 0.999)))
                   if top < 1 else float("nan"))
        hint = f" (maxima at {top:.3f} imply s ≈ {implied:.2f})" if np.isfinite(implied) else ""
        flags.append(Flag("fringes-above-substrate",
                          f"transmittance maxima reach {top:.3f}, above the bare-substrate "
                          f"value {ts:.3f} for index {s:g}: the substrate index is too high"
                          f"{hint}, the spectrum is referenced to the substrate (multiply it "
                          "by the substrate's own transmittance), or the film index is below "
                          "the substrate's; no thickness from the fringes"))
        return result

    # Step 3: first thickness from adjacent extrema of one kind (or of opposite kinds).
    j = np.arange(seq_lam.size)
    pairs = [(a, a + 2, 1.0) for a in j[:-2] if valid[a] and valid[a + 2]]
    if not pairs:
        pairs = [(a, a + 1, 0.5) for a in j[:-1] if valid[a] and valid[a + 1]]
    pa, pb, pst = (np.array(v) for v in zip(*pairs)) if pairs else ([], [], [])
    d_pairs = np.atleast_1d(thickness_from_extrema(seq_lam[pa], n_env[pa], seq_lam[pb],
                                                   n_env[pb], pst)).astype(float)
    d_pairs = d_pairs[np.isfinite(d_pairs) & (d_pairs > 0)]
    if d_pairs.size == 0:
        flags.append(Flag("fringes-inconsistent",
                          f"the extrema ({span}) give no positive thickness: the film may not "
                          "be uniform or the substrate index is wrong; no thickness from the "
                          "fringes"))
        return result
    d1 = float(np.mean(d_pairs[_robust_keep(d_pairs, 0.02)]))
    # The pair formula divides by a small difference of indices; the fringe spacing with the
    # mean index, d ≈ Δm·λ1λ2/(2n̄(λ1 − λ2)), is far less sensitive (biased high by the ratio
    # of group to phase index, a few per cent): it sets the range searched for the orders.
    lam_v, n_v, j_v = seq_lam[valid], n_env[valid], j[valid]
    n_bar = float(np.median(n_v))
    steps = np.diff(seq_lam)
    d_sp = float(np.median(0.5 * seq_lam[:-1] * seq_lam[1:] / (2 * n_bar * -steps)))

    # Step 4: order numbers, one m0 for the whole train, chosen among all the values whose
    # thickness lies within 0.5–1.3 d_sp (or near d1) by the constancy of d_i (robust
    # spread, MAD from six extrema on: those near the edge scatter most); scored on the
    # weakly absorbing extrema (x > 0.7), where the envelope indices are best. When the
    # runner-up is not clearly worse (less than twice the spread), the orders are ambiguous:
    # no thickness.
    first_is_max = seq_kind[0] > 0
    lowest = 1.0 if first_is_max else 0.5
    x_v = x_env_ext[valid]
    score_set = x_v > 0.7 if np.sum(x_v > 0.7) >= 3 else np.ones(lam_v.size, bool)
    span_m = lam_v / (2 * n_v)               # d_i per unit of order
    lo_m0 = np.min(0.5 * d_sp / span_m - j_v / 2)
    hi_m0 = np.max(1.3 * d_sp / span_m - j_v / 2)
    m0_d1 = float(np.median(d1 / span_m - j_v / 2))
    cands = set(np.arange(np.floor(lo_m0), np.ceil(hi_m0) + 1)[:400])
    cands |= set(np.round(m0_d1) + np.arange(-2, 3))
    half = 0.0 if first_is_max else 0.5
    m0s = np.array(sorted(c + half for c in cands))
    m0s = m0s[m0s >= lowest]
    d_all = (m0s[:, None] + j_v[None, :] / 2) * span_m[None, :]   # candidates × extrema
    sub = d_all[:, score_set]
    med = np.median(sub, axis=1)
    if sub.shape[1] >= 6:
        spread_all = 1.4826 * np.median(np.abs(sub - med[:, None]), axis=1)
    else:
        spread_all = np.std(sub, axis=1, ddof=1)
    rank = np.argsort(spread_all / med, kind="stable")
    score, m0, d_i = float(spread_all[rank[0]] / med[rank[0]]), m0s[rank[0]], d_all[rank[0]]
    if rank.size > 1 and spread_all[rank[1]] / med[rank[1]] < 2.0 * score + 1e-4:
        alt_d = float(np.mean(d_all[rank[1]]))
        flags.append(Flag("fringes-order-ambiguous",
                          f"the interference orders are not fixed by these fringes ({span}): "
                          f"thicknesses {np.mean(d_i):.0f} nm and {alt_d:.0f} nm fit about "
                          "equally well (too few fringes, or too little of the spectrum "
                          "transparent); no thickness from the fringes: give the thickness"))
        return result
    keep = _robust_keep(d_i, 0.005)
    d2 = float(np.mean(d_i[keep]))
    spread = float(np.std(d_i[keep], ddof=1)) if keep.sum() > 1 else 0.0
    err = spread / np.sqrt(keep.sum())
    orders = m0 + j / 2
    n_ref = orders * seq_lam / (2 * d2)
    used_idx = j_v[keep]
    for k, row in enumerate(rows):
        row["order"] = float(orders[k])
        row["n_refined"] = float(n_ref[k])
    for k, dk, kept in zip(j_v, d_i, keep):
        rows[k]["d_nm"] = float(dk)
        rows[k]["used"] = bool(kept)
    if spread / d2 > max_spread:
        flags.append(Flag("fringes-inconsistent",
                          f"thicknesses from the {keep.sum()} extrema scatter by "
                          f"{100 * spread / d2:.1f} % (limit {100 * max_spread:.0f} %): the "
                          "film may be non-uniform or the substrate index wrong; no thickness "
                          "from the fringes"))
        return result
    if np.median(n_ref[used_idx]) <= s:
        flags.append(Flag("fringes-index-below-substrate",
                          f"the film index comes out at or below the substrate's ({s:g}); the "
                          "envelope formulas need n > s: no thickness from the fringes"))
        return result

    # Step 5: Cauchy dispersion through the refined indices.
    a, b = fit_cauchy(seq_lam[used_idx], n_ref[used_idx])
    lo, hi = seq_lam[used_idx].min(), seq_lam[used_idx].max()
    n_at = {f"{w:g}nm": round(float(cauchy_index(w, a, b)), 4)
            for w in reference_wavelengths_nm if 0.9 * lo <= w <= 1.25 * hi}
    if not n_at:
        mid = float(np.round(np.sqrt(lo * hi), -1))
        n_at = {f"{mid:g}nm": round(float(cauchy_index(mid, a, b)), 4)}

    # Step 6: α at every wavelength. With d and the orders known, the phase is known at
    # each extremum (φ = 2πm); a smooth dispersion n = c0 + c1/λ² + c2/λ⁴ through the
    # refined indices of the extrema placed by the one-period fit (c2 only with four or
    # more of them; it follows n rising towards the edge) gives n and φ everywhere, and
    # Swanepoel's formula is inverted point by point. This needs no envelope and leaves no
    # fringes in α where the film absorbs. The envelope estimate from T_M is kept too.
    nodes = seq_fitted if seq_fitted.sum() >= 3 else np.isin(j, used_idx)
    disp = _fit_dispersion(seq_lam[nodes], n_ref[nodes], 3 if nodes.sum() >= 4 else 2)
    n_grid = _dispersion(lam_in, disp)
    # Beyond the shortest node the polynomial is an extrapolation: keep it within 25 %.
    n_short = float(_dispersion(seq_lam[nodes].min(), disp))
    n_grid = np.clip(n_grid, 0.8 * min(n_ref[nodes].min(), n_short), 1.25 * n_short)
    phase = 4 * np.pi * n_grid * d2 / lam_in
    x = absorbance_x_from_transmittance(t_in, n_grid, phase, s)
    x_env = absorbance_x_from_upper_envelope(tm_up, n_grid, s)
    with np.errstate(divide="ignore", invalid="ignore"):
        result.alpha_per_cm = -np.log(x) / (d2 * 1e-7)
        result.alpha_envelope_per_cm = -np.log(x_env) / (d2 * 1e-7)
    t_hi, t_lo = swanepoel_envelopes(n_grid, x, s)
    result.fringe_free_t = np.where(np.isfinite(x), np.sqrt(t_hi * t_lo), t_in)
    result.n_grid = n_grid
    result.dispersion = disp

    result.thickness_nm = d2
    result.thickness_err_nm = float(err)
    result.thickness_spread_nm = spread
    result.cauchy = (a, b)
    result.n_at = n_at
    result.method = (method + f"; orders {orders[0]:g}–{orders[-1]:g} refined, "
                     f"{keep.sum()} extrema used; n = {a:.4f} + {b:.4g} nm²/λ² (Cauchy)")
    flags.append(Flag("fringes-found",
                      f"{_extrema_words(ext.count)} ({span}): thickness "
                      f"{d2:.0f} ± {err:.0f} nm from the order numbers "
                      f"(standard error of {keep.sum()} values; spread {spread:.0f} nm)"))
    return result


# ------------------------------------------------------------------------------------------
# Grid matching and substrate correction
# ------------------------------------------------------------------------------------------


def interpolate_onto(wavelength_nm_src, values, wavelength_nm_target, *, what, file=None):
    """Values measured on one wavelength grid, linearly interpolated onto another.

    Used to bring a reflectance or bare-substrate spectrum onto the film's transmittance
    grid. Source points are sorted and duplicate wavelengths averaged; no extrapolation.

    Parameters
    ----------
    wavelength_nm_src : array_like
        Source wavelengths [nm] (any order).
    values : array_like
        Source values (same length).
    wavelength_nm_target : array_like
        Target wavelengths [nm].
    what : str
        What the values are, for messages (``"reflectance"``, ``"bare substrate"``).
    file : str, optional
        Source file name, for messages.

    Returns
    -------
    (ndarray, list of Flag)
        The values on the target grid (NaN outside the source range) and flags: one
        ``partial-overlap`` flag when the ranges overlap only partly, else none.

    Raises
    ------
    EdgefitError
        Code ``no-overlap`` when the wavelength ranges do not overlap at all (or the source
        has fewer than two usable points).
    """
    src, val = _prepare(wavelength_nm_src, values)
    target = np.asarray(wavelength_nm_target, dtype=float)
    tfin = target[np.isfinite(target)]
    if src.size < 2 or tfin.size == 0 or src[-1] < tfin.min() or src[0] > tfin.max():
        src_txt = f"{src[0]:.0f}–{src[-1]:.0f} nm" if src.size else "no usable points"
        tgt_txt = f"{tfin.min():.0f}–{tfin.max():.0f} nm" if tfin.size else "no points"
        raise EdgefitError(f"the {what} spectrum covers {src_txt}, which does not overlap "
                           f"the spectrum it should match ({tgt_txt})", file=file,
                           fix=f"give a {what} file measured over the same wavelengths",
                           code="no-overlap")
    out = np.interp(target, src, val, left=np.nan, right=np.nan)
    out[~np.isfinite(target)] = np.nan
    flags = []
    inside = (tfin >= src[0]) & (tfin <= src[-1])
    if not inside.all():
        where = f" ({file})" if file else ""
        flags.append(Flag("partial-overlap",
                          f"the {what} spectrum{where} covers {src[0]:.0f}–{src[-1]:.0f} nm, "
                          f"only part of {tfin.min():.0f}–{tfin.max():.0f} nm: "
                          f"{int((~inside).sum())} points outside it are left out"))
    return out, flags


def substrate_corrected_transmittance(t_film_on_substrate, t_bare_substrate, *,
                                      substrate_index=None):
    """Divide a film-on-substrate transmittance by the bare substrate measured the same way.

    Parameters
    ----------
    t_film_on_substrate : array_like
        T of the film on its substrate (fraction).
    t_bare_substrate : array_like
        T of a bare piece of the same substrate (fraction), on the same grid (see
        :func:`interpolate_onto`).
    substrate_index : float, optional
        When given, the quotient is multiplied by T_s = 2s/(s² + 1), giving the transmittance
        the film would show on an ideal non-absorbing substrate of index s: the geometry that
        :func:`analyse_fringes` expects.

    Returns
    -------
    ndarray
        T_film/T_substrate (× T_s); NaN where the substrate transmits nothing.

    Notes
    -----
    The quotient cancels the substrate's own absorption and its back-face loss. It is not
    exact: the light reflected back into the substrate by the film differs from that of the
    bare face, so multiple reflections in an absorbing substrate cancel only to about
    R_back·(R_film − R_bare)·(1 − x_s²) (below 1 % for glass; checked against a
    transfer-matrix calculation in tests/test_films.py). Use :func:`substrate_edge_mask` to
    keep out the range where the substrate absorbs strongly.

    References
    ----------
    Common practice, no source; T_s from R. Swanepoel, J. Phys. E 16, 1214 (1983), eq. (3).
    """
    tf = np.asarray(t_film_on_substrate, dtype=float)
    tb = np.asarray(t_bare_substrate, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.where(tb > 0, tf / tb, np.nan)
    if substrate_index is not None:
        q = q * substrate_transmittance(float(substrate_index))
    return q


def substrate_edge_mask(t_bare_substrate, threshold=0.3):
    """Where the substrate's own absorption limits the usable range.

    Parameters
    ----------
    t_bare_substrate : array_like
        Bare-substrate transmittance (fraction).
    threshold : float
        Fraction of the substrate's own maximum transmittance below which the point is
        limited (default 0.3: dividing by a substrate that passes less than about a third of
        its usual light triples the noise, and below ~320 nm soda-lime glass passes almost
        nothing).

    Returns
    -------
    ndarray of bool
        True where the substrate limits the measurement (exclude or flag those points).
        NaN values count as limited.

    References
    ----------
    Common practice, no source.
    """
    tb = np.asarray(t_bare_substrate, dtype=float)
    top = np.nanmax(tb) if np.any(np.isfinite(tb)) else np.nan
    with np.errstate(invalid="ignore"):
        return ~(tb >= threshold * top)
