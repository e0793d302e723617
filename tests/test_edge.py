"""Edge formulas and the edge-model fits (edgefit.edge.tauc, edgefit.edge.models, edgefit.edge.lsq)."""
import numpy as np
import pytest

from edgefit.edge.tauc import (EXPONENT_R, edge_model_alpha, joining_energy_ev,
                               tauc_ordinate, urbach_alpha)


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


def test_edge_model_fit_carries_no_state_from_an_earlier_fit():
    """Synthetic truth: a fit must give the same numbers whether or not another fit (other
    data, other bounds) ran before it, and in another thread."""
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
    # another thread: the same numbers there
    out = []
    t = threading.Thread(target=lambda: out.append(run()))
    t.start()
    t.join()
    assert out[0].params == pytest.approx(first.params, rel=1e-9)


def test_model_fits_pickle_with_their_curves():
    """A fit crosses process boundaries (pools pickle what they return): both kinds of model
    fit must pickle, and the unpickled curve be the model α on the fit energies (synthetic
    edges; the curve checked against edge_model_alpha with the fitted parameters)."""
    import pickle

    from edgefit.edge.models import R_INDIRECT, alpha_single, fit_hypothesis
    e = np.linspace(1.8, 3.2, 80)
    a = edge_model_alpha(e, 2.0, 0.04, 3e3, R_INDIRECT) + edge_model_alpha(e, 2.6, 0.04, 1e5,
                                                                             0.5) + 3.0
    single = fit_hypothesis("indirect", e, a, eg_guess=2.0, eu_guess=0.04)
    two = fit_hypothesis("direct+indirect", e, a, eg_guess=2.0, eu_guess=0.04, eg2_guess=2.6)
    for fit in (single, two):
        back = pickle.loads(pickle.dumps(fit))
        assert back.params == fit.params and np.array_equal(back.curve, fit.curve)
    p = single.params
    assert np.allclose(single.curve, alpha_single(e, p["eg_ev"], p["eu_ev"], p["ln_amplitude"],
                                                  p["background"], R_INDIRECT), rtol=1e-12)
    assert np.allclose(two.curve, a, rtol=0.05)     # the two-onset model fits its own data


def _lmfit_twin(hypothesis, e, a, fit):
    """The same single-edge problem solved by lmfit.minimize(method="leastsq") from the same
    start, bounds and tolerances as edgefit.edge.models: the reference for the lean solver."""
    import lmfit

    from edgefit.edge.models import R_DIRECT, R_INDIRECT
    r = R_DIRECT if hypothesis == "direct" else R_INDIRECT
    la = np.log(a)
    p = lmfit.Parameters()
    for name, (v, lo, hi) in fit.items():
        p.add(name, value=v, min=lo, max=hi)

    def residual(params):
        v = params.valuesdict()
        m = edge_model_alpha(e, v["eg_ev"], v["eu_ev"], np.exp(v["ln_amplitude"]), r)
        return np.log(m + v["background"]) - la
    return lmfit.minimize(residual, p, method="leastsq", ftol=1e-7, xtol=1e-7, max_nfev=2000)


@pytest.mark.parametrize("hypothesis,eg,eu,amp,noise", [
    ("direct", 2.4, 0.03, 1e5, 0.01), ("indirect", 1.1, 0.05, 3e3, 0.02),
    ("direct", 3.3, 0.08, 4e5, 0.05)])
def test_single_edge_solver_gives_lmfits_values_and_errors(hypothesis, eg, eu, amp, noise):
    """Reference library: lmfit (Levenberg–Marquardt with MINUIT bounds). The single-edge fits
    use edgefit.edge.lsq, lmfit's recipe on plain arrays, with the analytic Jacobian; lmfit
    here differentiates numerically. On the same synthetic, noisy data (seeded), from the same
    start and bounds, both must find the same values to 1e-5 (both stop at a relative change
    of 1e-7, by different paths) and the same 1σ errors to 1e-3 (what forward differences
    allow)."""
    from edgefit.edge import models
    r = models.R_DIRECT if hypothesis == "direct" else models.R_INDIRECT
    e = np.linspace(eg - 0.5, eg + 0.6, 150)
    a = (edge_model_alpha(e, eg, eu, amp, r) + 2.0) \
        * np.exp(np.random.default_rng(3).normal(0, noise, e.size))
    start = {"background": (0.2, 0.0, 2 * a.min()), "eu_ev": (0.04, 0.002, 0.5),
             "eg_ev": (eg + 0.05, eg - 1.0, e.max()),
             "ln_amplitude": (np.log(amp) + 0.5, -np.inf, np.inf)}
    ours = models._fit_single_edge(e, np.log(a), r, start, 1e-7, True)
    ref = _lmfit_twin(hypothesis, e, a, start)
    assert ref.success and ours.success
    for name, q in ref.params.items():
        assert ours.params[name] == pytest.approx(q.value, rel=1e-5, abs=1e-12), name
        if ours.errors[name] is not None:
            assert ours.errors[name] == pytest.approx(q.stderr, rel=1e-3), name
    assert ours.errors["eg_ev"] is not None
    assert ours.params["eg_ev"] == pytest.approx(eg, abs=0.02)    # synthetic truth, noisy


def test_bounded_solver_keeps_every_kind_of_bound():
    """Synthetic: a line fitted with a slope bounded above, an intercept bounded below only and
    a free third term; lmfit.minimize (reference library) on the same problem agrees, and a
    bound that binds holds exactly."""
    import lmfit

    from edgefit.edge.lsq import fit_bounded
    x = np.linspace(0, 1, 50)
    y = 3.0 * x + 0.5 + 0.2 * x ** 2 + np.random.default_rng(1).normal(0, 0.01, x.size)

    def res(th):
        return th[0] * x + th[1] + th[2] * x ** 2 - y
    for hi_slope in (10.0, 2.5):          # 2.5 binds: the slope ends on it
        fit = fit_bounded(res, [1.0, 1.0, 0.0], [-np.inf, 0.2, -np.inf],
                          [hi_slope, np.inf, np.inf], ftol=1e-10, xtol=1e-10)
        p = lmfit.Parameters()
        p.add("m", value=1.0, max=hi_slope)
        p.add("c", value=1.0, min=0.2)
        p.add("q", value=0.0)
        ref = lmfit.minimize(lambda q: res(np.array(list(q.valuesdict().values()))), p,
                             method="leastsq", ftol=1e-10, xtol=1e-10)
        assert fit.values == pytest.approx([ref.params[n].value for n in "mcq"], rel=1e-6)
        assert fit.values[0] <= hi_slope
    assert fit.values[0] == pytest.approx(2.5, abs=1e-6)


@pytest.mark.parametrize("r", [0.5, 2.0])
def test_edge_residual_and_jacobian_equal_the_formula(r):
    """The residual and analytic Jacobian of the single-edge fits (edgefit.edge.models)
    against the formula edge_model_alpha on both sides of the joining energy (synthetic
    values, any will do): the residual to rounding, the Jacobian to central differences of
    that formula (1e-5: step 1e-6 relative, error O(h²) plus rounding of ~1e-10/h)."""
    from edgefit.edge import models
    e = np.linspace(0.8, 3.0, 120)
    la = np.log(edge_model_alpha(e, 1.9, 0.04, 2e4, r) + 3.0) + 0.01 * np.sin(7 * e)
    theta = np.array([1.5, 0.05, 1.85, np.log(3e4)])

    def ln_model(th):
        return np.log(edge_model_alpha(e, th[2], th[1], np.exp(th[3]), r) + th[0])
    np.testing.assert_allclose(models.edge_log_residual(e, la, r, theta), ln_model(theta) - la,
                               rtol=0, atol=1e-12)
    jac = models.edge_log_jacobian(e, r, theta)
    for k in range(4):
        h = 1e-6 * max(abs(theta[k]), 1e-2)
        up, down = theta.copy(), theta.copy()
        up[k] += h
        down[k] -= h
        # the kink at Et: d ln α/dθ is continuous there (slope-matched), so no point is skipped
        np.testing.assert_allclose(jac[:, k], (ln_model(up) - ln_model(down)) / (2 * h),
                                   rtol=1e-5, atol=1e-7, err_msg=f"parameter {k}")
    # a model that cannot be logged (negative background) gives the residual its fixed
    # penalty and the Jacobian zeros, never NaN
    bad = models.edge_log_residual(e, la, r, np.r_[-1e9, theta[1:]])
    assert np.all(bad == 50.0)
    assert np.all(np.isfinite(models.edge_log_jacobian(e, r, np.r_[-1e9, theta[1:]])))
