"""The window-search machinery (edgefit.edge.windows) against plain numpy (synthetic data)."""
import numpy as np
import pytest

from edgefit.edge.kernels import resample_indices
from edgefit.edge.windows import (WindowCriteria, bootstrap_line, fit_line, line_intercepts,
                                  stretches, weights_from_sd, window_nodes, window_table)


@pytest.fixture
def line_data():
    # synthetic: a straight Tauc-like rise from 2.0 eV, bent quadratically above 2.6 eV
    rng = np.random.default_rng(3)
    x = np.linspace(1.8, 3.0, 121)
    y = np.clip(x - 2.0, 0, None) * 10 + np.where(x > 2.6, 25 * (x - 2.6) ** 2, 0)
    sd = 0.01 + 0.001 * y
    return x, y + rng.normal(0, sd), sd


def test_prefix_sum_statistics_equal_weighted_polyfit(line_data):
    x, y, sd = line_data
    crit = WindowCriteria(min_span_ev=0.0, min_points=4)
    nodes = np.arange(0, x.size, 10)
    t = window_table(x, y, sd, nodes, crit, tauc=True)
    w = weights_from_sd(sd, y)
    with_rms = 0
    for k in range(0, t.i.size, 3):
        i, j = t.i[k], t.j[k]
        m, c = np.polyfit(x[i:j + 1], y[i:j + 1], 1, w=np.sqrt(w[i:j + 1]))
        assert t.slope[k] == pytest.approx(m, rel=1e-8, abs=1e-9)
        assert t.intercept[k] == pytest.approx(c, rel=1e-8, abs=1e-8)
        if np.isnan(t.rms[k]):
            # no residual statistics: the window already fails a test that needs none
            lo, hi, x0 = x[i], x[j], -c / m
            assert not (m > 0 and 0.5 * lo <= x0 < lo
                        and hi - lo >= crit.min_coverage * (hi - x0)
                        and m * (hi - lo) >= crit.min_snr * t.sigma[k]
                        and np.interp(x0, x, y) <= crit.max_foot_fraction * y[j])
            assert not t.accepted[k]
            continue
        with_rms += 1
        rms = np.sqrt(np.mean((y[i:j + 1] - (m * x[i:j + 1] + c)) ** 2))
        assert t.rms[k] == pytest.approx(rms, rel=1e-6, abs=1e-9)
    assert with_rms >= 5


def test_the_straight_part_is_found_and_the_bent_part_left_out(line_data):
    x, y, sd = line_data
    t = window_table(x, y, sd, window_nodes(x, np.exp(y / 10), 160), WindowCriteria(),
                     tauc=True)
    acc, groups = stretches(t, nearest_onset=True)
    first = min(groups, key=lambda g: acc.lo_ev[g.best])
    k = first.best
    assert acc.x_intercept[k] == pytest.approx(2.0, abs=0.01)
    assert acc.lo_ev[k] >= 2.0 and acc.hi_ev[k] <= 2.75


def test_fit_line_error_and_bootstrap_are_consistent_and_reproducible(line_data):
    x, y, sd = line_data
    i, j = np.searchsorted(x, 2.1), np.searchsorted(x, 2.5)
    fit = fit_line(x, y, sd, i, j)
    assert fit.x_intercept == pytest.approx(2.0, abs=0.01)
    _, x0a = bootstrap_line(x, y, sd, fit, n_boot=300, seed=1)
    _, x0b = bootstrap_line(x, y, sd, fit, n_boot=300, seed=1)
    assert np.array_equal(x0a, x0b)                      # fixed seed: same to the last digit
    # bootstrap sd and the delta-method error agree within a factor 2 (same noise model)
    assert 0.5 < np.std(x0a, ddof=1) / fit.x_intercept_err < 2.0


def test_a_curve_has_no_acceptable_window_when_it_is_clean():
    # synthetic: y = (x − 2)^4 is curved everywhere; no window passes 0.5 % straightness
    x = np.linspace(2.05, 3.0, 96)
    y = (x - 2.0) ** 4
    t = window_table(x, y, np.full(x.size, 1e-9), np.arange(x.size), WindowCriteria(),
                     tauc=True)
    assert not t.accepted.any()


def test_line_intercepts_equal_fit_line_for_many_windows(line_data):
    x, y, sd = line_data
    i = np.array([10, 20, 21, 35, 50])
    j = np.array([30, 44, 60, 70, 90])
    got = line_intercepts(x, y, sd, i, j)
    want = [fit_line(x, y, sd, a, b).x_intercept for a, b in zip(i, j)]
    assert got == pytest.approx(want, rel=1e-10)
    # reference library: numpy.polyfit with weights 1/σ
    for k, (a, b) in enumerate(zip(i, j)):
        m, c = np.polyfit(x[a:b + 1], y[a:b + 1], 1, w=1.0 / sd[a:b + 1])
        assert got[k] == pytest.approx(-c / m, rel=1e-9)


def test_a_line_through_the_origin_is_no_edge():
    # synthetic: y ∝ E over 1–2 eV is perfectly straight, but its intercept is 0 eV (no gap);
    # shifted to start at 1.0 eV it is an edge at 1.0 eV, found as such
    x = np.linspace(1.0, 2.0, 101)
    sd = np.full(x.size, 1e-3)
    crit = WindowCriteria()
    nodes = np.arange(x.size)
    assert not window_table(x, 10 * x, sd, nodes, crit, tauc=True).accepted.any()
    e = np.linspace(0.9, 2.0, 111)
    y = 10 * np.clip(e - 1.0, 0, None)
    t = window_table(e, y, np.full(e.size, 1e-3), np.arange(e.size), crit, tauc=True)
    assert t.accepted.any()
    assert np.allclose(t.x_intercept[t.accepted], 1.0, atol=1e-9)


def test_bootstrap_resamples_are_plain_weighted_refits(line_data):
    """Reference library: numpy.polyfit. Each bootstrap resample (residuals r/σ resampled with
    the seed's indices, put back with each point's own σ) refitted by numpy.polyfit with
    weights 1/σ gives the slope and intercept that the vectorised bootstrap reports."""
    from edgefit.edge.windows import weights_from_sd
    x, y, sd = line_data
    i, j = np.searchsorted(x, 2.1), np.searchsorted(x, 2.5)
    fit = fit_line(x, y, sd, i, j)
    m, x0 = bootstrap_line(x, y, sd, fit, n_boot=50, seed=7)
    xs, ys = x[i:j + 1], y[i:j + 1]
    s = 1.0 / np.sqrt(weights_from_sd(sd[i:j + 1], y))
    yhat = fit.slope * xs + fit.intercept
    z = (ys - yhat) / s
    z = (z - z.mean()) * np.sqrt(xs.size / (xs.size - 2))
    pick = resample_indices(7, 50, xs.size)
    for b in range(50):
        mb, cb = np.polyfit(xs, yhat + s * z[pick[b]], 1, w=1.0 / s)
        assert m[b] == pytest.approx(mb, rel=1e-9)
        assert x0[b] == pytest.approx(-cb / mb, rel=1e-9)


def test_fit_line_equals_weighted_polyfit_and_curve_fit(line_data):
    """Reference libraries: numpy.polyfit (line) and scipy.optimize.curve_fit (errors, with
    absolute_sigma=False: the covariance scaled by the reduced χ²)."""
    from scipy.optimize import curve_fit
    x, y, sd = line_data
    for i, j in ((20, 60), (30, 45), (0, 120)):
        fit = fit_line(x, y, sd, i, j)
        xs, ys, s = x[i:j + 1], y[i:j + 1], sd[i:j + 1]
        m, c = np.polyfit(xs, ys, 1, w=1.0 / s)
        assert (fit.slope, fit.intercept) == pytest.approx((m, c), rel=1e-9)
        p, cov = curve_fit(lambda v, a, b: a * v + b, xs, ys, p0=(m, c), sigma=s,
                           absolute_sigma=fit.chi2_red < 1)
        assert fit.slope_err == pytest.approx(np.sqrt(cov[0, 0]), rel=1e-6)
        assert fit.intercept_err == pytest.approx(np.sqrt(cov[1, 1]), rel=1e-6)
        res = ys - (m * xs + c)
        assert fit.rms == pytest.approx(np.sqrt(np.mean(res ** 2)), rel=1e-9)
        assert fit.chi2_red == pytest.approx(np.sum((res / s) ** 2) / (xs.size - 2), rel=1e-9)


def test_resample_indices_are_uniform_and_reproducible():
    """Synthetic: 200 resamples of 150 points. Every index equally likely (χ² test over the
    150 counts, 149 degrees of freedom: 0.1 % critical value 210, from scipy.stats.chi2), the
    same seed the same indices, another seed others."""
    from scipy.stats import chi2
    a = resample_indices(11, 200, 150)
    assert a.shape == (200, 150) and a.min() >= 0 and a.max() <= 149
    assert np.array_equal(a, resample_indices(11, 200, 150))
    assert not np.array_equal(a, resample_indices(12, 200, 150))
    counts = np.bincount(a.ravel(), minlength=150)
    expected = a.size / 150
    stat = float(np.sum((counts - expected) ** 2 / expected))
    assert stat < chi2.ppf(0.999, 149)
    # resamples are not copies of each other: pairs of rows agree at about 1/150 of places
    same = np.mean(a[1:] == a[:-1])
    assert 0.3 / 150 < same < 3 / 150
