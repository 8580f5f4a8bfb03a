"""Tests of the forecast stage: stacked visits -> resolution and years to goal, and why a goal is
missed. Sites and targets are invented; builders come from test_campaign.py. Where a test is
about the photon-noise laws, the budget's extra terms are off (PHOTON)."""

import math
from collections import Counter
from dataclasses import replace

import ephem
import numpy as np
import pandas as pd
import pytest

import vigil  # noqa: F401  (configures astropy offline before astropy is used)
from astropy import constants as const
from astropy.time import Time

from authorities import forecast as authorities_forecast
from vigil import forecast, geometry, scenarios, spectrum
from vigil.bodies import target_bodies
from vigil.noise_model import PHOTON_ONLY
from vigil.sites import Site

from test_campaign import GIANT, SPECTROGRAPH, START, campaign_spec, run, targets_table, windows_of

EXACT_VISITS = {"constraints": {"min_altitude_deg": 25.0, "baseline_h": 1.0, "sigma_k": 0.0}}  # 2 h in, 2 h out each
CLEAR_H2 = scenarios.Scenario("h2_clear", 2.3, 2.0)
PHOTON = {"noise": PHOTON_ONLY, "scenarios": (CLEAR_H2,)}


def _giant_bodies():
    return target_bodies(pd.Series(GIANT), "invented GIANT")


def _goal_resolution_for(hours_in: float, spec) -> float:
    """The goal resolution that needs `hours_in` stacked in-transit hours of 2 h + 2 h visits
    (photon noise only: linear in R)."""
    planet, star = _giant_bodies()
    visit = pd.DataFrame({"in_transit_h": [2.0], "baseline_h": [2.0], "airmass": [1.0], "moon_illumination": [0.0],
                          "moon_sep_deg": [90.0], "elevation_m": [0.0], "ground": [True]})
    at_one = replace(spec, goal_resolution=1.0)
    need = 1.0 / (scenarios.feature_depth(planet, star, CLEAR_H2) ** 2 / spec.goal_snr**2)
    return hours_in / forecast.hours_needed(forecast.Body(planet, star), at_one, visit, need)


def test_resolution_at_goal_snr_grows_linearly_with_stacked_hours():
    # Photon-noise limit: at fixed SNR the achievable resolution grows linearly with stacked
    # time, at fixed resolution the SNR as its square root (common practice, no source).
    yearly = run(campaign_spec(horizon_years=3.0, **EXACT_VISITS, **PHOTON), targets_table({})).yearly
    hours = yearly["in_transit_hours_p50"].to_numpy()
    assert np.all(np.diff(hours) > 50)
    resolution = yearly["resolution_at_goal_snr_p50"].to_numpy()
    assert resolution / hours == pytest.approx(np.full(3, resolution[0] / hours[0]), rel=1e-9)
    snr = yearly["snr_at_goal_resolution_p50"].to_numpy()
    assert snr**2 / hours == pytest.approx(np.full(3, snr[0] ** 2 / hours[0]), rel=1e-9)


def test_years_to_goal_matches_an_independent_count_over_the_ledger():
    # Trial 0 of the pipeline against its own ledger (trial 0): with identical 2 h + 2 h visits
    # and photon noise only, the goal needs 7.5 visits' worth, so it is met when the 8th clear
    # visit (in end order) is in.
    spec = campaign_spec(clear=0.6, trials=30, seed=5, instrument=replace(SPECTROGRAPH, noise_floor_ppm=0.0),
                         **EXACT_VISITS, **PHOTON)
    spec = replace(spec, goal_resolution=_goal_resolution_for(15.0, spec))
    result = run(spec, targets_table({}))
    ledger = result.ledger.sort_values("end_jd_utc")
    assert np.allclose(ledger["in_transit_h"], 2.0) and np.allclose(ledger["baseline_h"], 2.0)
    got = ledger[ledger["sky"] == "clear"]
    expected_years = (got["end_jd_utc"].to_numpy()[7] - START.jd) / 365.25
    assert result.years_to_goal["Brasa-4 b"][0] == pytest.approx(expected_years, abs=1e-9)
    # Mean stacked hours over trials equals the clear-share-weighted sum (expectation, no source).
    expected_per_year = (result.ledger["clear_share"] * result.ledger["in_transit_h"]).sum() / spec.horizon_years
    assert result.summary["in_transit_hours_per_year"].iloc[0] == pytest.approx(expected_per_year, rel=1e-12)


def test_visits_count_from_their_end():
    # Data are in hand when a visit ends (common practice, no source): a visit at one site that
    # starts first but ends last counts after a short one at another site. The goal needs 1.5
    # visits' worth, so it is met when the second visit to end is in.
    planet, star = _giant_bodies()
    origin = START.jd - 9.0  # a date in vigil's planning span; only the differences matter
    spec = campaign_spec(**PHOTON, start=Time(origin + 9.0, format="jd", scale="utc"))
    spec = replace(spec, goal_resolution=_goal_resolution_for(3.0, spec))
    visits = pd.DataFrame({"target": ["x", "x"], "site": ["a", "b"], "start_jd_utc": [origin + 10.0, origin + 10.1],
                           "end_jd_utc": [origin + 12.0, origin + 10.3], "in_transit_h": [2.0, 2.0], "baseline_h": [2.0, 2.0],
                           "airmass": [1.0, 1.0], "moon_illumination": [0.0, 0.0], "moon_sep_deg": [90.0, 90.0],
                           "elevation_m": [0.0, 0.0], "ground": [True, True], "month": [1, 1]})
    result = forecast.target_forecast("x", forecast.Body(planet, star), spec, visits, np.ones((1, 2), dtype=bool), True)
    assert result.years_to_goal[0] == pytest.approx((12.0 - 9.0) / 365.25)


# --- the Earth twin --------------------------------------------------------------------------

# Invented site on the Tropic of Capricorn; the Earth twin's star passes its zenith.
TROPIC = Site("loma_gris", latitude_deg=-24.6, longitude_deg=-70.4, elevation_m=2600.0)
# Sun twin (IAU 2015 nominal R_sun, T_eff = 5772 K) at 10 pc: V = M_V = 4.83 (distance modulus
# 0; Willmer 2018, ApJS 236, 47, from memory). Earth twin: 1 R_earth, 1 M_earth, T_eq 255 K
# (Earth's effective temperature, from memory), Earth air mu = 28.97; P = 365.256 d.
# Mid-transit near the June solstice (longest nights there), opposite the Sun (RA 18h20m).
EARTH_TWIN = {"name": "Terrana b", "ra_deg": 275.0, "dec_deg": -24.6, "t0_bjd_tdb": 2463038.625, "t0_err_d": 1e-4,
              "period_d": 365.256, "period_err_d": 1e-5, "planet_radius_earth": 1.0, "planet_mass_earth": 1.0,
              "teq_k": 255.0, "mu": 28.97, "star_radius_sun": 1.0, "star_teff_k": 5772.0, "magnitude": 4.83,
              "mag_band": "V", "priority": 0.0}
GROUND_8M = spectrum.Instrument(aperture_m=8.0, central_obstruction=0.15, throughput=0.3,
                                wavelength_min_um=0.6, wavelength_max_um=1.0, noise_floor_ppm=10.0)


def _longest_dark_night_h(site: Site) -> float:
    """Longest astronomical night of the year at `site` (Sun's centre below -18 deg), by PyEphem."""
    observer = ephem.Observer()
    observer.lat, observer.lon, observer.elevation = str(site.latitude_deg), str(site.longitude_deg), site.elevation_m
    observer.pressure, observer.horizon = 0, "-18"
    longest = 0.0
    for day in range(0, 365, 3):
        observer.date = ephem.Date("2031/1/1 12:00") + day - site.longitude_deg / 360.0  # local noon
        dusk = observer.next_setting(ephem.Sun(), use_center=True)
        dawn = observer.next_rising(ephem.Sun(), start=dusk, use_center=True)
        longest = max(longest, (dawn - dusk) * 24.0)
    return longest


def test_earth_twin_is_out_of_reach_from_the_ground():
    # Duration from Winn 2010 eq. 14 (central crossing, a/R* = 215.03, k = 0.00917): ~13.1 h.
    duration_h = float(geometry.transit_duration_h(365.256, 215.03, 0.00917, 0.0))
    assert duration_h == pytest.approx(13.1, abs=0.05)
    targets = pd.DataFrame([{**EARTH_TWIN, "duration_h": duration_h, "t0_period_cov_d2": 0.0}])
    spec = campaign_spec(sites=(TROPIC,), clear=0.8, horizon_years=30.0, trials=50, instrument=GROUND_8M,
                         goal_resolution=50.0, goal_snr=5.0)
    windows = windows_of(spec, targets, sites=(TROPIC,))
    years = [d.year for d in Time(windows["mid_jd_utc"].to_numpy(), format="jd", scale="utc").datetime]
    assert len(years) >= 20 and max(Counter(years).values()) <= 1  # one transit a year at most
    counted = windows[windows["coverage"].isin(spec.coverage)]
    # Why none is counted: transit plus 1 h of baseline each side outlasts the longest dark
    # night at the site (PyEphem: 10.7 h at 24.6 deg S), so no night holds a full window.
    assert duration_h + 2 * 1.0 > _longest_dark_night_h(TROPIC)
    assert counted.empty  # partly observed transits exist (above), none is whole
    # Feature depth delta = 2 n_H H R_p / R*^2, H = k_B T / (mu m_u g) (authorities.forecast):
    # about 0.39 ppm, so a 10 ppm floor caps the SNR per bin at delta / floor ~ 0.04 < 5.
    gravity = const.G.value * const.M_earth.value / const.R_earth.value**2
    height_m = const.k_B.value * authorities_forecast.EARTH_LIKE_TEQ_K / (authorities_forecast.EARTH_AIR_MU * const.u.value * gravity)
    delta = 2 * authorities_forecast.N_SCALE_HEIGHTS * height_m * const.R_earth.value / const.R_sun.value**2
    assert delta == pytest.approx(authorities_forecast.EARTH_LIKE_FEATURE_DEPTH, rel=0.02)
    summary = run(spec, targets, sites=(TROPIC,)).summary.iloc[0]
    assert not summary["reachable"] and math.isinf(summary["years_to_goal_p50"])
    assert summary["snr_cap"] == pytest.approx(delta / 10e-6, rel=1e-3)
    # Both limits hold; the noise floor is reported because more windows would not help.
    assert summary["limited_by"] == "noise floor"
    # Without the floor the goal needs a finite time, and with no counted window the
    # windows themselves are what is missing.
    no_floor = replace(spec, instrument=replace(GROUND_8M, noise_floor_ppm=0.0))
    floorless = run(no_floor, targets, sites=(TROPIC,)).summary.iloc[0]
    assert math.isfinite(floorless["hours_needed"]) and floorless["in_transit_hours_per_year"] == 0.0
    assert floorless["limited_by"].startswith("too few windows (")


# --- why a goal is missed ---------------------------------------------------------------------


def _verdict(spec, targets) -> pd.Series:
    return run(spec, targets).summary.iloc[0]


def test_noise_floor_when_the_goal_snr_exceeds_depth_over_floor():
    # SNR per bin <= delta / floor at any resolution and time (authorities.forecast, photon-noise limit).
    planet, star = _giant_bodies()
    floor_ppm = 2000.0
    assert max(scenarios.feature_depth(planet, star, s) for s in scenarios.DEFAULT_SCENARIOS) / (floor_ppm * 1e-6) < 5.0
    verdict = _verdict(campaign_spec(instrument=replace(SPECTROGRAPH, noise_floor_ppm=floor_ppm)), targets_table({}))
    assert verdict["transits_per_year"] > 50 and verdict["limited_by"] == "noise floor"


@pytest.mark.parametrize("cap", [0, 1])
def test_allocation_when_caps_starve_a_target_with_plenty_of_windows(cap):
    # The same target and goal without caps is reachable (common practice, no source).
    targets = targets_table({})
    assert _verdict(campaign_spec(), targets)["reachable"]
    verdict = _verdict(campaign_spec(per_target_per_semester=cap), targets)
    assert verdict["transits_per_year"] == 2 * cap and verdict["limited_by"].startswith("allocation (")


def test_ephemeris_too_stale_when_sigma_padding_swallows_the_windows():
    # sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2 (authorities.transits): 1000 epochs at sigma_P = 1e-3 d
    # give ~1 d of timing uncertainty, so a window padded by 1 sigma fits no night, while the
    # unpadded windows are plentiful.
    targets = targets_table({"t0_bjd_tdb": GIANT["t0_bjd_tdb"] - 1000 * GIANT["period_d"], "period_err_d": 1e-3})
    spec = campaign_spec()
    padded = windows_of(spec, targets)
    unpadded = windows_of(spec, targets, constraints={**spec.constraints, "sigma_k": 0.0})
    assert (padded["coverage"] == "full").sum() == 0 and (unpadded["coverage"] == "full").sum() > 50
    assert _verdict(spec, targets)["limited_by"].startswith("ephemeris too stale (")


def test_too_few_windows_when_even_every_window_falls_short():
    # Needed hours (median visit, photon terms linear in R) above every counted window's in-transit time.
    targets = targets_table({})
    spec = campaign_spec(goal_resolution=1e5)
    windows = windows_of(spec, targets)
    all_hours = ((windows["egress_jd_utc"] - windows["ingress_jd_utc"]) * 24.0).sum()
    verdict = _verdict(spec, targets)
    assert verdict["hours_needed"] > all_hours
    assert verdict["limited_by"].startswith("too few windows (")


def test_weather_when_the_average_suffices_but_most_trials_fall_short():
    # Five visits on five nights at clear fraction 0.1: the average is 0.5 visits (1 h), yet
    # P(at least one clear) = 1 - 0.9^5 = 0.41 < 1/2 (binomial, common practice, no source).
    base = campaign_spec(clear=0.1, horizon_years=0.45, trials=1000, seed=3, per_target_per_semester=5, **EXACT_VISITS,
                         **PHOTON)
    spec = replace(base, goal_resolution=_goal_resolution_for(0.9, base))
    result = run(spec, targets_table({}))
    assert len(result.ledger) == 5 and result.ledger["in_transit_h"].sum() == pytest.approx(10.0, abs=1e-6)
    reached = np.isfinite(result.years_to_goal["Brasa-4 b"]).mean()
    assert reached == pytest.approx(1 - 0.9**5, abs=4 * math.sqrt(0.41 * 0.59 / spec.trials))
    assert result.summary["limited_by"].iloc[0].startswith("weather (")
