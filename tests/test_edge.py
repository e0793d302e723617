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
def test_compiled_edge_residual_and_jacobian_equal_the_formula(r):
    """The compiled loops of the edge fits (edgefit.edge.kernels) against the numpy formula
    edge_model_alpha on both sides of the joining energy (synthetic values, any will do): the
    residual to rounding (1e-12 of ln α; the two evaluate pow/exp/log in the same order, but
    numpy's vectorised exp and log may differ from libm in the last bit), the Jacobian to
    central differences of that formula (1e-5: step 1e-6 relative, error O(h²) plus rounding
    of ~1e-10/h)."""
    from edgefit.edge import kernels
    e = np.linspace(0.8, 3.0, 120)
    la = np.log(edge_model_alpha(e, 1.9, 0.04, 2e4, r) + 3.0) + 0.01 * np.sin(7 * e)
    theta = np.array([1.5, 0.05, 1.85, np.log(3e4)])

    def ln_model(th):
        return np.log(edge_model_alpha(e, th[2], th[1], np.exp(th[3]), r) + th[0])
    np.testing.assert_allclose(kernels.edge_log_residual(e, la, r, *theta), ln_model(theta) - la,
                               rtol=0, atol=1e-12)
    jac = kernels.edge_log_jacobian(e, r, *theta)
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
    bad = kernels.edge_log_residual(e, la, r, -1e9, *theta[1:])
    assert np.all(bad == 50.0)
    assert np.all(np.isfinite(kernels.edge_log_jacobian(e, r, -1e9, *theta[1:])))


@pytest.mark.parametrize("r,eg,eu,amp,noise,errors,tol", [
    (0.5, 2.4, 0.03, 1e5, 0.01, True, 1e-7), (2.0, 1.1, 0.05, 3e3, 0.02, True, 1e-7),
    (0.5, 3.3, 0.08, 4e5, 0.05, False, 1e-4), (2.0, 1.6, 0.02, 1e4, 0.2, True, 1e-7),
    (0.5, 2.0, 0.15, 1e5, 0.0, True, 1e-7)])
def test_compiled_solver_takes_scipy_leastsqs_steps(r, eg, eu, amp, noise, errors, tol):
    """Reference library: scipy.optimize.leastsq (MINPACK lmder) through
    edgefit.edge.lsq.fit_bounded, with the same residual and Jacobian as Python callbacks.
    The compiled port of lmder (kernels.edge_lmder) must take the same path: the same number of
    evaluations, the same values and errors to rounding (synthetic, seeded data; the noisiest
    case and a start far off the truth included)."""
    from edgefit.edge import kernels, lsq
    e = np.linspace(eg - 0.5, eg + 0.6, 120)
    a = (edge_model_alpha(e, eg, eu, amp, r) + 2.0) \
        * np.exp(np.random.default_rng(5).normal(0, noise, e.size))
    la = np.log(a)
    v0 = np.array([0.2, 0.04, eg + 0.1, np.log(amp) - 1.0])
    lo = np.array([0.0, 0.002, eg - 1.0, -np.inf])
    hi = np.array([2 * a.min(), 0.5, e.max(), np.inf])
    calls = []

    def residual(th):
        calls.append(1)
        return kernels.edge_log_residual(e, la, r, *th)

    def jacobian(th):
        return kernels.edge_log_jacobian(e, r, *th)
    ref = lsq.fit_bounded(residual, v0, lo, hi, jacobian=jacobian, ftol=tol, xtol=tol,
                          errors=errors)
    ours = lsq.fit_edge_model(e, la, r, v0, lo, hi, ftol=tol, xtol=tol, errors=errors)
    bounds = lsq._Bounds(lo, hi)
    nfev = kernels.edge_lmder(e, la, r, bounds.to_internal(v0), bounds.kind, bounds.lo,
                              bounds.hi, tol, tol, 2000, lsq.FACTOR)[3]
    # the same evaluations (fit_bounded remembers its last point: leastsq's check of the
    # start and the final residual cost no evaluation of their own)
    assert nfev == len(calls)
    assert ours.success == ref.success
    assert ours.values == pytest.approx(ref.values, rel=1e-10, abs=1e-14)
    assert ours.residual == pytest.approx(ref.residual, rel=1e-8, abs=1e-12)
    if errors:
        assert ours.stderr == pytest.approx(ref.stderr, rel=1e-8)
    else:
        assert ours.stderr is None and ref.stderr is None


def test_compiled_errors_equal_the_inverse_normal_matrix():
    """Reference library: numpy.linalg.inv. The errors of the compiled fit come from MINPACK's
    R factor (JP = QR): diag(P (RᵀR)⁻¹ Pᵀ) times the squared MINUIT gradient and the reduced
    χ² must equal that formula with numpy's inverse (seeded, synthetic R; a singular R gives
    no errors)."""
    from edgefit.edge import kernels
    rng = np.random.default_rng(11)
    for _ in range(5):
        n = 4
        rfac = np.triu(rng.normal(size=(n, n))) + np.diag(rng.uniform(0.5, 2.0, n))
        rfac += np.tril(rng.normal(size=(n, n)), -1)     # below the diagonal: ignored
        ipvt = rng.permutation(n)
        u = rng.normal(size=n)
        lo, hi = np.array([0.0, 0.002, 1.0, -np.inf]), np.array([3.0, 0.5, 4.0, np.inf])
        kind = kernels.minuit_kinds(lo, hi)
        res = rng.normal(size=30)
        ok, err = kernels.leastsq_stderr(rfac, ipvt, u, kind, lo, hi, res)
        r = np.triu(rfac)
        p = np.zeros((n, n))
        p[ipvt, np.arange(n)] = 1.0                       # J P = Q R: column k of JP is ipvt[k]
        cov = p @ np.linalg.inv(r.T @ r) @ p.T
        g = kernels.minuit_gradient(u, kind, lo, hi)
        expected = np.sqrt(np.diag(cov) * g * g * (res @ res) / (res.size - n))
        assert ok
        np.testing.assert_allclose(err, expected, rtol=1e-12)
    rfac[2, 2] = 0.0
    assert not kernels.leastsq_stderr(rfac, ipvt, u, kind, lo, hi, res)[0]


def test_compiled_tauc_ordinate_and_weights_equal_numpy():
    """Reference library: numpy. The compiled Tauc ordinate of the allowed transitions must be
    numpy's np.where(p > 0, |p|**(1/r), nan) bit for bit (tauc_ordinate of all four, too),
    and the compiled weights numpy's 1/max(σ, 1e-9·max|y|)² (zeros, negatives, inf, NaNs
    and a zero σ included; synthetic values over 600 orders of magnitude)."""
    from edgefit.edge import kernels
    from edgefit.edge.tauc import EXPONENT_R, tauc_ordinate
    rng = np.random.default_rng(4)
    p = np.exp(rng.uniform(-300, 300, 20000))
    p[:50] = 0.0
    p[50:60] = -1.0
    p[60] = np.nan
    p[61], p[62] = np.inf, -np.inf
    for tr, r in EXPONENT_R.items():
        with np.errstate(invalid="ignore"):
            want = np.where(p > 0, np.abs(p) ** (1.0 / r), np.nan)
        if r in (0.5, 2.0):
            assert np.array_equal(kernels.positive_power(p, 1.0 / r), want, equal_nan=True), r
        assert np.array_equal(tauc_ordinate(np.ones_like(p), p, tr), want, equal_nan=True), r
    for case in range(5):
        y = rng.normal(size=300) * 10 ** rng.uniform(-5, 5)
        sd = np.abs(rng.normal(size=300)) * 10 ** rng.uniform(-15, 2)
        if case == 1:
            y[:] = 0.0
        if case == 2:
            sd[5] = np.nan
        if case == 3:
            y[7] = np.nan
        if case == 4:
            sd[3] = 0.0
        floor = 1e-9 * (np.max(np.abs(y)) or 1.0)
        want = 1.0 / np.maximum(sd, floor) ** 2
        assert np.array_equal(kernels.inverse_variance(sd, y), want, equal_nan=True), case
