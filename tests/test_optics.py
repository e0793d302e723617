"""edgefit.optics against an independent transfer-matrix code and published formulas.

The reference library is the PyPI package ``tmm`` (S. J. Byrnes, "Multilayer optical
calculations", arXiv:1603.02720): its incoherent mode gives T and R of a thick slab in air with
all multiple reflections, which is what the slab formulas of Pankove / Schroder describe.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy import constants

from edgefit import optics

tmm = pytest.importorskip("tmm")


def tmm_slab(n, k, thickness_nm, wavelength_nm):
    """T and total R of a free-standing incoherent slab in air (tmm, s-pol, normal incidence)."""
    r = tmm.inc_tmm("s", [1, complex(n, k), 1], [np.inf, thickness_nm, np.inf],
                    ["i", "i", "i"], 0, wavelength_nm)
    return r["T"], r["R"]


def fresnel_r(n, k):
    """Single-face normal-incidence reflectance |(ñ−1)/(ñ+1)|² (Born & Wolf; common practice)."""
    m = complex(n, k)
    return abs((m - 1) / (m + 1)) ** 2


# ------------------------------------------------------------------------------------------
# Constants
# ------------------------------------------------------------------------------------------

def test_hc_from_codata():
    # CODATA via scipy.constants; 1239.841984 eV·nm is hc in eV·nm (CODATA 2018).
    assert optics.HC_EV_NM == pytest.approx(constants.h * constants.c / constants.e * 1e9,
                                            rel=1e-15)
    assert optics.HC_EV_NM == pytest.approx(1239.841984, abs=1e-6)
    assert optics.energy_ev_from([500.0], "nm")[0] == pytest.approx(2.479683968, rel=1e-9)
    assert optics.energy_ev_from([8065.544], "cm-1")[0] == pytest.approx(1.0, rel=1e-6)


# ------------------------------------------------------------------------------------------
# Incoherent slab: T and R → α, against tmm
# ------------------------------------------------------------------------------------------

SLAB_N, SLAB_D_NM, SLAB_LAM_NM = 3.0, 2000.0, 600.0
# αd from 0.002 to 8: the whole useful range.
SLAB_K = [1e-5, 1e-4, 1e-3, 1e-2, 0.05, 0.1, 0.19]


@pytest.mark.parametrize("k", SLAB_K)
def test_slab_transmittance_matches_tmm(k):
    # Reference: tmm incoherent slab. The formula T = (1−R)²x/(1−R²x²) with the Fresnel R of
    # the complex index takes the flux entering the slab as 1 − R; tmm keeps the Poynting
    # factor of an absorbing medium, which differs by (k/n)² (measured: −(k/n)² to 0.5 %).
    t_ref, _ = tmm_slab(SLAB_N, k, SLAB_D_NM, SLAB_LAM_NM)
    alpha = 4 * np.pi * k / (SLAB_LAM_NM * 1e-7)
    t = optics.slab_transmittance(alpha, fresnel_r(SLAB_N, k), SLAB_D_NM)
    assert t == pytest.approx(t_ref, rel=1.05 * (k / SLAB_N) ** 2 + 1e-10)


@pytest.mark.parametrize("k", SLAB_K)
def test_alpha_from_tr_exact_returns_alpha_given_single_face_r(k):
    # Reference: tmm incoherent slab; α = 4πk/λ is what was put in. With the single-face R
    # the inversion is exact; the (k/n)² flux factor above shifts αd by about (k/n)², i.e.
    # α by < 6e-4 relative at k = 0.19: tolerance 1e-3.
    t_ref, _ = tmm_slab(SLAB_N, k, SLAB_D_NM, SLAB_LAM_NM)
    alpha = 4 * np.pi * k / (SLAB_LAM_NM * 1e-7)
    got = optics.alpha_from_tr_exact(t_ref, fresnel_r(SLAB_N, k), SLAB_D_NM)
    assert got == pytest.approx(alpha, rel=1e-3)


@pytest.mark.parametrize("k", SLAB_K)
def test_alpha_from_tr_total_returns_alpha_given_measured_r(k):
    # Reference: tmm incoherent slab, its *total* R (both faces), as a spectrophotometer
    # measures it. alpha_from_tr_total solves R_t = R(1 + T·x) (Look & Leach 2016) with the
    # slab formula: α back to 1e-3 relative at every αd (the (k/n)² flux factor above).
    t_ref, r_total = tmm_slab(SLAB_N, k, SLAB_D_NM, SLAB_LAM_NM)
    alpha = 4 * np.pi * k / (SLAB_LAM_NM * 1e-7)
    got = optics.alpha_from_tr_total(t_ref, r_total, SLAB_D_NM)
    assert got == pytest.approx(alpha, rel=1e-3)


def test_measured_r_in_exact_formula_only_good_when_thick():
    # Reference: tmm. Feeding the total (measured) R to the single-face formula is wrong
    # where the back face still reflects light (αd ≲ 2): α even comes out negative there;
    # for αd > 3 the two R agree and so does α (to 1 %). This is why
    # alpha_from_tr_total exists.
    k_low, k_high = 1e-3, 0.1      # αd = 0.04 and 4.2
    t, r = tmm_slab(SLAB_N, k_low, SLAB_D_NM, SLAB_LAM_NM)
    assert optics.alpha_from_tr_exact(t, r, SLAB_D_NM) < 0
    t, r = tmm_slab(SLAB_N, k_high, SLAB_D_NM, SLAB_LAM_NM)
    alpha = 4 * np.pi * k_high / (SLAB_LAM_NM * 1e-7)
    assert optics.alpha_from_tr_exact(t, r, SLAB_D_NM) == pytest.approx(alpha, rel=0.01)


def test_measured_r_identity_look_leach():
    # Look & Leach (2016), from memory: measured R_t = R(1 + T·x). Checked against tmm.
    for k in (1e-4, 1e-2, 0.1):
        t, r_total = tmm_slab(SLAB_N, k, SLAB_D_NM, SLAB_LAM_NM)
        x = np.exp(-4 * np.pi * k / SLAB_LAM_NM * SLAB_D_NM)
        assert r_total == pytest.approx(fresnel_r(SLAB_N, k) * (1 + t * x), rel=1e-4)


def test_alpha_from_tr_total_edge_values():
    # Synthetic: lossless slab (T + R = 1) gives α = 0; inconsistent data (T + R > 1, T = 0,
    # R ≥ 1) give NaN rather than a number.
    t, r = tmm_slab(SLAB_N, 0.0, SLAB_D_NM, SLAB_LAM_NM)
    assert optics.alpha_from_tr_total(t, r, SLAB_D_NM) == 0.0
    got = optics.alpha_from_tr_total([0.6, 0.0, 0.3], [0.6, 0.3, 1.0])
    assert np.isnan(got).all()


def test_simple_form_close_to_exact_when_thick():
    # Reference: tmm slab at αd = 4.2 (k = 0.1): the single-pass form ln[(1−R)²/T]/d with
    # the single-face R misses only the R²x² term: within 0.1 %.
    k = 0.1
    t, _ = tmm_slab(SLAB_N, k, SLAB_D_NM, SLAB_LAM_NM)
    alpha = 4 * np.pi * k / (SLAB_LAM_NM * 1e-7)
    got = optics.alpha_from_tr_simple(t, fresnel_r(SLAB_N, k), SLAB_D_NM)
    assert got == pytest.approx(alpha, rel=1e-3)


def test_hishikawa_form_cancels_fringes_of_lossless_film():
    # Reference: tmm, coherent 1 µm film (n = 2.3, k = 0) on thick glass (s = 1.52). Where
    # nothing is absorbed T + R = 1, so ln[(1−R)/T] vanishes at every wavelength although T
    # itself swings by ~25 % with the fringes (Hishikawa et al. 1991: the form cancels
    # fringes). −ln T does not.
    lam = np.linspace(800, 1200, 41)
    t = np.empty_like(lam)
    r = np.empty_like(lam)
    for i, wl in enumerate(lam):
        out = tmm.inc_tmm("s", [1, 2.3, 1.52, 1], [np.inf, 1000, 1e6, np.inf],
                          ["i", "c", "i", "i"], 0, wl)
        t[i], r[i] = out["T"], out["R"]
    assert np.ptp(t) > 0.2
    assert np.max(np.abs(optics.alpha_from_tr_hishikawa(t, r))) < 1e-9
    assert np.ptp(optics.alpha_from_transmittance(t)) > 0.2


def test_beer_lambert_round_trip():
    # Synthetic: T = exp(−αd) and A = αd/ln 10 give α back.
    alpha = np.array([10.0, 1e3, 1e5])
    d = 500.0
    t = np.exp(-alpha * d * 1e-7)
    assert optics.alpha_from_transmittance(t, d) == pytest.approx(alpha, rel=1e-12)
    a = alpha * d * 1e-7 / np.log(10)
    assert optics.alpha_from_absorbance(a, d) == pytest.approx(alpha, rel=1e-12)
    assert optics.alpha_from_transmittance(t) == pytest.approx(alpha * d * 1e-7, rel=1e-12)
    assert np.isnan(optics.alpha_from_transmittance([0.0, -0.1])).all()


# ------------------------------------------------------------------------------------------
# Kubelka–Munk
# ------------------------------------------------------------------------------------------

def test_kubelka_munk_worked_value():
    # Kubelka & Munk (1931): F = (1−R)²/(2R); R∞ = 0.5 → F = 0.25 (common arithmetic);
    # R∞ = 0.2 → F = 0.64/0.4 = 1.6.
    assert optics.kubelka_munk(0.5) == pytest.approx(0.25, abs=1e-15)
    assert optics.kubelka_munk(0.2) == pytest.approx(1.6, abs=1e-15)
    assert optics.kubelka_munk(1.0) == 0.0
    assert np.isnan(optics.kubelka_munk(0.0))


def test_kubelka_munk_round_trip_and_monotone():
    # Synthetic: the inverse R = 1 + F − √(F² + 2F) undoes F over five decades of R; F falls
    # as R rises (more reflection, less absorption).
    r = np.logspace(-4, np.log10(0.999), 200)
    f = optics.kubelka_munk(r)
    assert np.all(np.diff(f) < 0)
    assert optics.kubelka_munk_inverse(f) == pytest.approx(r, rel=1e-9)
    assert optics.kubelka_munk_inverse(0.25) == pytest.approx(0.5, abs=1e-15)


# ------------------------------------------------------------------------------------------
# Substrate formulas
# ------------------------------------------------------------------------------------------

def test_substrate_transmittance_worked_value():
    # Swanepoel (1983) eq. (3): T_s = 2s/(s²+1); s = 1.5 → 3/3.25 = 0.923 (common arithmetic).
    assert optics.substrate_transmittance(1.5) == pytest.approx(0.923077, abs=1e-6)
    assert optics.substrate_index_from_transmittance(3 / 3.25) == pytest.approx(1.5, abs=1e-12)


@pytest.mark.parametrize("s", [1.46, 1.52, 1.75, 2.0])
def test_substrate_transmittance_matches_tmm(s):
    # Reference: tmm, a thick non-absorbing slab of index s in air (incoherent):
    # T = (1−R)²/(1−R²) = 2s/(s²+1) exactly; and the inverse gives s back.
    t, _ = tmm_slab(s, 0.0, 1e6, 550.0)
    assert optics.substrate_transmittance(s) == pytest.approx(t, rel=1e-12)
    assert optics.substrate_index_from_transmittance(t) == pytest.approx(s, rel=1e-9)
