"""Ephemeris fitting checked against numpy.polyfit, scipy curve_fit, Monte Carlo draws and seeded data."""

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import curve_fit

import vigil  # noqa: F401  (configures astropy offline before anything else)
from authorities import ephemeris as ref
from vigil.ephemeris.fitting import OUTLIER_RULE, choose_model, fit_polynomial
from vigil.ephemeris.models import PolynomialEphemeris, linear_ephemeris
from vigil.ephemeris.refit import refit_targets

T0_BJD_TDB = 2459001.23456
PERIOD_D = ref.DECAY_PERIOD_D


def _decaying(rng, epochs, errors_d, dp_dn_d=ref.DECAY_DP_DN_D):
    return T0_BJD_TDB + epochs * PERIOD_D + 0.5 * epochs**2 * dp_dn_d + rng.normal(0.0, errors_d)


def _setup(seed, n=40, span=4000):
    rng = np.random.default_rng(seed)
    epochs = np.sort(rng.choice(np.arange(0, span), size=n, replace=False)).astype(float)
    errors = rng.uniform(0.3, 1.5, size=n) / 1440.0
    return rng, epochs, errors


def test_quadratic_matches_polyfit_and_curve_fit():
    # Reference: numpy.polyfit (w = 1/sigma, cov="unscaled") and scipy.optimize.curve_fit
    # (sigma, absolute_sigma=True) on the same weighted data (numpy and scipy documentation):
    # mid-times and their sigma agree to 1e-10 d (tests/authorities/ephemeris.py). All three fit
    # O - C, the times less a nominal linear ephemeris: a full BJD holds only ~5e-10 d in a double.
    rng, epochs, errors = _setup(1)
    o_minus_c = _decaying(rng, epochs, errors) - (T0_BJD_TDB + epochs * PERIOD_D)
    fit = fit_polynomial(epochs, o_minus_c, errors, degree=2)
    coefficients, cov = np.polyfit(epochs, o_minus_c, 2, w=1.0 / errors, cov="unscaled")
    # curve_fit iterates (Levenberg-Marquardt): epochs in thousands and tight tolerances let it converge.
    parabola = lambda n, a, b, c: a + b * (n / 1e3) + c * (n / 1e3) ** 2  # noqa: E731
    popt, _ = curve_fit(parabola, epochs, o_minus_c, sigma=errors, absolute_sigma=True, p0=[0.0, 0.0, 0.0],
                        xtol=1e-15, ftol=1e-15, gtol=1e-15)
    probe = np.array([-500.0, 0.0, 1234.0, 4000.0, 8000.0])
    ours = fit.ephemeris.mid_bjd_tdb(probe)
    np.testing.assert_allclose(ours, np.polyval(coefficients, probe), rtol=0, atol=ref.AGREEMENT_D)
    np.testing.assert_allclose(ours, parabola(probe, *popt), rtol=0, atol=ref.AGREEMENT_D)
    basis = np.column_stack([probe**2, probe, np.ones_like(probe)])
    sigma_polyfit = np.sqrt(np.einsum("ij,jk,ik->i", basis, cov, basis))
    np.testing.assert_allclose(fit.ephemeris.mid_sigma_d(probe), sigma_polyfit, rtol=1e-6, atol=ref.AGREEMENT_D)
    assert fit.ephemeris.dp_dn_d == pytest.approx(2 * coefficients[0], rel=1e-6)


def test_quadratic_sigma_matches_monte_carlo_of_its_covariance():
    # Independent check: draw (T0, P, dP/dN) from their covariance (seeded) and measure the spread
    # of T(n) directly; a sample sd is good to sigma / sqrt(2 (N - 1)) (tests/authorities/ephemeris.py).
    sigma = np.array([3e-4, 2e-6, 4e-9])
    correlation = np.array([[1.0, -0.6, 0.3], [-0.6, 1.0, -0.8], [0.3, -0.8, 1.0]])
    covariance = correlation * np.outer(sigma, sigma)
    model = PolynomialEphemeris(T0_BJD_TDB, PERIOD_D, -1e-9, covariance, t0_epoch=500)
    draws = 200_000
    rng = np.random.default_rng(2027)
    t0, period, dp_dn = rng.multivariate_normal([0.0, PERIOD_D, -1e-9], covariance, size=draws).T
    for n in (-2000, 0, 500, 1700, 9000):
        k = n - 500
        measured = np.std(t0 + k * period + 0.5 * k * k * dp_dn, ddof=1)
        predicted = float(model.mid_sigma_d(n))
        assert abs(measured - predicted) < 5 * predicted / np.sqrt(2 * (draws - 1)), n


def test_known_decay_is_recovered_and_chosen():
    # Seeded timings with the decay of tests/authorities/ephemeris.py: the true dP/dN lies within
    # 3 sigma in nearly every seed (3 sigma covers 99.7 %), the quadratic is chosen by the BIC rule,
    # and no timing is removed as an outlier because the data are curved.
    within, chosen, removed = 0, 0, 0
    seeds = 50
    for seed in range(seeds):
        rng, epochs, errors = _setup(seed, n=159)
        choice = choose_model(epochs, _decaying(rng, epochs, errors), errors)
        within += abs(choice.quadratic.ephemeris.dp_dn_d - ref.DECAY_DP_DN_D) < 3 * choice.quadratic.ephemeris.dp_dn_err_d
        chosen += choice.chosen is choice.quadratic
        removed += int(choice.removed.sum())
    assert chosen == seeds and removed == 0
    assert within >= seeds - 2


def test_decay_rate_in_ms_per_year_matches_the_published_anchor():
    # Yee et al. 2020 (tests/authorities/ephemeris.py): dP/dN = -1.0e-9 d per orbit at P = 1.0914 d
    # is dP/dt of about -29 ms/yr. Noise-free timings give back the rate in the units observers quote.
    epochs = np.arange(0, 4000, 25, dtype=float)
    times = T0_BJD_TDB + epochs * PERIOD_D + 0.5 * epochs**2 * ref.DECAY_DP_DN_D
    rate, rate_err = choose_model(epochs, times, np.full(epochs.size, 2e-4)).chosen.dp_dt_ms_yr
    assert abs(rate - ref.DECAY_RATE_MS_YR) < ref.DECAY_RATE_ERR_MS_YR
    assert rate_err > 0


def test_linear_data_choose_the_linear_model():
    # Seeded linear timings: the linear model is chosen in at least 95 % of 200 seeds (issue check,
    # tests/authorities/ephemeris.py; BIC margin of Kass & Raftery 1995).
    linear = 0
    for seed in range(200):
        rng, epochs, errors = _setup(seed, n=20, span=3000)
        times = T0_BJD_TDB + epochs * PERIOD_D + rng.normal(0.0, errors)
        choice = choose_model(epochs, times, errors)
        linear += choice.chosen is choice.linear
    assert linear / 200 >= ref.LINEAR_CHOSEN_AT_LEAST


@pytest.mark.parametrize("offset_d", [0.02, 0.1, 0.2, -0.25])
@pytest.mark.parametrize("seed", [0, 1, 2, 3])
@pytest.mark.parametrize("prior", [True, False])
def test_one_gross_outlier_is_removed_and_the_good_timings_kept(offset_d, seed, prior):
    # Four to seven good timings plus one mistyped by offset_d: only the bad one is removed (with its
    # rule named), and the refitted period agrees with the fit to the good ones alone.
    rng = np.random.default_rng(seed)
    n_good = 4 + seed
    epochs = np.sort(rng.choice(np.arange(0, 300), size=n_good + 1, replace=False)).astype(float)
    errors = rng.uniform(0.3, 1.0, epochs.size) / 1440.0
    times = T0_BJD_TDB + epochs * PERIOD_D + rng.normal(0.0, errors)
    bad = int(rng.integers(0, epochs.size))
    times[bad] += offset_d
    catalogue = pd.DataFrame({"name": ["b"], "ra_deg": [1.0], "dec_deg": [2.0], "t0_bjd_tdb": [T0_BJD_TDB],
                              "t0_err_d": [5e-4], "period_d": [PERIOD_D], "period_err_d": [2e-5], "duration_h": [2.0]})
    timings = pd.DataFrame({"target": "b", "mid_bjd_tdb": times, "mid_err_d": errors})
    result = refit_targets(timings, catalogue, use_prior=prior)
    oc = result.o_minus_c.sort_values("mid_bjd_tdb")
    removed = ~oc["used_in_fit"].to_numpy()
    assert np.flatnonzero(removed).tolist() == [bad]
    assert oc["removed_by"].iloc[bad] == OUTLIER_RULE
    good = np.delete(np.arange(epochs.size), bad)
    alone = fit_polynomial(epochs[good], times[good], errors[good], 1).ephemeris
    refitted = result.targets.iloc[0]
    assert abs(refitted["period_d"] - alone.period_d) < 3 * alone.period_err_d


@settings(max_examples=60, deadline=None)
@given(t0_err_d=st.floats(1e-4, 5e-3), period_err_d=st.floats(1e-7, 1e-4), correlation=st.floats(-0.95, 0.95),
       first=st.integers(-200, 2000), count=st.integers(1, 8), gap=st.integers(1, 300),
       error_d=st.floats(2e-4, 1e-2))
def test_prior_never_increases_sigma_for_consistent_timings(t0_err_d, period_err_d, correlation, first, count, gap,
                                                           error_d):
    # Information update: adding timings that agree with the catalogue can only shrink the
    # covariance (C_new = (C^-1 + A^T W A)^-1 <= C), so sigma_T never grows at any epoch
    # (standard Gaussian update, common practice, no source).
    cov = correlation * t0_err_d * period_err_d
    catalogue = linear_ephemeris(T0_BJD_TDB, t0_err_d, PERIOD_D, period_err_d, cov)
    epochs = first + gap * np.arange(count)
    times = catalogue.mid_bjd_tdb(epochs)
    choice = choose_model(epochs, times, np.full(count, error_d), prior=catalogue)
    assert not choice.removed.any()
    probe = np.concatenate([np.arange(-3000, 30000, 997), epochs])
    assert np.all(choice.chosen.ephemeris.mid_sigma_d(probe) <= catalogue.mid_sigma_d(probe) * (1 + 1e-9))


def test_ephemeris_package_examples_run_and_it_imports_no_visibility():
    # The numpydoc examples of the ephemeris package are executed as doctests (Python's doctest
    # module), and the package sits upstream of visibility: nothing in it imports that stage.
    import doctest
    import importlib
    import pkgutil

    import vigil.ephemeris as package

    for info in pkgutil.iter_modules(package.__path__):
        module = importlib.import_module(f"vigil.ephemeris.{info.name}")
        assert doctest.testmod(module).failed == 0, info.name
        source = open(module.__file__, encoding="utf-8").read()
        assert "vigil.visibility" not in source and "from vigil import visibility" not in source, info.name
