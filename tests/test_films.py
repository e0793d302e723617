"""edgefit.films: Swanepoel's envelope method against tmm, the paper's model film, edge cases.

Independent reference: the PyPI package ``tmm`` (transfer-matrix method, S. J. Byrnes,
arXiv:1603.02720). ``tmm.inc_tmm`` with coherency list ['i', 'c', 'i', 'i'] computes air /
film (coherent) / thick glass (incoherent) / air, s-polarised at normal incidence, keeping k
everywhere: the truth the envelope method must recover. Films are defined here (synthetic):
n(λ) of Cauchy form, k from a direct absorption edge with an Urbach tail.
"""
from __future__ import annotations

import functools

import numpy as np
import pytest

from edgefit import films, optics
from edgefit.errors import EdgefitError

tmm = pytest.importorskip("tmm")

HC = optics.HC_EV_NM
SUBSTRATE = 1.52


def edge_alpha_per_cm(energy_ev, eg_ev, eu_ev, b=1.5e5):
    """Synthetic direct edge αE = b√(E − Eg), joined (value and slope of ln α) to an Urbach
    tail of energy eu_ev below the joining energy Et, r/(Et − Eg) − 1/Et = 1/Eu."""
    e = np.asarray(energy_ev, dtype=float)
    lo, hi = eg_ev + 1e-9, eg_ev + 5.0
    for _ in range(200):   # bisection for Et
        mid = 0.5 * (lo + hi)
        if 0.5 / (mid - eg_ev) - 1 / mid - 1 / eu_ev > 0:
            lo = mid
        else:
            hi = mid
    et = 0.5 * (lo + hi)
    a_t = b * np.sqrt(et - eg_ev) / et
    above = b * np.sqrt(np.clip(e - eg_ev, 0, None)) / np.maximum(e, 1e-9)
    return np.where(e > et, above, a_t * np.exp((e - et) / eu_ev))


def tmm_film_on_glass(wavelength_nm, n, k, thickness_nm, substrate_index=SUBSTRATE,
                      substrate_k=None):
    """T and R of air / film / 1 mm substrate / air from tmm (s-pol, normal incidence)."""
    lam = np.asarray(wavelength_nm, dtype=float)
    n = np.broadcast_to(n, lam.shape)
    k = np.broadcast_to(k, lam.shape)
    ks = np.zeros_like(lam) if substrate_k is None else np.broadcast_to(substrate_k, lam.shape)
    t = np.empty_like(lam)
    r = np.empty_like(lam)
    for i, wl in enumerate(lam):
        out = tmm.inc_tmm("s", [1, complex(n[i], k[i]), complex(substrate_index, ks[i]), 1],
                          [np.inf, thickness_nm, 1e6, np.inf], ["i", "c", "i", "i"], 0, wl)
        t[i], r[i] = out["T"], out["R"]
    return t, r


def tmm_bare_substrate(wavelength_nm, substrate_index=SUBSTRATE, substrate_k=None):
    lam = np.asarray(wavelength_nm, dtype=float)
    ks = np.zeros_like(lam) if substrate_k is None else np.broadcast_to(substrate_k, lam.shape)
    return np.array([tmm.inc_tmm("s", [1, complex(substrate_index, ks[i]), 1],
                                 [np.inf, 1e6, np.inf], ["i", "i", "i"], 0, wl)["T"]
                     for i, wl in enumerate(lam)])


# The test grid: 350–2000 nm in 1.5 nm steps (a UV-Vis-NIR scan), edge at 3.3 eV (376 nm),
# Urbach energy 50 meV, so the films are transparent over most of the range.
GRID_NM = np.arange(350.0, 2000.1, 1.5)
EG_EV, EU_EV = 3.3, 0.05
CAUCHY = {"n1.9": (1.9, 1.5e4), "n2.25": (2.25, 2.5e4), "n2.6": (2.6, 3.5e4)}


@functools.lru_cache(maxsize=None)
def grid_film(thickness_nm, index_key):
    a, b = CAUCHY[index_key]
    n = a + b / GRID_NM ** 2
    alpha = edge_alpha_per_cm(HC / GRID_NM, EG_EV, EU_EV)
    k = alpha * GRID_NM * 1e-7 / (4 * np.pi)
    t, _ = tmm_film_on_glass(GRID_NM, n, k, thickness_nm)
    t.setflags(write=False)
    return t


# ------------------------------------------------------------------------------------------
# Formulas
# ------------------------------------------------------------------------------------------

def test_swanepoel_formula_equals_tmm_without_absorption():
    # Reference: tmm. For k = 0 Swanepoel's eq. (1) is exact for a film on a thick incoherent
    # substrate: agreement to 1e-12 (measured ~1e-15).
    lam = np.linspace(400, 1200, 60)
    n = 2.3 + 2e4 / lam ** 2
    t_ref, _ = tmm_film_on_glass(lam, n, 0.0, 800.0)
    t = films.swanepoel_transmittance(lam, n, 800.0, 0.0, SUBSTRATE)
    assert np.max(np.abs(t - t_ref)) < 1e-12


def swanepoel_model_film(lam):
    # Swanepoel (J. Phys. E 16, 1214, 1983) model film, from memory: s = 1.51, d = 1000 nm,
    # n = 2.6 + 3×10⁵/λ², α = 10^(1.5×10⁶/λ² − 8) nm⁻¹ (λ in nm).
    n = 2.6 + 3e5 / lam ** 2
    alpha_per_cm = 10 ** (1.5e6 / lam ** 2 - 8) * 1e7
    return n, alpha_per_cm


def test_swanepoel_formula_against_tmm_for_model_film():
    # Reference: tmm with k = αλ/4π of the model film. Swanepoel neglects k in the
    # coefficients; over 500–1800 nm (k ≤ 0.4) T agrees within 0.002 absolute (measured
    # 0.001, largest at the edge).
    lam = np.linspace(500, 1800, 140)
    n, alpha = swanepoel_model_film(lam)
    k = alpha * lam * 1e-7 / (4 * np.pi)
    t_ref, _ = tmm_film_on_glass(lam, n, k, 1000.0, substrate_index=1.51)
    t = films.swanepoel_transmittance(lam, n, 1000.0, alpha, 1.51)
    assert np.max(np.abs(t - t_ref)) < 0.002


def test_envelopes_bound_the_formula_and_touch_it():
    # Synthetic: T_m ≤ T ≤ T_M for all phases, equality at cos φ = ∓1; T_M(x = 1) is the bare
    # substrate's 2s/(s²+1) (Swanepoel 1983: a half-wave film is "absent").
    n, x, s = 2.4, np.linspace(0.05, 1, 20), SUBSTRATE
    t_max, t_min = films.swanepoel_envelopes(n, x, s)
    a, b, c, d = films.swanepoel_coefficients(n, s)
    for cos_phi in (-1.0, -0.3, 0.4, 1.0):
        t = a * x / (b - c * x * cos_phi + d * x ** 2)
        assert np.all(t <= t_max + 1e-15) and np.all(t >= t_min - 1e-15)
    assert np.allclose(t_max, a * x / (b - c * x + d * x ** 2))
    assert films.swanepoel_envelopes(n, 1.0, s)[0] == pytest.approx(
        optics.substrate_transmittance(s), rel=1e-14)


@pytest.mark.parametrize("n", [1.7, 2.0, 2.6, 3.4])
def test_index_formulas_invert_the_envelopes(n):
    # Synthetic: N from both envelopes gives n back for any x (1/T_m − 1/T_M = 2C/A does not
    # depend on x); M from T_m alone only for x = 1 and too high with absorption.
    s = SUBSTRATE
    for x in (1.0, 0.7, 0.2):
        t_max, t_min = films.swanepoel_envelopes(n, x, s)
        assert films.index_from_envelopes(t_max, t_min, s) == pytest.approx(n, rel=1e-12)
    assert films.index_transparent(films.swanepoel_envelopes(n, 1.0, s)[1], s) == \
        pytest.approx(n, rel=1e-12)
    assert films.index_transparent(films.swanepoel_envelopes(n, 0.7, s)[1], s) > n
    # No solution with n > s when T_m is at or above the bare substrate value.
    assert np.isnan(films.index_transparent(0.95, s))


@pytest.mark.parametrize("n", [1.7, 2.0, 2.6])
def test_absorbance_from_envelope_and_from_t_round_trip(n):
    # Synthetic: x from T_M (Swanepoel eq. (15)) and x from T at a known phase both undo the
    # formula; n = 1.7 < s² also exercises D < 0 (stable form of the root).
    s = SUBSTRATE
    x = np.linspace(0.01, 1.0, 50)
    t_max, _ = films.swanepoel_envelopes(n, x, s)
    assert films.absorbance_x_from_upper_envelope(t_max, n, s) == pytest.approx(x, rel=1e-10)
    a, b, c, d = films.swanepoel_coefficients(n, s)
    for phi in (0.0, 1.0, np.pi):
        t = a * x / (b - c * x * np.cos(phi) + d * x ** 2)
        assert films.absorbance_x_from_transmittance(t, n, phi, s) == pytest.approx(x, rel=1e-10)


def test_thickness_from_extrema_exact_at_exact_positions():
    # Synthetic: maxima of a dispersive film at 2n(λ)d = mλ; adjacent maxima (Δm = 1) and a
    # maximum with the next minimum (Δm = 1/2) give d exactly (Swanepoel eq. (23)).
    d, a, b = 1234.0, 2.3, 3e4
    lam = np.linspace(400, 2000, 200001)
    m = 2 * (a + b / lam ** 2) * d / lam
    l5, l6 = (lam[np.argmin(np.abs(m - q))] for q in (5.0, 6.0))
    l55 = lam[np.argmin(np.abs(m - 5.5))]
    n = lambda wl: a + b / wl ** 2   # noqa: E731
    assert films.thickness_from_extrema(l5, n(l5), l6, n(l6)) == pytest.approx(d, rel=1e-4)
    assert films.thickness_from_extrema(l5, n(l5), l55, n(l55), 0.5) == pytest.approx(d, rel=1e-4)


def test_cauchy_fit_recovers_coefficients():
    # Synthetic: exact Cauchy data.
    lam = np.array([500.0, 700, 900, 1300])
    a, b = films.fit_cauchy(lam, films.cauchy_index(lam, 2.1, 4.2e4))
    assert (a, b) == (pytest.approx(2.1, abs=1e-12), pytest.approx(4.2e4, rel=1e-10))
    with pytest.raises(ValueError):
        films.fit_cauchy([500.0], [2.0])


# ------------------------------------------------------------------------------------------
# The envelope method against tmm: thickness and n within 1 %
# ------------------------------------------------------------------------------------------

@pytest.mark.parametrize("noise", [0.0, 0.001, 0.003])
@pytest.mark.parametrize("index_key", list(CAUCHY))
@pytest.mark.parametrize("thickness_nm", [300.0, 700.0, 1500.0, 3000.0])
def test_envelope_method_recovers_thickness_and_index(thickness_nm, index_key, noise):
    # Reference: tmm (coherent film on incoherent 1 mm glass, k from the edge kept). The
    # issue asks for thickness and n within 1 % (Swanepoel 1983 reports better than 1 %);
    # measured worst over this grid: 0.30 % in d, 0.16 % in n. Noise is Gaussian in T,
    # absolute, seeded.
    t = grid_film(thickness_nm, index_key)
    rng = np.random.default_rng(int(thickness_nm) + 7 * len(index_key) + int(1e4 * noise))
    t = t + noise * rng.standard_normal(t.size)
    fa = films.analyse_fringes(GRID_NM, t, substrate_index=SUBSTRATE)
    assert fa is not None and fa.thickness_nm is not None, [f.message for f in fa.flags]
    assert fa.thickness_nm == pytest.approx(thickness_nm, rel=0.01)
    assert [f.code for f in fa.flags] == ["fringes-found"]
    a, b = CAUCHY[index_key]
    assert fa.n_at, "n must be reported at some reference wavelength"
    for key, value in fa.n_at.items():
        wl = float(key[:-2])
        assert value == pytest.approx(a + b / wl ** 2, rel=0.01), key
    # The error bar is a standard error: finite, positive, and the truth within ~4 of them
    # plus 0.3 % (systematic part the standard error does not cover, see the docstring).
    assert 0 < fa.thickness_err_nm < 0.01 * thickness_nm
    assert abs(fa.thickness_nm - thickness_nm) < 4 * fa.thickness_err_nm + 0.003 * thickness_nm


def test_descending_duplicated_input_same_result():
    # Synthetic handling: spectrometers scan from long to short λ and repeat points; the
    # result does not depend on the order, and arrays come back on the input grid.
    t = grid_film(700.0, "n2.25")
    fwd = films.analyse_fringes(GRID_NM, t)
    lam_rev = np.concatenate([GRID_NM[::-1], GRID_NM[:3]])
    t_rev = np.concatenate([t[::-1], t[:3]])
    rev = films.analyse_fringes(lam_rev, t_rev)
    assert rev.thickness_nm == pytest.approx(fwd.thickness_nm, rel=1e-9)
    assert rev.fringe_free_t.shape == lam_rev.shape
    assert rev.alpha_per_cm[: GRID_NM.size][::-1] == pytest.approx(fwd.alpha_per_cm, rel=1e-9,
                                                                   nan_ok=True)


def test_alpha_and_fringe_free_transmittance_have_no_fringes():
    # Reference: tmm film, 1500 nm, n = 2.25 + 2.5e4/λ², 0.1 % noise. α from the pointwise
    # inversion returns the α put in within 5 % (median) and 15 % (90 % of points) where
    # 0.1 ≤ αd ≤ 3, i.e. through the Urbach tail into the edge where the fringes live; the
    # Urbach energy from ln α over 0.1 ≤ αd ≤ 1 is within 5 % of 50 meV. −ln T/d over the
    # same points fails both (fringes and reflection), which the test also checks.
    d = 1500.0
    t = grid_film(d, "n2.25") + 0.001 * np.random.default_rng(3).standard_normal(GRID_NM.size)
    fa = films.analyse_fringes(GRID_NM, t)
    alpha_true = edge_alpha_per_cm(HC / GRID_NM, EG_EV, EU_EV)
    band = (alpha_true * d * 1e-7 >= 0.1) & (alpha_true * d * 1e-7 <= 3)
    ratio = fa.alpha_per_cm[band] / alpha_true[band]
    assert np.median(ratio) == pytest.approx(1.0, abs=0.05)
    assert np.percentile(np.abs(ratio - 1), 90) < 0.15
    tail = (alpha_true * d * 1e-7 >= 0.1) & (alpha_true * d * 1e-7 <= 1)
    e = HC / GRID_NM[tail]
    eu_films = 1 / np.polyfit(e, np.log(fa.alpha_per_cm[tail]), 1)[0]
    eu_naive = 1 / np.polyfit(e, np.log(-np.log(t[tail]) / (d * 1e-7)), 1)[0]
    assert eu_films == pytest.approx(EU_EV, rel=0.05)
    assert abs(eu_naive / EU_EV - 1) > 0.2
    # The fringe-free T lies between the envelopes and swings far less than T.
    inside = np.isfinite(fa.tm_upper) & np.isfinite(fa.tm_lower)
    assert np.all(fa.fringe_free_t[inside] <= fa.tm_upper[inside] + 0.003)
    assert np.all(fa.fringe_free_t[inside] >= fa.tm_lower[inside] - 0.003)
    transparent = GRID_NM > 800
    assert np.ptp(fa.fringe_free_t[transparent]) < 0.2 * np.ptp(t[transparent])


# ------------------------------------------------------------------------------------------
# Swanepoel's model film
# ------------------------------------------------------------------------------------------

@pytest.mark.parametrize("noise", [0.0, 0.003])
def test_swanepoel_model_film_thickness_within_one_percent(noise):
    # Swanepoel (1983) model film (values from memory, see swanepoel_model_film), T from his
    # eq. (1) (cross-checked against tmm above), 400–1800 nm at 1 nm. The paper reports the
    # thickness to better than 1 %; measured here: 0.014 % (noise-free), 0.07 % (0.3 %).
    lam = np.arange(400.0, 1800.1, 1.0)
    n, alpha = swanepoel_model_film(lam)
    t = films.swanepoel_transmittance(lam, n, 1000.0, alpha, 1.51)
    t = t + noise * np.random.default_rng(11).standard_normal(t.size)
    fa = films.analyse_fringes(lam, t, substrate_index=1.51)
    assert fa.thickness_nm == pytest.approx(1000.0, rel=0.01)
    for key, value in fa.n_at.items():
        wl = float(key[:-2])
        assert value == pytest.approx(2.6 + 3e5 / wl ** 2, rel=0.01), key
    # α in the medium-absorption region (synthetic truth: the model's own α).
    band = (alpha * 1e-4 >= 0.1) & (alpha * 1e-4 <= 3)
    ratio = fa.alpha_per_cm[band] / alpha[band]
    assert np.median(ratio) == pytest.approx(1.0, abs=0.05)


# ------------------------------------------------------------------------------------------
# Fringe detection and envelopes
# ------------------------------------------------------------------------------------------

def test_detect_fringes_finds_the_tangent_points():
    # Synthetic (Swanepoel formula, no absorption, 0.3 % noise): maxima at integer and minima
    # at half-integer orders 2nd/λ, found within 1 % of the local fringe spacing.
    lam = np.arange(400.0, 1600.1, 1.0)
    n = 2.3 + 2e4 / lam ** 2
    t = films.swanepoel_transmittance(lam, n, 900.0, 0.0, SUBSTRATE)
    t = t + 0.003 * np.random.default_rng(5).standard_normal(t.size)
    ext = films.detect_fringes(lam, t)
    order = lambda wl: 2 * (2.3 + 2e4 / wl ** 2) * 900.0 / wl   # noqa: E731
    assert ext.maxima_nm.size >= 4 and ext.minima_nm.size >= 4
    assert np.all(np.abs(order(ext.maxima_nm) - np.round(order(ext.maxima_nm))) < 0.01)
    m_min = order(ext.minima_nm)
    assert np.all(np.abs(m_min - (np.floor(m_min) + 0.5)) < 0.01)
    assert ext.noise_t == pytest.approx(0.003, rel=0.2)
    # Extremum values are close to the envelopes of the model.
    t_max, t_min = films.swanepoel_envelopes(2.3 + 2e4 / ext.minima_nm ** 2, 1.0, SUBSTRATE)
    assert ext.minima_t == pytest.approx(t_min, abs=0.003)


def test_envelopes_nan_outside_their_extrema():
    lam = np.linspace(400, 1000, 601)
    up, lo = films.envelopes(lam, [900.0, 700.0, 500.0], [0.9, 0.88, 0.8], [800.0, 600.0],
                             [0.6, 0.55])
    assert np.isnan(up[lam < 500]).all() and np.isnan(up[lam > 900]).all()
    assert np.isfinite(up[(lam >= 500) & (lam <= 900)]).all()
    assert np.isnan(lo[lam < 600]).all() and np.isfinite(lo[(lam >= 600) & (lam <= 800)]).all()
    assert up[np.argmin(np.abs(lam - 700))] == pytest.approx(0.88)
    # Monotone interpolation: no overshoot between nodes.
    seg = (lam >= 500) & (lam <= 700)
    assert up[seg].max() <= 0.88 + 1e-12 and up[seg].min() >= 0.8 - 1e-12
    # One extremum is no envelope.
    up1, _ = films.envelopes(lam, [700.0], [0.9], [], [])
    assert np.isnan(up1).all()


# ------------------------------------------------------------------------------------------
# Edge cases: a clear flag, never a crash or a silent wrong thickness
# ------------------------------------------------------------------------------------------

LAM_EDGE = np.linspace(350.0, 1500.0, 2000)


@pytest.mark.parametrize("noise", [0.0, 0.001, 0.01])
def test_no_fringes_returns_none(noise):
    # Synthetic: flat T with noise, and a smooth absorption edge without a film: no fringes.
    rng = np.random.default_rng(17)
    flat = 0.9 + noise * rng.standard_normal(LAM_EDGE.size)
    assert films.analyse_fringes(LAM_EDGE, flat) is None
    edge = 0.9 / (1 + np.exp((HC / LAM_EDGE - 3.0) / 0.05))
    assert films.analyse_fringes(LAM_EDGE, edge + noise * rng.standard_normal(edge.size)) is None


def test_pure_noise_never_gives_a_thickness():
    # Synthetic, bounded by count: 40 seeds of 0.3 % noise on a flat T.
    for seed in range(40):
        t = 0.9 + 0.003 * np.random.default_rng(seed).standard_normal(LAM_EDGE.size)
        fa = films.analyse_fringes(LAM_EDGE, t)
        assert fa is None or fa.thickness_nm is None


def test_too_short_or_empty_input():
    assert films.analyse_fringes(np.arange(10.0), np.full(10, 0.5)) is None
    assert films.analyse_fringes(np.array([np.nan] * 50), np.full(50, 0.5)) is None


def test_single_extremum_flags_too_few():
    # Synthetic: a 60 nm film (n = 2.3) has one broad minimum in 350–1500 nm.
    t = films.swanepoel_transmittance(LAM_EDGE, 2.3, 60.0, 0.0, SUBSTRATE)
    fa = films.analyse_fringes(LAM_EDGE, t + 0.001 * np.random.default_rng(1).standard_normal(
        t.size))
    assert fa is not None and fa.thickness_nm is None
    assert [f.code for f in fa.flags] == ["fringes-too-few"]
    assert "1 interference extremum found" in fa.flags[0].message
    assert fa.minima_nm and not fa.maxima_nm
    assert np.isnan(fa.alpha_per_cm).all()


def test_two_extrema_flag_too_few():
    # Synthetic: a 100 nm film shows one maximum and one minimum: fringes, but no thickness.
    t = films.swanepoel_transmittance(LAM_EDGE, 2.3, 100.0, 0.0, SUBSTRATE)
    fa = films.analyse_fringes(LAM_EDGE, t)
    assert fa.thickness_nm is None and fa.flags[0].code == "fringes-too-few"
    assert "at least 5 extrema, 3 of them between both envelopes" in fa.flags[0].message


def test_low_contrast_fringes_flagged_without_thickness():
    # Synthetic: n = 1.535 on s = 1.52 gives fringes of ~0.3 % peak to valley: found, but
    # below the 0.5 % contrast limit, so no thickness.
    t = films.swanepoel_transmittance(LAM_EDGE, 1.535, 1000.0, 0.0, SUBSTRATE)
    fa = films.analyse_fringes(LAM_EDGE, t)
    assert fa is not None and fa.thickness_nm is None
    assert [f.code for f in fa.flags] == ["fringes-low-contrast"]
    assert "low contrast" in fa.flags[0].message


def test_narrow_transparent_window_order_ambiguous():
    # Synthetic: a 2.37 µm film with its gap at 1.44 eV (860 nm) measured to 1100 nm leaves
    # five fringes over 940–1085 nm; the index from the envelopes cannot fix the orders
    # there (the two best candidates, both wrong, fit alike): refused with a flag that names
    # both thicknesses, never one silently.
    lam = np.arange(400.0, 1100.0, 1.0)
    n = 2.71 + 4.4e4 / lam ** 2
    t = films.swanepoel_transmittance(lam, n, 2370.0, edge_alpha_per_cm(HC / lam, 1.44, 0.063),
                                      1.72)
    fa = films.analyse_fringes(lam, t, substrate_index=1.72)
    assert fa.thickness_nm is None
    assert [f.code for f in fa.flags] == ["fringes-order-ambiguous"]
    assert "give the thickness" in fa.flags[0].message


def test_random_films_never_silently_wrong():
    # Synthetic, bounded by count (60 films, seeded): random thickness 150–4000 nm, index
    # 1.75–3.0 with dispersion, gap 1.4–3.6 eV, substrate 1.45–1.75, noise 0–0.6 %, scan
    # range and step. Whenever a thickness is returned it is within 2 % (the "Done when"
    # tolerance of the issue); otherwise a flag says why. (Over 400 such films: 353 got a
    # thickness, worst 1.3 %, 95th percentile 0.14 %; 47 were refused.)
    returned = 0
    for seed in range(60):
        rng = np.random.default_rng(1000 + seed)
        d = rng.uniform(150, 4000)
        a, b = rng.uniform(1.75, 3.0), rng.uniform(0, 6e4)
        eg, eu, s = rng.uniform(1.4, 3.6), rng.uniform(0.02, 0.1), rng.uniform(1.45, 1.75)
        noise = rng.choice([0, 0.0005, 0.001, 0.003, 0.006])
        lam = np.arange(rng.choice([300, 350, 400]), rng.choice([1100, 1600, 2500]),
                        rng.choice([0.5, 1, 2]))
        t = films.swanepoel_transmittance(lam, a + b / lam ** 2, d,
                                          edge_alpha_per_cm(HC / lam, eg, eu), s)
        fa = films.analyse_fringes(lam, t + noise * rng.standard_normal(lam.size),
                                   substrate_index=s)
        if fa is None or fa.thickness_nm is None:
            assert fa is None or fa.flags, seed
            continue
        returned += 1
        assert fa.thickness_nm == pytest.approx(d, rel=0.02), seed
    assert returned >= 40


def test_film_index_below_substrate_refused():
    # Synthetic: an n = 1.38 film on s = 1.52 has its maxima above the bare substrate; the
    # envelope formulas need n > s, so no thickness, and the flag says what may be wrong.
    t = films.swanepoel_transmittance(LAM_EDGE, 1.38, 1000.0, 0.0, SUBSTRATE)
    fa = films.analyse_fringes(LAM_EDGE, t)
    assert fa.thickness_nm is None
    assert [f.code for f in fa.flags] == ["fringes-above-substrate"]
    assert "substrate index is too high" in fa.flags[0].message


def test_substrate_referenced_spectrum_refused_then_fixed():
    # Synthetic: a spectrum divided by the bare substrate (maxima at 1.0) is refused; the
    # same spectrum multiplied back by T_s (substrate_corrected_transmittance with
    # substrate_index) gives the thickness.
    lam = np.arange(400.0, 1600.1, 1.0)
    n = 2.3 + 2e4 / lam ** 2
    t = films.swanepoel_transmittance(lam, n, 900.0, 0.0, SUBSTRATE)
    t_ref = t / optics.substrate_transmittance(SUBSTRATE)
    bad = films.analyse_fringes(lam, t_ref)
    assert bad.thickness_nm is None and bad.flags[0].code == "fringes-above-substrate"
    fixed = films.substrate_corrected_transmittance(t_ref, np.ones_like(t_ref),
                                                    substrate_index=SUBSTRATE)
    assert films.analyse_fringes(lam, fixed).thickness_nm == pytest.approx(900.0, rel=0.01)


def test_bad_inputs_raise_project_error():
    t = films.swanepoel_transmittance(LAM_EDGE, 2.3, 900.0, 0.0, SUBSTRATE)
    with pytest.raises(EdgefitError) as err:
        films.analyse_fringes(LAM_EDGE, 100 * t)
    assert err.value.code == "bad-input" and "percent" in str(err.value)
    with pytest.raises(EdgefitError) as err:
        films.analyse_fringes(LAM_EDGE, t, substrate_index=0.9)
    assert err.value.code == "bad-option" and "1.52" in str(err.value)
    with pytest.raises(EdgefitError):
        films.analyse_fringes(LAM_EDGE, t[:-1])


def test_to_film_carries_the_result():
    fa = films.analyse_fringes(GRID_NM, grid_film(700.0, "n2.25"))
    film = fa.to_film()
    assert film.thickness_source == "fringes"
    assert film.thickness_nm == fa.thickness_nm
    assert film.extrema["maxima_nm"] == fa.maxima_nm
    d = film.to_dict()
    assert d["n"] == fa.n_at and d["cauchy"]["a"] == pytest.approx(fa.cauchy[0])


# ------------------------------------------------------------------------------------------
# Grid matching, substrate correction
# ------------------------------------------------------------------------------------------

def test_interpolate_onto_full_partial_and_no_overlap():
    src = np.linspace(1000, 300, 701)            # descending, like a scan
    vals = 0.001 * src
    target = np.linspace(400, 900, 11)
    out, flags = films.interpolate_onto(src, vals, target, what="reflectance", file="r.csv")
    assert out == pytest.approx(0.001 * target) and flags == []
    out, flags = films.interpolate_onto(src, vals, np.linspace(100, 600, 6),
                                        what="reflectance", file="r.csv")
    assert np.isnan(out[:2]).all() and out[2:] == pytest.approx([0.3, 0.4, 0.5, 0.6])
    assert [f.code for f in flags] == ["partial-overlap"]
    assert "r.csv" in flags[0].message and "300–1000 nm" in flags[0].message
    with pytest.raises(EdgefitError) as err:
        films.interpolate_onto(src, vals, np.linspace(1200, 2000, 5), what="reflectance",
                               file="r.csv")
    assert err.value.code == "no-overlap"
    text = str(err.value)
    assert text.startswith("r.csv: ") and "300–1000 nm" in text and "1200–2000 nm" in text
    assert "fix:" in text


def glass_k(lam):
    """Synthetic glass absorption edge: k_s such that 1 mm passes ~nothing below ~320 nm."""
    e = HC / np.asarray(lam, dtype=float)
    alpha_per_cm = 30.0 * np.exp((e - 3.9) / 0.08)
    return alpha_per_cm * lam * 1e-7 / (4 * np.pi)


def test_substrate_correction_removes_substrate_absorption():
    # Reference: tmm. A 600 nm film (n = 2.0, with its own edge at 4.3 eV) on 1 mm glass
    # that absorbs in the UV. Dividing by the bare glass measured the same way and
    # multiplying by T_s gives the film as on transparent glass, within 1 % relative where
    # the glass passes at least 30 % of its maximum (substrate_edge_mask), and the mask
    # marks the glass's own edge.
    lam = np.arange(300.0, 700.1, 2.0)
    n = 2.0 + 1e4 / lam ** 2
    k = edge_alpha_per_cm(HC / lam, 4.3, 0.05) * lam * 1e-7 / (4 * np.pi)
    ks = glass_k(lam)
    t_abs, _ = tmm_film_on_glass(lam, n, k, 600.0, substrate_k=ks)
    t_clear, _ = tmm_film_on_glass(lam, n, k, 600.0)
    bare = tmm_bare_substrate(lam, substrate_k=ks)
    corrected = films.substrate_corrected_transmittance(t_abs, bare, substrate_index=SUBSTRATE)
    limited = films.substrate_edge_mask(bare, 0.3)
    assert limited[lam < 310].all() and not limited[lam > 380].any()
    usable = ~limited
    assert np.max(np.abs(corrected[usable] / t_clear[usable] - 1)) < 0.01
    # Without the correction the substrate's absorption is mistaken for the film's.
    assert np.max(np.abs(t_abs[usable] / t_clear[usable] - 1)) > 0.1


def test_substrate_corrected_plain_quotient_and_zero_substrate():
    q = films.substrate_corrected_transmittance([0.5, 0.2, 0.1], [0.9, 0.4, 0.0])
    assert q[:2] == pytest.approx([0.5 / 0.9, 0.5]) and np.isnan(q[2])
    mask = films.substrate_edge_mask(np.array([0.0, 0.1, 0.5, 0.9, np.nan]), 0.3)
    assert mask.tolist() == [True, True, False, False, True]


# ------------------------------------------------------------------------------------------
# The committed demo series (spectra_demo/make_film_series.py, generated with tmm)
# ------------------------------------------------------------------------------------------

def test_demo_film_series_gives_back_its_truths():
    # Synthetic truths of the invented CVN7 series, recorded in manifest_films.json; read
    # through edgefit.io as a user's files would be. Thickness within 1 % (the issue asks
    # 2 % end to end), n within 1 % at the reported wavelengths; the bare glass flags its own
    # UV edge; the separate reflectance file only partly overlaps the T scan.
    import json
    from pathlib import Path

    from edgefit.io import read_spectra

    demo = Path(__file__).resolve().parent.parent / "spectra_demo"
    entries = json.loads((demo / "manifest_films.json").read_text(encoding="utf-8"))
    films_seen = 0
    for entry in entries:
        if "thickness_nm" not in entry["truth"]:
            continue
        spectra = read_spectra(demo / entry["file"])
        t = next(sp for sp in spectra if sp.quantity == "transmittance")
        assert t.x_unit == "nm" and t.y_unit == "percent"
        lam, frac = t.x, t.y / 100
        opts = entry["options"]
        if "substrate" in opts:
            bare = read_spectra(demo / opts["substrate"])[0]
            tb, flags = films.interpolate_onto(bare.x, bare.y / 100, lam,
                                               what="bare substrate", file=bare.source)
            limited = films.substrate_edge_mask(tb)
            assert flags == [] and 300 < lam[limited].max() < 340
            frac = films.substrate_corrected_transmittance(frac, tb, substrate_index=1.52)
            frac[limited] = np.nan
        if "reflectance" in opts:
            r = read_spectra(demo / opts["reflectance"])[0]
            _, flags = films.interpolate_onto(r.x, r.y / 100, lam, what="reflectance",
                                              file=r.source)
            assert [f.code for f in flags] == ["partial-overlap"]
        fa = films.analyse_fringes(lam, frac, substrate_index=float(opts["substrate_index"]))
        truth = entry["truth"]
        assert fa.thickness_nm == pytest.approx(truth["thickness_nm"], rel=0.01), entry["file"]
        for key, value in fa.n_at.items():
            if key in truth["n"]:
                assert value == pytest.approx(truth["n"][key], rel=0.01), (entry["file"], key)
        films_seen += 1
    assert films_seen == 3


@pytest.mark.parametrize("seed", range(6))
def test_alternating_extrema_merge_scipys_maxima_and_minima(seed):
    """Reference library: scipy.signal.find_peaks with ``prominence``, on synthetic smoothed
    noise with fringes: the fringe search's extrema are scipy's maxima and minima merged by
    index, of two neighbours of one kind the more extreme kept."""
    from scipy.signal import find_peaks
    rng = np.random.default_rng(seed)
    x = np.linspace(0, 1, 1500)
    y = 0.5 + 0.1 * np.sin(2 * np.pi * (8 + seed) * x) + np.convolve(
        rng.normal(0, 0.02, x.size), np.ones(9) / 9, mode="same")
    for sig in (y, -y):
        # alternating extrema: scipy's maxima and minima merged by index, of two
        # neighbours of one kind the more extreme kept
        imax, imin = find_peaks(sig, prominence=0.005)[0], find_peaks(-sig, prominence=0.005)[0]
        merged = sorted([(i, 1) for i in imax] + [(i, -1) for i in imin])
        want_i, want_k = [], []
        for i, k in merged:
            if want_k and want_k[-1] == k:
                if k * sig[i] > k * sig[want_i[-1]]:
                    want_i[-1] = i
                continue
            want_i.append(i)
            want_k.append(k)
        got_i, got_k, _ = films._find_extrema(sig, 0.005, 1)
        assert np.array_equal(got_i, want_i) and np.array_equal(got_k, want_k)
        assert np.all(np.diff(got_k) != 0)


def test_sinusoid_fit_leaves_out_bad_points_and_finds_the_amplitude():
    """Reference library: numpy.linalg.lstsq and numpy.linalg.inv on the design matrix
    (1, u, cos u, sin u) of the fringe refinement, synthetic 1/T with noise (amplitude 0.05)
    and a T ≤ 0 point that must be left out."""
    from edgefit.films import sinusoid_fit
    rng = np.random.default_rng(4)
    nu = np.linspace(1e-3, 2e-3, 400)
    centre, period = 1.45e-3, 1.2e-4
    u_all = 2 * np.pi * (nu - centre) / period
    t = 1.0 / (1.3 + 40 * (nu - centre) + 0.05 * np.cos(u_all - 0.3)
               + rng.normal(0, 1e-3, nu.size))
    t[200] = -0.1
    lo, hi = np.searchsorted(nu, [centre - period / 2, centre + period / 2])
    (used, c0, c1, a, b, s2, inv_aa, inv_bb, first, last, mean_t,
     solved) = sinusoid_fit(nu, t, lo, hi, centre, period)
    keep = np.arange(lo, hi)[t[lo:hi] > 0]
    u = u_all[keep]
    design = np.column_stack([np.ones_like(u), u, np.cos(u), np.sin(u)])
    coef, rss, *_ = np.linalg.lstsq(design, 1.0 / t[keep], rcond=None)
    inv = np.linalg.inv(design.T @ design)
    assert solved and used == keep.size and 200 in range(lo, hi)
    assert (c0, c1, a, b) == pytest.approx(coef, rel=1e-8, abs=1e-12)
    assert s2 == pytest.approx(rss[0] / (keep.size - 4), rel=1e-6)
    assert (inv_aa, inv_bb) == pytest.approx((inv[2, 2], inv[3, 3]), rel=1e-8)
    assert (first, last, mean_t) == pytest.approx((nu[keep[0]], nu[keep[-1]],
                                                   t[keep].mean()), rel=1e-12)
    assert np.hypot(a, b) == pytest.approx(0.05, rel=0.05)


def test_prepare_equals_numpy_unique():
    """Reference library: numpy.unique, which the fast path of the fringe search replaces
    for sorted input; synthetic values, ascending, descending, shuffled with duplicates
    (numpy.percentile, also replaced there: tests/test_analysis.py)."""
    rng = np.random.default_rng(2)
    lam = np.linspace(300, 900, 50)
    t = rng.random(50)
    for x, y in ((lam, t), (lam[::-1], t[::-1]), (np.r_[lam, lam[:5]], np.r_[t, t[:5] + 0.1])):
        got = films._prepare(x, y)
        uniq, inv, cnt = np.unique(x, return_inverse=True, return_counts=True)
        assert np.array_equal(got[0], uniq)
        assert np.allclose(got[1], np.bincount(inv, weights=y) / cnt, rtol=0, atol=1e-15)
