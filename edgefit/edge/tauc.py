"""Formulas of the absorption edge: pure functions, arrays in, arrays out.

Notation: αhν = B·(hν − Eg)^r. r = 1/2 direct allowed, 3/2 direct forbidden, 2 indirect
allowed, 3 indirect forbidden. Outputs always name the transition, never a bare exponent.
"""
from __future__ import annotations

import numpy as np


#: r in αhν ∝ (hν − Eg)^r for each transition (Tauc, Grigorovici & Vancu, Phys. Status Solidi 15,
#: 627, 1966; Davis & Mott, Philos. Mag. 22, 903, 1970).
EXPONENT_R = {
    "direct-allowed": 0.5,
    "indirect-allowed": 2.0,
    "direct-forbidden": 1.5,
    "indirect-forbidden": 3.0,
}

#: The ordinate as printed on axes.
ORDINATE_LABEL = {
    "direct-allowed": "(αhν)²",
    "indirect-allowed": "(αhν)^(1/2)",
    "direct-forbidden": "(αhν)^(2/3)",
    "indirect-forbidden": "(αhν)^(1/3)",
    "cody": "(α/hν)^(1/2)",
}

#: Which kind of gap each transition gives.
KIND = {"direct-allowed": "direct", "direct-forbidden": "direct",
        "indirect-allowed": "indirect", "indirect-forbidden": "indirect"}


def tauc_ordinate(energy_ev, alpha, transition: str):
    """Tauc ordinate (α·hν)^(1/r) for ``transition``.

    Parameters
    ----------
    energy_ev : array_like
        Photon energy [eV].
    alpha : array_like
        Absorption coefficient [cm⁻¹] (or any quantity proportional to it).
    transition : str
        A key of :data:`EXPONENT_R`.

    Returns
    -------
    ndarray
        (αhν)^(1/r) [(cm⁻¹·eV)^(1/r)]; NaN where α ≤ 0.

    References
    ----------
    J. Tauc, R. Grigorovici and A. Vancu, Phys. Status Solidi 15, 627 (1966).
    """
    r = EXPONENT_R[transition]
    p = np.asarray(alpha, dtype=float) * np.asarray(energy_ev, dtype=float)
    with np.errstate(invalid="ignore"):
        return np.where(p > 0, np.abs(p) ** (1.0 / r), np.nan)


def cody_ordinate(energy_ev, alpha):
    """Cody ordinate (α/hν)^(1/2) (constant dipole matrix element).

    References
    ----------
    G. D. Cody, in Semiconductors and Semimetals 21B, 11 (1984).
    """
    p = np.asarray(alpha, dtype=float) / np.asarray(energy_ev, dtype=float)
    with np.errstate(invalid="ignore"):
        return np.where(p > 0, np.sqrt(np.abs(p)), np.nan)


def urbach_alpha(energy_ev, alpha0, e0_ev, eu_ev):
    """Urbach tail α = α0·exp[(E − E0)/Eu].

    Parameters
    ----------
    energy_ev : array_like
        Photon energy [eV].
    alpha0 : float
        α at E0 [same unit as α].
    e0_ev : float
        Reference energy E0 [eV].
    eu_ev : float
        Urbach energy Eu [eV].

    References
    ----------
    F. Urbach, Phys. Rev. 92, 1324 (1953).
    """
    return alpha0 * np.exp((np.asarray(energy_ev, dtype=float) - e0_ev) / eu_ev)


def joining_energy_ev(eg_ev, eu_ev, r):
    """Energy Et where the power law αhν = B(E − Eg)^r meets the Urbach tail smoothly.

    Matching the slope of ln α: r/(Et − Eg) − 1/Et = 1/Eu, whose positive root is
    Et = [Eg + (r−1)Eu + √((Eg + (r−1)Eu)² + 4·Eu·Eg)]/2 (≈ Eg + r·Eu for Eu ≪ Eg).
    """
    b = eg_ev + (r - 1.0) * eu_ev
    return 0.5 * (b + np.sqrt(b * b + 4.0 * eu_ev * eg_ev))


def edge_model_alpha(energy_ev, eg_ev, eu_ev, amplitude, r):
    """Continuous absorption edge: power law above Et joined to an Urbach tail below it.

    α(E) = B·(E − Eg)^r / E for E ≥ Et, and α(Et)·exp[(E − Et)/Eu] for E < Et, with value and
    slope of ln α continuous at Et (:func:`joining_energy_ev`).

    Parameters
    ----------
    energy_ev : array_like
        Photon energy [eV].
    eg_ev : float
        Gap Eg [eV].
    eu_ev : float
        Urbach energy [eV].
    amplitude : float
        B [cm⁻¹·eV^(1−r)].
    r : float
        Exponent (0.5 direct allowed, 2 indirect allowed, ...).

    References
    ----------
    Power law: Tauc et al. (1966), Davis & Mott (1970); tail: Urbach (1953). The smooth join is
    common practice, no single source.
    """
    e = np.asarray(energy_ev, dtype=float)
    et = joining_energy_ev(eg_ev, eu_ev, r)
    out = np.empty_like(e)
    up = e >= et
    eu_ = e[up]
    out[up] = amplitude * (eu_ - eg_ev) ** r / eu_
    at_et = amplitude * (et - eg_ev) ** r / et
    out[~up] = at_et * np.exp(np.maximum((e[~up] - et) / eu_ev, -700.0))
    return out
