"""Linear ephemeris: mid-times, epochs in a range and the propagated mid-time uncertainty."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from vigil.ephemeris.models import epochs_between, linear_ephemeris, mid_sigma_d
from vigil.ephemeris.projection import project_transits

T0_BJD_TDB = 2460412.33710
PERIOD_D = 1.7364020


def _propagated_sigma_d(n, sigma_t0_d, sigma_p_d, cov_d2):
    """sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2 + 2 n cov(T0, P) (standard error propagation)."""
    return np.sqrt(sigma_t0_d**2 + n**2 * sigma_p_d**2 + 2 * n * cov_d2)


@pytest.mark.parametrize("correlation", [-0.9, 0.0, 0.6])
def test_sigma_follows_error_propagation(correlation):
    sigma_t0, sigma_p = 4e-4, 1.1e-6
    cov = correlation * sigma_t0 * sigma_p
    n = np.array([-3000, -250, -1, 0, 1, 17, 400, 5000])
    # Standard first-order error propagation of T(n) = T0 + n P.
    expected = _propagated_sigma_d(n.astype(float), sigma_t0, sigma_p, cov)
    np.testing.assert_allclose(mid_sigma_d(n, sigma_t0, sigma_p, cov), expected, rtol=1e-12)


def test_sigma_matches_monte_carlo_of_correlated_t0_and_period():
    # Independent check: draw (T0, P) from the bivariate normal and measure the spread of
    # T0 + n P directly (seeded). The standard error of a sample standard deviation is
    # sigma / sqrt(2 (N - 1)) for normal data (common practice, no source); allow 5 of them.
    sigma_t0, sigma_p, correlation = 2.1e-3, 4.0e-5, -0.7
    cov = correlation * sigma_t0 * sigma_p
    draws = 200_000
    rng = np.random.default_rng(20270101)
    t0, period = rng.multivariate_normal([0.0, 12.6], [[sigma_t0**2, cov], [cov, sigma_p**2]], size=draws).T
    for n in (-80, 0, 30, 52, 400):
        measured = np.std(t0 + n * period, ddof=1)
        predicted = mid_sigma_d(n, sigma_t0, sigma_p, cov)
        assert abs(measured - predicted) < 5 * predicted / np.sqrt(2 * (draws - 1)), n


def test_epochs_between_includes_both_ends_on_a_mid_time():
    # A range that starts and ends exactly on predicted mid-times holds both of them
    # (the inclusive definition in the docstring, start <= T0 + nP <= end).
    for first, last in [(1, 1), (3, 10), (-7, 5), (1000, 1200), (-40000, -39990)]:
        start = T0_BJD_TDB + first * PERIOD_D
        end = T0_BJD_TDB + last * PERIOD_D
        np.testing.assert_array_equal(epochs_between(linear_ephemeris(T0_BJD_TDB, 0.0, PERIOD_D, 0.0), start, end), np.arange(first, last + 1))


@settings(max_examples=200, deadline=None)
@given(t0=st.floats(2.4e6, 2.47e6), period=st.floats(0.2, 400.0),
       offset=st.floats(-2e4, 2e4), length=st.floats(1e-6, 3e3))
def test_epochs_between_are_exactly_the_mids_inside(t0, period, offset, length):
    # Definition check: every returned epoch lies in [start, end], and its neighbours outside
    # do not (common practice, no source: the set of integers n with start <= T0 + nP <= end).
    start = t0 + offset
    end = start + length
    epochs = epochs_between(linear_ephemeris(t0, 0.0, period, 0.0), start, end)
    mids = t0 + epochs * period
    assert np.all((mids >= start) & (mids <= end))
    below = epochs[0] - 1 if epochs.size else int(np.floor((start - t0) / period))
    above = epochs[-1] + 1 if epochs.size else below + 1
    assert t0 + below * period < start
    assert t0 + above * period > end


@settings(max_examples=100, deadline=None)
@given(t0=st.floats(2.45e6, 2.47e6), period=st.floats(0.3, 100.0), span=st.floats(1.0, 2000.0),
       sigma_t0=st.floats(0.0, 0.01), sigma_p=st.floats(0.0, 1e-3))
def test_mid_times_strictly_increase_with_epoch(make_targets, t0, period, span, sigma_t0, sigma_p):
    # T(n) = T0 + nP with P > 0 is strictly increasing in n (linear ephemeris).
    targets = make_targets({"name": "Brisa-1 b", "ra_deg": 10.0, "dec_deg": 5.0, "t0_bjd_tdb": t0,
                            "period_d": period, "t0_err_d": sigma_t0, "period_err_d": sigma_p,
                            "duration_h": 0.1})
    transits = project_transits(targets, t0 - span / 2, t0 + span / 2)
    assert np.all(np.diff(transits["epoch"].to_numpy()) == 1)
    assert np.all(np.diff(transits["mid_bjd_tdb"].to_numpy()) > 0)


@settings(max_examples=200, deadline=None)
@given(sigma_t0=st.floats(1e-5, 0.01), sigma_p=st.floats(1e-8, 1e-3), correlation=st.floats(-1.0, 1.0),
       epochs=st.lists(st.integers(-20000, 20000), min_size=2, max_size=30))
def test_sigma_never_decreases_away_from_its_minimum(sigma_t0, sigma_p, correlation, epochs):
    # The propagated variance is a parabola in n with its minimum at n_min = -cov / sigma_P^2
    # (standard error propagation), so sigma grows with |n - n_min| for any |cov| <= sigma_T0 sigma_P.
    cov = correlation * sigma_t0 * sigma_p
    n = np.array(sorted(set(epochs), key=lambda e: abs(e + cov / sigma_p**2)), dtype=float)
    sigma = mid_sigma_d(n, sigma_t0, sigma_p, cov)
    assert np.all(np.diff(sigma) >= -1e-12 * sigma[1:])
