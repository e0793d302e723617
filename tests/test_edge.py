"""Edge formulas and the verdict rules (edgefit.edge.tauc, edgefit.edge.verdict)."""
import numpy as np
import pytest

from edgefit.edge.tauc import (EXPONENT_R, edge_model_alpha, joining_energy_ev,
                               tauc_ordinate, urbach_alpha)
from edgefit.edge.verdict import decide


@pytest.mark.parametrize("r", [0.5, 1.5, 2.0, 3.0])
def test_edge_model_is_continuous_in_value_and_slope_of_ln_alpha(r):
    eg, eu = 2.0, 0.04
    et = joining_energy_ev(eg, eu, r)
    # the defining condition: r/(Et − Eg) − 1/Et = 1/Eu
    assert r / (et - eg) - 1 / et == pytest.approx(1 / eu, rel=1e-12)
    h = 1e-7
    lo, mid, hi = np.log(edge_model_alpha(np.array([et - h, et, et + h]), eg, eu, 1e5, r))
    assert lo == pytest.approx(mid, abs=1e-5) and hi == pytest.approx(mid, abs=1e-5)
    slope_below = (mid - lo) / h
    slope_above = (hi - mid) / h
    assert slope_below == pytest.approx(1 / eu, rel=1e-3)
    assert slope_above == pytest.approx(1 / eu, rel=1e-3)


def test_tauc_ordinates_are_linear_for_their_own_exponent():
    # synthetic power laws αhν = B(E − Eg)^r: each Tauc ordinate of its own r is a straight line
    e = np.linspace(2.1, 3.0, 50)
    for tr, r in EXPONENT_R.items():
        alpha = 1e4 * (e - 2.0) ** r / e
        y = tauc_ordinate(e, alpha, tr)
        p = np.polyfit(e, y, 1)
        assert -p[1] / p[0] == pytest.approx(2.0, abs=1e-9)


def test_urbach_tail_slope_is_one_over_eu():
    e = np.linspace(1.5, 1.7, 20)
    la = np.log(urbach_alpha(e, 100.0, 1.7, 0.025))
    assert np.polyfit(e, la, 1)[0] == pytest.approx(40.0)


def test_verdict_rules():
    # ΔBIC ≥ 10 and the Tauc linear range agree: decided
    assert decide({"direct": -100, "indirect": -80}, {"direct": 0.3, "indirect": 0.05},
                  {"direct": 2.0, "indirect": 1.9}, None)[0] == "direct"
    # ΔBIC below 10 with both forms linear: ambiguous
    assert decide({"direct": -100, "indirect": -95}, {"direct": 0.3, "indirect": 0.2},
                  {"direct": 2.0, "indirect": 1.9}, None)[0] == "ambiguous"
    # ΔBIC 6–10 when the other form has no linear window at all: decided
    assert decide({"direct": -100, "indirect": -92}, {"direct": 0.3, "indirect": 0.0},
                  {"direct": 2.0, "indirect": None}, None)[0] == "direct"
    # better BIC but a shorter linear range than the other form: ambiguous
    assert decide({"direct": -100, "indirect": -70}, {"direct": 0.05, "indirect": 0.3},
                  {"direct": 2.0, "indirect": 1.9}, None)[0] == "ambiguous"
    # two onsets beat both single edges by ΔBIC ≥ 10, gaps 0.5 eV apart: direct+indirect
    assert decide({"direct": -100, "indirect": -110, "direct+indirect": -150},
                  {"direct": 0.3, "indirect": 0.2}, {"direct": 2.9, "indirect": 2.4},
                  (2.4, 2.9))[0] == "direct+indirect"


def test_edge_model_fit_carries_no_state_from_an_earlier_fit():
    """Synthetic truth: the single-edge fits reuse one parameter set per thread; a fit must give
    the same numbers whether or not another fit (other data, other bounds) ran before it."""
    import threading

    from edgefit.edge.models import fit_hypothesis
    e = np.linspace(2.0, 3.0, 60)
    a = edge_model_alpha(e, 2.4, 0.03, 1e5, 0.5) + 5.0
    other_e = np.linspace(0.8, 1.6, 40)
    other_a = edge_model_alpha(other_e, 1.1, 0.05, 3e3, 2.0)

    def run():
        return fit_hypothesis("direct", e, a, eg_guess=2.45, eu_guess=0.05)

    first = run()
    fit_hypothesis("indirect", other_e, other_a, eg_guess=1.0, eu_guess=0.2)
    again = run()
    # (to 1e-9, not bit for bit: numpy's vector loops may round the last digit differently)
    assert again.params == pytest.approx(first.params, rel=1e-9)
    assert again.errors == pytest.approx(first.errors, rel=1e-9)
    assert first.params["eg_ev"] == pytest.approx(2.4, abs=1e-3)
    # another thread builds its own set: the same numbers there
    out = []
    t = threading.Thread(target=lambda: out.append(run()))
    t.start()
    t.join()
    assert out[0].params == pytest.approx(first.params, rel=1e-9)
