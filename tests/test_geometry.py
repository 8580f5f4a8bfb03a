"""Tests of the transit geometry: total duration (Winn 2010, eq. 14) and a/R* from Kepler's law."""

import math

import numpy as np
import pytest

import vigil  # noqa: F401  (configures astropy offline before astropy is used)
from authorities import transits
from vigil import geometry
from vigil.errors import InputError

# Earth and Sun, IAU nominal values, the sidereal year: authorities.transits.
EARTH_PERIOD_D = transits.EARTH_PERIOD_D
EARTH_A_OVER_RSUN = transits.EARTH_A_OVER_RSUN
EARTH_K = transits.EARTH_K
GM_SUN_M3_S2 = transits.GM_SUN_M3_S2
R_SUN_M = transits.R_SUN_M
SIDEREAL_YEAR_D = transits.SIDEREAL_YEAR_D


def test_earth_central_crossing_lasts_13_1_hours():
    # Winn 2010, "Transits and Occultations", eq. 14; Earth crossing the Sun centrally: T14 ~ 13.1 h.
    duration_h = geometry.transit_duration_h(EARTH_PERIOD_D, EARTH_A_OVER_RSUN, EARTH_K, 0.0)
    assert duration_h == pytest.approx(transits.EARTH_CENTRAL_T14_H, abs=0.05)


def test_central_crossing_matches_the_chord_over_the_orbital_speed():
    # Small-angle limit of Winn 2010 eq. 14 at b = 0: T14 ~ P (1 + k) / (pi a/R*), the stellar
    # diameter plus planet diameter crossed at the orbital speed 2 pi a / P (common practice, no source).
    approx_h = EARTH_PERIOD_D * (1 + EARTH_K) / (math.pi * EARTH_A_OVER_RSUN) * 24.0
    exact_h = geometry.transit_duration_h(EARTH_PERIOD_D, EARTH_A_OVER_RSUN, EARTH_K)
    assert exact_h == pytest.approx(approx_h, rel=1e-4)


def test_earth_like_transits_last_10_to_13_hours_for_modest_impact_parameters():
    # An Earth-like planet around a Sun-like star transits for roughly 10-13 h, the upper end a
    # central crossing (authorities.transits: fact of the trade). Vectorised over b.
    b = np.linspace(0.0, 0.6, 13)
    durations_h = geometry.transit_duration_h(EARTH_PERIOD_D, EARTH_A_OVER_RSUN, EARTH_K, b)
    assert durations_h.shape == b.shape
    low_h, high_h = transits.EARTH_LIKE_T14_RANGE_H
    assert np.all((durations_h >= low_h) & (durations_h <= high_h))
    assert np.all(np.diff(durations_h) < 0)  # a longer chord near the centre (geometry, no source)


def test_grazing_limit_shrinks_to_zero_and_beyond_it_no_transit():
    # Winn 2010 eq. 14: the chord sqrt((1+k)^2 - b^2) vanishes at b = 1 + k; beyond it no transit.
    near_edge_h = geometry.transit_duration_h(3.0, 10.0, 0.1, 1.1 - 1e-9)
    assert 0 < near_edge_h < 0.01
    with pytest.raises(InputError, match="impact_parameter"):
        geometry.transit_duration_h(3.0, 10.0, 0.1, 1.1)
    with pytest.raises(InputError, match="impact_parameter"):
        geometry.transit_duration_h(3.0, 10.0, 0.1, np.array([0.2, 1.5]))


def test_duration_scales_with_period_at_fixed_geometry():
    # Winn 2010 eq. 14: at fixed a/R*, k and b the duration is proportional to P.
    one = geometry.transit_duration_h(2.0, 8.0, 0.12, 0.4)
    three = geometry.transit_duration_h(6.0, 8.0, 0.12, 0.4)
    assert three == pytest.approx(3.0 * one, rel=1e-12)


@pytest.mark.parametrize("changes", [{"period_d": -1.0}, {"a_over_rstar": 1.05}, {"radius_ratio": 0.0},
                                     {"impact_parameter": -0.1}, {"period_d": float("nan")}])
def test_bad_input_raises_input_error(changes):
    arguments = {"period_d": 3.0, "a_over_rstar": 10.0, "radius_ratio": 0.1, "impact_parameter": 0.0, **changes}
    with pytest.raises(InputError):
        geometry.transit_duration_h(**arguments)


def test_kepler_third_law_gives_215_for_the_earth():
    # IAU nominal solar mass and radius; Earth's sidereal year: a/R* ~ 215 (authorities.transits).
    a_over_rstar = geometry.a_over_rstar_from_mass_radius(SIDEREAL_YEAR_D, 1.0, 1.0)
    independent = (GM_SUN_M3_S2 * (SIDEREAL_YEAR_D * 86400.0) ** 2 / (4 * math.pi**2)) ** (1 / 3) / R_SUN_M
    assert a_over_rstar == pytest.approx(EARTH_A_OVER_RSUN, rel=2e-4)
    assert a_over_rstar == pytest.approx(independent, rel=1e-6)


def test_density_and_mass_radius_forms_agree():
    # Kepler's third law with rho* = M* / (4/3 pi R*^3): both forms give the same a/R*
    # (algebra, no source). Invented star: 0.8 M_sun, 0.75 R_sun, periods 1-30 d.
    period_d = np.array([1.0, 4.5, 30.0])
    mass_kg = 0.8 * GM_SUN_M3_S2 / transits.G_SI
    density = mass_kg / (4 / 3 * math.pi * (0.75 * R_SUN_M) ** 3)
    by_mass = geometry.a_over_rstar_from_mass_radius(period_d, 0.8, 0.75)
    by_density = geometry.a_over_rstar_from_density(period_d, density)
    assert by_density == pytest.approx(by_mass, rel=1e-4)
    assert by_mass == pytest.approx(by_mass[0] * period_d ** (2 / 3), rel=1e-12)  # a ∝ P^(2/3)


def test_catalogue_duration_longer_than_a_central_transit_is_reported(tmp_path, caplog, monkeypatch):
    # An Earth twin (a/R* = 215.03, Earth and Sun radii) transits for at most about 13 h
    # (Winn 2010 eq. 14 at b = 0, as checked above); a catalogue row claiming 26 h gets one
    # warning naming the field, and 12 h none.
    import logging

    from vigil.catalog import read_targets

    monkeypatch.setattr(logging.getLogger("vigil"), "propagate", True)  # the CLI may have stopped it
    header = "name,ra_deg,dec_deg,t0_bjd_tdb,t0_err_d,period_d,period_err_d,duration_h,a_over_rstar," \
             "planet_radius_earth,star_radius_sun\n"
    for duration_h, warned in ((26.0, True), (12.0, False)):
        path = tmp_path / f"t{duration_h:g}.csv"
        path.write_text(header + f"Twin b,10,20,2460000.5,0.001,365.256,0.0001,{duration_h},215.03,1.0,1.0\n")
        caplog.clear()
        with caplog.at_level(logging.WARNING, logger="vigil"):
            read_targets(path)
        assert any("field duration_h" in r.getMessage() and "central transit" in r.getMessage()
                   for r in caplog.records) == warned
