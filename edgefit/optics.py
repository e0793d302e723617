"""From measured quantity to absorption coefficient: pure functions, arrays in, arrays out.

Photon energy from CODATA constants; α from transmittance, absorbance, transmittance with
reflectance (incoherent slab), Kubelka–Munk for diffuse reflectance; substrate formulas.
Units are carried in the parameter names.
"""
from __future__ import annotations

import numpy as np
from scipy import constants as _c

#: h·c in eV·nm from CODATA (scipy.constants): 1239.841984 eV·nm.
HC_EV_NM = _c.h * _c.c / _c.e * 1e9
#: Boltzmann constant in eV/K (CODATA).
K_B_EV = _c.k / _c.e


def energy_ev_from(x, unit: str):
    """Photon energy [eV] from wavelength, wavenumber or energy.

    Parameters
    ----------
    x : array_like
        Abscissa values.
    unit : {"nm", "um", "ev", "cm-1"}
        Their unit.

    Returns
    -------
    ndarray
        E = hc/λ [eV] (or E = hc·ν̃), with hc from CODATA via ``scipy.constants``.
    """
    x = np.asarray(x, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        if unit == "nm":
            return HC_EV_NM / x
        if unit == "um":
            return HC_EV_NM / (x * 1e3)
        if unit == "ev":
            return x.copy()
        if unit == "cm-1":
            return HC_EV_NM * x * 1e-7
    raise ValueError(f"unknown x unit {unit!r}")


def wavelength_nm_from_energy(energy_ev):
    """Wavelength [nm] of photons of energy ``energy_ev`` [eV]: λ = hc/E."""
    return HC_EV_NM / np.asarray(energy_ev, dtype=float)


def alpha_from_transmittance(transmittance, thickness_nm=None):
    """Absorption coefficient from transmittance alone, α = −ln(T)/d (reflection ignored).

    Parameters
    ----------
    transmittance : array_like
        T as a fraction (0..1).
    thickness_nm : float, optional
        Film thickness [nm]. Without it the result is α·d (dimensionless, relative α).

    Returns
    -------
    ndarray
        α [cm⁻¹], or α·d when no thickness is given. Non-positive T gives NaN.

    References
    ----------
    Beer–Lambert law; J. I. Pankove, Optical Processes in Semiconductors (1971), ch. 4.
    """
    t = np.asarray(transmittance, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ad = np.where(t > 0, -np.log(t), np.nan)
    return ad if thickness_nm is None else ad / (thickness_nm * 1e-7)


def alpha_from_absorbance(absorbance, thickness_nm=None):
    """Absorption coefficient from decadic absorbance, α = ln(10)·A/d.

    Parameters
    ----------
    absorbance : array_like
        Decadic absorbance A = −log10(T).
    thickness_nm : float, optional
        Thickness [nm]; without it the result is α·d.
    """
    ad = np.log(10.0) * np.asarray(absorbance, dtype=float)
    return ad if thickness_nm is None else ad / (thickness_nm * 1e-7)


def slab_transmittance(alpha_per_cm, reflectance, thickness_nm):
    """T of an absorbing slab with incoherent multiple reflections, T = (1−R)²x/(1−R²x²).

    Parameters
    ----------
    alpha_per_cm : array_like
        Absorption coefficient [cm⁻¹].
    reflectance : array_like
        Single-surface reflectance R (fraction).
    thickness_nm : float
        Thickness [nm].

    References
    ----------
    J. I. Pankove, Optical Processes in Semiconductors (1971), ch. 4; D. K. Schroder,
    Semiconductor Material and Device Characterization (2006), ch. 10.
    """
    r = np.asarray(reflectance, dtype=float)
    x = np.exp(-np.asarray(alpha_per_cm, dtype=float) * thickness_nm * 1e-7)
    return (1 - r) ** 2 * x / (1 - r ** 2 * x ** 2)


def alpha_from_tr_exact(transmittance, reflectance, thickness_nm=None):
    """Exact inversion of the incoherent-slab formula for α from T and R.

    α = (1/d)·ln{[(1−R)² + √((1−R)⁴ + 4R²T²)] / (2T)}

    Parameters
    ----------
    transmittance, reflectance : array_like
        T and R as fractions, measured on the same spot.
    thickness_nm : float, optional
        Thickness [nm]; without it the result is α·d.

    References
    ----------
    J. I. Pankove, Optical Processes in Semiconductors (1971); D. K. Schroder, Semiconductor
    Material and Device Characterization (2006).
    """
    t = np.asarray(transmittance, dtype=float)
    r = np.asarray(reflectance, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ad = np.log(((1 - r) ** 2 + np.sqrt((1 - r) ** 4 + 4 * r ** 2 * t ** 2)) / (2 * t))
        ad = np.where((t > 0) & (r >= 0) & (r < 1), ad, np.nan)
    return ad if thickness_nm is None else ad / (thickness_nm * 1e-7)


def alpha_from_tr_simple(transmittance, reflectance, thickness_nm=None):
    """Single-pass form α ≈ (1/d)·ln[(1−R)²/T], valid where αd ≫ 1."""
    t = np.asarray(transmittance, dtype=float)
    r = np.asarray(reflectance, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ad = np.where((t > 0) & (r < 1), np.log((1 - r) ** 2 / t), np.nan)
    return ad if thickness_nm is None else ad / (thickness_nm * 1e-7)


def alpha_from_tr_hishikawa(transmittance, reflectance, thickness_nm=None):
    """Fringe-cancelling form α ≈ (1/d)·ln[(1−R)/T].

    References
    ----------
    Y. Hishikawa et al., Jpn. J. Appl. Phys. 30, 1008 (1991).
    """
    t = np.asarray(transmittance, dtype=float)
    r = np.asarray(reflectance, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ad = np.where((t > 0) & (r < 1), np.log((1 - r) / t), np.nan)
    return ad if thickness_nm is None else ad / (thickness_nm * 1e-7)


def kubelka_munk(reflectance):
    """Kubelka–Munk remission function F(R∞) = (1−R∞)²/(2R∞) = K/S.

    Parameters
    ----------
    reflectance : array_like
        Absolute diffuse reflectance R∞ of an optically thick sample, as a fraction.

    References
    ----------
    P. Kubelka and F. Munk, Z. Tech. Phys. 12, 593 (1931); caveats: M. L. Myrick et al.,
    Appl. Spectrosc. Rev. 46, 140 (2011).
    """
    r = np.asarray(reflectance, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(r > 0, (1 - r) ** 2 / (2 * r), np.nan)


def kubelka_munk_inverse(f_km):
    """R∞ = 1 + F − √(F² + 2F), the inverse of :func:`kubelka_munk`."""
    f = np.asarray(f_km, dtype=float)
    return 1 + f - np.sqrt(f ** 2 + 2 * f)


def substrate_transmittance(substrate_index):
    """Transmittance of a thick transparent substrate in air, T_s = 2s/(s²+1).

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983), eq. (3).
    """
    s = np.asarray(substrate_index, dtype=float)
    return 2 * s / (s ** 2 + 1)


def substrate_index_from_transmittance(substrate_transmittance_fraction):
    """Substrate index from its own transmittance, s = 1/T_s + √(1/T_s² − 1).

    References
    ----------
    R. Swanepoel, J. Phys. E 16, 1214 (1983), eq. (4).
    """
    ts = np.asarray(substrate_transmittance_fraction, dtype=float)
    return 1 / ts + np.sqrt(1 / ts ** 2 - 1)


def alpha_from_tr_total(transmittance, reflectance_total, thickness_nm=None, *,
                        iterations=60):
    """α from T and the *measured* reflectance of an incoherent slab (both faces).

    A spectrophotometer measures the slab's total reflectance R_t = R·(1 + T·x), not the
    single-face R that :func:`alpha_from_tr_exact` needs (Look & Leach 2016). With u = T·x
    the two relations T = (1−R)²x/(1−R²x²) and R_t = R(1 + u) give
    g(u) = (1 + u − R_t)²·u + R_t²·u² − T²(1 + u)² = 0, whose root in (0, T] is found by
    bisection (vectorised; ``iterations`` halvings give ~T·2⁻⁶⁰). Then R = R_t/(1 + u) and
    α = −ln(u/T)/d.

    Parameters
    ----------
    transmittance : array_like
        T (fraction).
    reflectance_total : array_like
        Measured reflectance of the slab, both faces and multiple reflections (fraction).
    thickness_nm : float, optional
        Thickness [nm]; without it the result is α·d.
    iterations : int
        Bisection steps.

    Returns
    -------
    ndarray
        α [cm⁻¹] (or α·d); NaN where T ≤ 0, R_t outside [0, 1) or no root (T and R_t
        inconsistent with a homogeneous slab, e.g. T + R_t > 1).

    References
    ----------
    D. C. Look and J. H. Leach, J. Vac. Sci. Technol. B 34, 04J105 (2016); J. I. Pankove,
    Optical Processes in Semiconductors (1971), ch. 4.
    """
    t = np.asarray(transmittance, dtype=float)
    rt = np.asarray(reflectance_total, dtype=float)
    t, rt = np.broadcast_arrays(t, rt)
    ok = (t > 0) & (rt >= 0) & (rt < 1) & (t + rt <= 1)

    def g(u):
        return (1 + u - rt) ** 2 * u + rt ** 2 * u ** 2 - t ** 2 * (1 + u) ** 2

    lo = np.zeros_like(t)
    hi = np.where(ok, t, 0.0)
    ok &= g(hi) >= -1e-12 * np.maximum(t, 1e-300) ** 2   # g(T) = 0 exactly at α = 0
    for _ in range(int(iterations)):
        mid = 0.5 * (lo + hi)
        neg = g(mid) < 0
        lo = np.where(neg, mid, lo)
        hi = np.where(neg, hi, mid)
    u = 0.5 * (lo + hi)
    with np.errstate(divide="ignore", invalid="ignore"):
        ad = np.where(ok & (u > 0), np.maximum(-np.log(u / np.where(t > 0, t, 1.0)), 0.0),
                      np.nan)
    return ad if thickness_nm is None else ad / (thickness_nm * 1e-7)
