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
