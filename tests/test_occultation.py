"""Occultation timing and duration checked against independent orbit computations."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq, minimize_scalar

import vigil  # noqa: F401  (configures astropy offline before anything else)
from vigil.errors import InputError
from vigil.ephemeris.occultation import (
    occultation_duration_h,
    occultation_mid_bjd_tdb,
    occultation_offset_approx_d,
    occultation_offset_exact_d,
)

PERIOD_D = 3.7


def _true_anomaly_rad(t_d, e, period_d):
    """Independent orbit: Kepler's equation M = E - e sin E solved by scipy brentq (|E - M| <= e)."""
    mean = 2.0 * np.pi * t_d / period_d
    ecc = brentq(lambda x: x - e * np.sin(x) - mean, mean - e - 1e-9, mean + e + 1e-9, xtol=1e-15)
    return 2.0 * np.arctan2(np.sqrt(1 + e) * np.sin(ecc / 2), np.sqrt(1 - e) * np.cos(ecc / 2))


def _conjunction_times_d(e, omega_deg, period_d):
    """Times after periastron when cos(omega + f) = 0, i.e. X = 0 in Winn 2010 eq. 1 (from memory).

    Found by brentq on a time grid: Z > 0 (sin(omega + f) > 0) is the transit, Z < 0 the occultation.
    """
    omega = np.radians(omega_deg)
    grid = np.linspace(0.0, period_d, 65)
    x_of_t = lambda t: np.cos(omega + _true_anomaly_rad(t, e, period_d))  # noqa: E731
    values = [x_of_t(t) for t in grid]
    times = {}
    for t_lo, t_hi, v_lo, v_hi in zip(grid[:-1], grid[1:], values[:-1], values[1:]):
        if v_lo * v_hi < 0:
            t = brentq(x_of_t, t_lo, t_hi, xtol=1e-13)
            side = "tr" if np.sin(omega + _true_anomaly_rad(t, e, period_d)) > 0 else "occ"
            times[side] = t
    return times["tr"], times["occ"]


def _sterne_offset_d(period_d, e, omega_deg):
    """Closed form (Sterne 1940, from memory): (P/pi)[atan(e cos w / sqrt(1-e^2)) + sqrt(1-e^2) e cos w / (1 - e^2 sin^2 w)]."""
    w = np.radians(omega_deg)
    s = np.sqrt(1 - e**2)
    return period_d / np.pi * (np.arctan(e * np.cos(w) / s) + s * e * np.cos(w) / (1 - e**2 * np.sin(w) ** 2))


def test_zero_eccentricity_gives_zero_offset():
    # Circular orbit: conjunctions exactly half a period apart (geometry, common practice, no source).
    omegas = np.linspace(0, 360, 13)
    assert np.all(np.abs(occultation_offset_exact_d(PERIOD_D, 0.0, omegas)) < 1e-12)
    assert np.all(np.abs(occultation_offset_approx_d(PERIOD_D, 0.0, omegas, 87.0)) < 1e-15)


@pytest.mark.parametrize("omega_deg", [90.0, 270.0])
def test_zero_e_cos_omega_gives_zero_first_order_offset(omega_deg):
    # Winn 2010 eq. 33 (from memory): the offset is proportional to e cos(omega).
    assert abs(occultation_offset_approx_d(PERIOD_D, 0.4, omega_deg, 85.0)) < 1e-12
    # The exact offset vanishes too: the line of apsides lies along the line of sight, so the
    # orbit is symmetric about it (geometry, common practice, no source).
    assert abs(occultation_offset_exact_d(PERIOD_D, 0.4, omega_deg)) < 1e-12


def test_small_e_approximation_error_is_third_order():
    # Winn 2010 eq. 33 is first order in e; the offset is odd in e cos(omega) (from
    # antisymmetry under omega -> omega + 180 deg), so the relative error must scale as e^2.
    omega_deg = 35.0
    rel_err = {}
    for e in (0.01, 0.02):
        exact = occultation_offset_exact_d(PERIOD_D, e, omega_deg)
        approx = occultation_offset_approx_d(PERIOD_D, e, omega_deg, 90.0)
        rel_err[e] = abs(approx - exact) / abs(exact)
    assert rel_err[0.01] < 0.01  # relative difference below e
    assert rel_err[0.02] / rel_err[0.01] == pytest.approx(4.0, rel=0.02)


@pytest.mark.parametrize("omega_deg", [0.0, 20.0, 130.0, 200.0, 310.0])
def test_exact_offset_matches_brentq_kepler_solution_at_e_0p3(omega_deg):
    # Independent computation: Kepler's equation and the conjunction condition both solved with
    # scipy.optimize.brentq; plus the closed form of Sterne (1940, from memory).
    e = 0.3
    t_tr, t_occ = _conjunction_times_d(e, omega_deg, PERIOD_D)
    reference = np.mod(t_occ - t_tr, PERIOD_D) - PERIOD_D / 2
    exact = occultation_offset_exact_d(PERIOD_D, e, omega_deg)
    assert exact == pytest.approx(reference, abs=1e-9)
    assert exact == pytest.approx(_sterne_offset_d(PERIOD_D, e, omega_deg), abs=1e-12)


def test_approximation_error_grows_with_eccentricity():
    # Winn 2010 eq. 33 (from memory) holds to first order: the error grows as e^3 in absolute terms.
    omega_deg = 20.0
    errors = [
        abs(occultation_offset_approx_d(PERIOD_D, e, omega_deg) - occultation_offset_exact_d(PERIOD_D, e, omega_deg))
        for e in (0.05, 0.1, 0.3)
    ]
    assert errors[0] < errors[1] < errors[2]
    assert errors[1] / errors[0] == pytest.approx(8.0, rel=0.1)
    assert errors[2] > 1e-3 * PERIOD_D  # no longer negligible at e = 0.3 (minutes for P of days)


@pytest.mark.parametrize(("e", "omega_deg", "inc_deg"), [(0.01, 30.0, 80.0), (0.05, 10.0, 85.0), (0.1, 60.0, 88.0)])
def test_mid_occultation_matches_minimum_projected_separation(e, omega_deg, inc_deg):
    # Independent: mid-eclipse = minimum of the projected separation
    # d^2 = r^2 [1 - sin^2(omega + f) sin^2 i] (Winn 2010 eqs. 1-3, from memory), minimised with
    # scipy around each conjunction, the true anomaly from the brentq Kepler solve.
    w, inc = np.radians(omega_deg), np.radians(inc_deg)

    def sep2(t):
        f = _true_anomaly_rad(t, e, PERIOD_D)
        r = (1 - e**2) / (1 + e * np.cos(f))
        return r**2 * (1 - np.sin(w + f) ** 2 * np.sin(inc) ** 2)

    t_tr0, t_occ0 = _conjunction_times_d(e, omega_deg, PERIOD_D)
    opts = {"xatol": 1e-11}
    t_tr = minimize_scalar(sep2, bounds=(t_tr0 - 0.05, t_tr0 + 0.05), method="bounded", options=opts).x
    t_occ = minimize_scalar(sep2, bounds=(t_occ0 - 0.05, t_occ0 + 0.05), method="bounded", options=opts).x
    reference = t_tr + np.mod(t_occ - t_tr, PERIOD_D)
    predicted = occultation_mid_bjd_tdb(t_tr, PERIOD_D, e, omega_deg, inc_deg)
    # Remaining error is O(e^2 cot^2 i) P; 5 s covers the cases here (measured worst ~0.1 s).
    assert predicted == pytest.approx(reference, abs=5.0 / 86400)


def test_duration_ratio_matches_sky_speeds_at_conjunction():
    # Independent: time for the planet to cross |X| < rho around each conjunction (brentq on
    # X(t) = +/- rho with the brentq Kepler solve), edge-on, rho small. Winn 2010 eq. 16 (from memory).
    e, omega_deg, rho = 0.3, 50.0, 1e-3
    w = np.radians(omega_deg)

    def x_of_t(t):
        f = _true_anomaly_rad(t, e, PERIOD_D)
        return -(1 - e**2) / (1 + e * np.cos(f)) * np.cos(w + f)

    def crossing_time(t_mid):
        lo, hi = t_mid - 0.02, t_mid + 0.02
        roots = [brentq(lambda t, s=s: x_of_t(t) - s * rho, lo, hi, xtol=1e-14) for s in (-1, 1)]
        return abs(roots[1] - roots[0])

    t_tr, t_occ = _conjunction_times_d(e, omega_deg, PERIOD_D)
    ratio = crossing_time(t_occ) / crossing_time(t_tr)
    assert occultation_duration_h(1.0, e, omega_deg) == pytest.approx(ratio, rel=1e-5)


@settings(max_examples=60, deadline=None)
@given(
    e=st.floats(0.0, 0.9),
    omega_deg=st.floats(-360.0, 360.0),
    inc_deg=st.floats(70.0, 110.0),
)
def test_offset_antisymmetric_under_half_turn_of_omega(e, omega_deg, inc_deg):
    # omega -> omega + 180 deg swaps the roles of transit and occultation (geometry, common practice,
    # no source), so the offset changes sign: exactly for the Kepler solve, and for eq. 33.
    exact = occultation_offset_exact_d(PERIOD_D, e, omega_deg)
    flipped = occultation_offset_exact_d(PERIOD_D, e, omega_deg + 180.0)
    # The offset lies in (-P/2, P/2); at |offset| -> P/2 the wrap is ambiguous, so skip that edge.
    if abs(abs(exact) - PERIOD_D / 2) > 1e-9:
        assert flipped == pytest.approx(-exact, abs=1e-10)
    approx = occultation_offset_approx_d(PERIOD_D, e, omega_deg, inc_deg)
    approx_flipped = occultation_offset_approx_d(PERIOD_D, e, omega_deg + 180.0, inc_deg)
    assert approx_flipped == pytest.approx(-approx, abs=1e-12)


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [
        ({"period_d": -1.0, "e": 0.1, "omega_deg": 0.0}, "period_d"),
        ({"period_d": 1.0, "e": 1.0, "omega_deg": 0.0}, "e"),
        ({"period_d": 1.0, "e": 0.1, "omega_deg": np.nan}, "omega_deg"),
    ],
)
def test_bad_orbit_raises_input_error(kwargs, field):
    with pytest.raises(InputError, match=field):
        occultation_offset_exact_d(**kwargs)


def test_bad_inclination_raises_input_error():
    with pytest.raises(InputError, match="inc_deg"):
        occultation_offset_approx_d(1.0, 0.1, 0.0, 0.0)
