"""Tests of the per-visit noise budget and of stacking visits: each term against its source,
every term switchable, the photon-only regression anchor, and the averaging properties.

Reference values and their sources are in tests/authorities/noise.py (and stars.py).
"""

import math
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import vigil  # noqa: F401  (configures astropy offline before astropy is used)
from astropy import constants as const
from astropy import units as u
from astropy.modeling.models import BlackBody

from vigil import noise_terms, scenarios, spectrum, stacking, stars, visit_budget
from vigil.noise_model import GROUND, PHOTON_ONLY

from authorities import noise as refs

# Invented instrument, star and visit.
SPECTROGRAPH = spectrum.Instrument(aperture_m=4.0, central_obstruction=0.2, throughput=0.3,
                                   wavelength_min_um=0.55, wavelength_max_um=0.9, noise_floor_ppm=0.0)
K_DWARF_FLUX = stars.flux_at_earth_w_m2_um(4400.0, 0.7, magnitude=10.5, band="V")


def _visits(n=1, in_h=2.0, out_h=3.0, airmass=1.3, moon=0.4, elevation_m=2400.0, ground=True):
    return pd.DataFrame({"in_transit_h": [in_h] * n, "baseline_h": [out_h] * n, "airmass": [airmass] * n,
                         "moon_illumination": [moon] * n, "moon_sep_deg": [70.0] * n,
                         "elevation_m": [elevation_m] * n, "ground": [ground] * n})


def test_scintillation_matches_a_hand_worked_young_osborn_value():
    # Osborn et al. 2015 eq. 7 by hand: D = 1.2 m, t = 30 s, z = 48.19 deg (sec z = 1.5),
    # h = 2400 m, times the conservative factor 1.5 squared.
    d_term = 1.2 ** (-4.0 / 3.0)  # 0.78427
    airmass_term = 1.5**3  # 3.375
    altitude_term = math.exp(-2.0 * 2400.0 / refs.YOUNG_SCALE_HEIGHT_M)  # exp(-0.6) = 0.54881
    sigma2 = refs.YOUNG_CONSTANT * d_term * airmass_term * altitude_term / 30.0
    assert math.sqrt(sigma2) == pytest.approx(696e-6, rel=1e-3)
    got = noise_terms.scintillation_variance_s(1.2, 1.5, 2400.0, refs.OSBORN_CONSERVATIVE_FACTOR) / 30.0
    assert float(got) == pytest.approx(refs.OSBORN_CONSERVATIVE_FACTOR**2 * sigma2, rel=1e-12)


def test_scintillation_of_a_visit_counts_both_stars_over_the_integrated_time():
    # Target and comparison scintillate independently; a visit integrates duty x wall time.
    visit = _visits()
    noise = replace(PHOTON_ONLY, scintillation_factor=1.0, comparison_mag_delta=0.0, readout_s=20.0)
    parts = visit_budget.term_variances(K_DWARF_FLUX, SPECTROGRAPH, noise, visit, [0.7], 100.0, 1.0)
    per_s = float(noise_terms.scintillation_variance_s(4.0, 1.3, 2400.0, 1.0))
    integrated = np.array([2.0, 3.0]) * 3600.0 * 60.0 / 80.0
    assert parts["scintillation"][0, 0] == pytest.approx(2.0 * per_s * (1.0 / integrated).sum(), rel=1e-12)


def test_extinction_coefficients_are_those_of_a_good_site():
    # About 0.12-0.15 mag per airmass in V, much less in the near infrared (common practice).
    low, high = refs.EXTINCTION_V_MAG_PER_AIRMASS
    assert low <= float(noise_terms.extinction_mag_per_airmass(0.55)) <= high
    assert np.all(noise_terms.extinction_mag_per_airmass([1.25, 1.65, 2.2]) < low)
    # Bouguer's law: 10^(-0.4 k X).
    assert float(noise_terms.atmospheric_transmission(0.55, 2.0)) == pytest.approx(10 ** (-0.4 * 0.13 * 2.0))


def test_dark_sky_and_krisciunas_schaefer_moonlight_by_hand():
    # Dark V sky of a good site (common practice); full Moon 90 deg away, Moon at 30 deg altitude,
    # target at airmass 1 (Krisciunas & Schaefer 1991 by hand, constants in authorities).
    low, high = refs.DARK_SKY_V_MAG_ARCSEC2
    dark_v = float(noise_terms.sky_v_mag_arcsec2(0.0, 90.0, 1.0))
    assert low <= dark_v <= high
    c, a, b = refs.KS_NANOLAMBERT
    moon_illuminance = 10 ** (-0.4 * 3.84)  # full Moon, alpha = 0
    scattering = 10**5.36 * (1.06 + 0.0) + 10 ** (6.15 - 90.0 / 40.0)
    moon_airmass = (1 - 0.96 * math.sin(math.radians(60.0)) ** 2) ** -0.5
    moonlight = scattering * moon_illuminance * 10 ** (-0.4 * refs.KS_EXTINCTION_V * moon_airmass) \
        * (1 - 10 ** (-0.4 * refs.KS_EXTINCTION_V * 1.0))
    total = c * math.exp(a - b * dark_v) + moonlight
    expected_v = (a - math.log(total / c)) / b
    assert float(noise_terms.sky_v_mag_arcsec2(1.0, 90.0, 1.0)) == pytest.approx(expected_v, abs=1e-9)
    phases = noise_terms.sky_v_mag_arcsec2(np.linspace(0, 1, 11), 90.0, 1.2)
    assert np.all(np.diff(phases) < 0)  # the fuller the Moon, the brighter the sky


def test_moonlight_follows_the_moons_altitude_and_vanishes_below_the_horizon():
    # Krisciunas & Schaefer (1991) by hand (constants in authorities): the Moon's light reaches
    # the sky through its own airmass X(Z_moon), so a Moon at 70 deg brightens the sky more than one
    # at 15 deg; a Moon below the horizon adds nothing (their model is for a Moon that is up).
    c, a, b = refs.KS_NANOLAMBERT
    dark_v = float(noise_terms.sky_v_mag_arcsec2(0.0, 90.0, 1.0))
    scattering = 10**5.36 * (1.06 + math.cos(math.radians(40.0)) ** 2) + 10 ** (6.15 - 40.0 / 40.0)
    for moon_alt_deg in (15.0, 70.0):
        moon_airmass = (1 - 0.96 * math.sin(math.radians(90.0 - moon_alt_deg)) ** 2) ** -0.5
        moonlight = scattering * 10 ** (-0.4 * 3.84) * 10 ** (-0.4 * refs.KS_EXTINCTION_V * moon_airmass) \
            * (1 - 10 ** (-0.4 * refs.KS_EXTINCTION_V * 1.3))
        got = float(noise_terms.moonlight_nanolambert(1.0, 40.0, 1.3, moon_alt_deg))
        assert got == pytest.approx(moonlight, rel=1e-12)
    assert float(noise_terms.moonlight_nanolambert(1.0, 40.0, 1.3, 70.0)) > float(
        noise_terms.moonlight_nanolambert(1.0, 40.0, 1.3, 15.0))
    assert float(noise_terms.sky_v_mag_arcsec2(1.0, 40.0, 1.3, -0.5)) == pytest.approx(
        float(noise_terms.sky_v_mag_arcsec2(0.0, 40.0, 1.3)), abs=1e-12)
    assert dark_v == pytest.approx(float(noise_terms.sky_v_mag_arcsec2(1.0, 90.0, 1.0, -10.0)), abs=1e-12)


def test_trapezoid_follows_winn_durations():
    # Winn 2010 eqs. 14-15 (small angles): T23 / T14 = sqrt((1-k)^2 - b^2) / sqrt((1+k)^2 - b^2);
    # the least-squares information of a linear ingress is a third of its length.
    k, b = 0.1, 0.5
    ratio = math.sqrt((1 - k) ** 2 - b**2) / math.sqrt((1 + k) ** 2 - b**2)
    assert noise_terms.trapezoid_time_fraction(k, b) == pytest.approx(ratio + (1 - ratio) / 3.0, rel=1e-12)
    assert noise_terms.trapezoid_time_fraction(0.1, 0.95) == pytest.approx(1.0 / 3.0)  # grazing


SWITCHES = {"photon_comparison": {"comparison_mag_delta": None}, "scintillation": {"scintillation_factor": 0.0},
            "sky": {"sky_area_arcsec2": 0.0}, "read": {"read_noise_e": 0.0}, "red_noise": {"red_noise_ppm": 0.0}}


@pytest.mark.parametrize("term", sorted(SWITCHES))
def test_every_term_can_be_switched_off(term):
    # Each setting of the documented switches removes its term and only its term (definition);
    # the comparison star's share of sky and read noise goes with it.
    visit = _visits()
    on = visit_budget.term_variances(K_DWARF_FLUX, SPECTROGRAPH, GROUND, visit, [0.6, 0.8], 100.0, 1.0)
    off = visit_budget.term_variances(K_DWARF_FLUX, SPECTROGRAPH, replace(GROUND, **SWITCHES[term]), visit,
                                      [0.6, 0.8], 100.0, 1.0)
    assert np.all(on[term] > 0) and np.all(off[term] == 0)
    untouched = {"photon_target"} | (set(SWITCHES) - {term} - ({"sky", "read", "scintillation"}
                                                               if term == "photon_comparison" else set()))
    for other in untouched:
        assert off[other] == pytest.approx(on[other], rel=1e-12), other


def test_extinction_and_duty_cycle_only_scale_the_photons():
    # Bouguer's law and t_exp / (t_exp + t_read) divide the counts, so the photon variance grows
    # by their inverse (definition).
    visit = _visits(airmass=1.8)
    base = visit_budget.term_variances(K_DWARF_FLUX, SPECTROGRAPH, PHOTON_ONLY, visit, [0.6], 100.0, 1.0)
    worse = visit_budget.term_variances(K_DWARF_FLUX, SPECTROGRAPH, replace(PHOTON_ONLY, extinction=True, readout_s=30.0),
                                        visit, [0.6], 100.0, 1.0)
    factor = float(noise_terms.atmospheric_transmission(0.6, 1.8)) * 60.0 / 90.0
    assert worse["photon_target"][0, 0] == pytest.approx(base["photon_target"][0, 0] / factor, rel=1e-12)


def _old_photon_only_resolution(k_per_hour, hours_in, hours_out, delta, goal_snr, floor):
    """The forecast before the budget existed: R = k t_c (delta^2 / SNR^2 - f^2), with
    t_c = t_in t_out / (t_in + t_out) in hours and k the weakest end's counts per hour at R = 1."""
    t_c = hours_in * hours_out / (hours_in + hours_out)
    return k_per_hour * t_c * (delta**2 / goal_snr**2 - floor**2)


def test_with_every_extra_term_off_the_old_photon_only_answer_comes_back():
    # Regression anchor: a blackbody star at a distance (the old stellar model), photon noise of
    # the target only, the old closed form computed here by hand with astropy's blackbody.
    planet = spectrum.Planet(radius_earth=2.4, mass_earth=7.0, teq_k=700.0, mu=2.3)
    star = spectrum.Star(radius_sun=0.6, teff_k=4000.0, distance_pc=25.0)
    blackbody = stars.blackbody_surface_flux_w_m2_um(stars.GRID_UM, 4000.0) \
        * (0.6 * const.R_sun.value / (25.0 * u.pc.to(u.m))) ** 2
    floor, goal_snr, visits = 12e-6, 4.0, 9
    instrument = replace(SPECTROGRAPH, noise_floor_ppm=12.0)
    wavelength_um = stacking.sample_wavelengths_um(0.55, 0.9)
    a, b = visit_budget.variance_parts(blackbody, instrument, PHOTON_ONLY, _visits(visits), wavelength_um, 1.0)
    assert np.all(b == 0)
    information = stacking.visit_information(a, b, stacking.RESOLUTION_GRID).sum(axis=0)  # (bins, R)
    delta = spectrum.feature_depth(planet, star)
    need = stacking.needed_information(delta, goal_snr, floor)
    reached = float(stacking.resolution_reached(stacking.deciding(information.T, 1.0), need))
    # Old model, independently: astropy blackbody photons at the range's weaker end.
    ends = np.array([0.55, 0.9]) * u.um
    radiance = BlackBody(temperature=4000.0 * u.K, scale=1.0 * u.W / (u.m**2 * u.um * u.sr))(ends)
    photons = (np.pi * u.sr * radiance / (const.h * const.c / ends)).to_value(1 / (u.s * u.m**2 * u.um)) \
        * (0.6 * const.R_sun.value / (25.0 * u.pc.to(u.m))) ** 2
    area = math.pi / 4 * 4.0**2 * (1 - 0.2**2)
    k_per_hour = float(np.min(photons * ends.to_value(u.um) * area * 0.3 * 3600.0))
    expected = _old_photon_only_resolution(k_per_hour, 2.0 * visits, 3.0 * visits, delta, goal_snr, floor)
    assert reached == pytest.approx(expected, rel=1e-5)  # log-log grid interpolation is exact here


def test_photon_term_alone_reproduces_tsm_ratios():
    # Kempton et al. 2018: TSM ∝ R_p^3 T_eq / (M_p R_*^2) 10^(-m_J/5); two planets of one size bin
    # (1.5-2.75 R_earth), equal T_eff (same colours), same mu, band and time.
    pairs = [(spectrum.Planet(radius_earth=1.8, mass_earth=4.0, a_over_rstar=18.0, mu=2.3),
              spectrum.Star(radius_sun=0.25, teff_k=3500.0, magnitude=9.3, band="J")),
             (spectrum.Planet(radius_earth=2.6, mass_earth=9.5, a_over_rstar=40.0, mu=2.3),
              spectrum.Star(radius_sun=0.55, teff_k=3500.0, magnitude=7.6, band="J"))]
    assert all(refs.TSM_SIZE_BINS_R_EARTH[0] <= p.radius_earth < refs.TSM_SIZE_BINS_R_EARTH[1] for p, _ in pairs)

    def snr(planet, star):
        flux = stars.flux_at_earth_w_m2_um(star.teff_k, star.radius_sun, star.magnitude, star.band)
        a, b = visit_budget.variance_parts(flux, SPECTROGRAPH, PHOTON_ONLY, _visits(), [0.6, 0.8], 1.0)
        information = stacking.deciding(stacking.visit_information(a, b, 50.0), 1.0)
        return float(stacking.snr(spectrum.feature_depth(planet, star), 0.0, information)[0])

    def tsm(planet, star):
        teq = star.teff_k * math.sqrt(1.0 / planet.a_over_rstar) * 0.25**0.25
        return planet.radius_earth**3 * teq / (planet.mass_earth * star.radius_sun**2) * 10 ** (-star.magnitude / 5)

    assert snr(*pairs[0]) / snr(*pairs[1]) == pytest.approx(tsm(*pairs[0]) / tsm(*pairs[1]), rel=0.01)


# --- stacking: the averaging rules ------------------------------------------------------------


def _stacked_sigma(visit_count: int, floor: float, noise=GROUND) -> float:
    a, b = visit_budget.variance_parts(K_DWARF_FLUX, SPECTROGRAPH, noise, _visits(visit_count), [0.7], 1.0)
    information = stacking.visit_information(a, b, 100.0).sum(axis=0)[0]
    return math.sqrt(1.0 / information + floor**2)


@settings(max_examples=40, deadline=None)
@given(st.integers(min_value=1, max_value=400))
def test_red_noise_averages_as_one_over_root_n_and_the_floor_does_not(visit_count):
    # Common practice, no source: per-visit systematics average as 1/sqrt(N), a floor never.
    red_only = replace(PHOTON_ONLY, red_noise_ppm=300.0)
    per_visit = _stacked_sigma(1, 0.0, red_only)
    assert _stacked_sigma(visit_count, 0.0, red_only) == pytest.approx(per_visit / math.sqrt(visit_count), rel=1e-9)
    floor = 20e-6
    with_floor = _stacked_sigma(visit_count, floor, red_only)
    assert with_floor**2 == pytest.approx(per_visit**2 / visit_count + floor**2, rel=1e-9)
    assert with_floor > floor


visit_rows = st.fixed_dictionaries({
    "in_h": st.floats(0.0, 6.0), "out_h": st.floats(0.0, 6.0), "airmass": st.floats(1.0, 3.0),
    "moon": st.floats(0.0, 1.0), "elevation_m": st.floats(0.0, 4500.0)})


@settings(max_examples=40, deadline=None)
@given(st.lists(visit_rows, min_size=1, max_size=12), st.lists(st.booleans(), min_size=12, max_size=12))
def test_more_visits_never_lower_the_snr(rows, weather):
    # Property (common practice, no source): adding a visit, whatever its conditions, never
    # lowers the SNR of any bin or of the deciding bin.
    visits = pd.concat([_visits(**row) for row in rows], ignore_index=True)
    a, b = visit_budget.variance_parts(K_DWARF_FLUX, SPECTROGRAPH, GROUND, visits,
                                       stacking.sample_wavelengths_um(0.55, 0.9, GROUND.excluded_um), 0.9)
    clear = np.array([weather[: len(rows)]])
    after = stacking.cumulative_deciding(stacking.visit_information(a, b, 80.0), clear, 1.0)[0]
    snr = stacking.snr(100e-6, 10e-6, after)
    assert np.all(np.diff(snr) >= -1e-12)


def test_scenarios_scale_the_feature_by_mu_and_scale_heights():
    # delta = 2 n_H H R_p / R_*^2 with H = k_B T / (mu m_u g) (common practice, no source).
    planet = spectrum.Planet(radius_earth=2.0, mass_earth=5.0, teq_k=600.0)
    star = spectrum.Star(radius_sun=0.5, teff_k=3800.0, magnitude=9.0, band="J")
    clear, heavy, muted = (scenarios.feature_depth(planet, star, s) for s in scenarios.DEFAULT_SCENARIOS)
    assert clear / heavy == pytest.approx(18.0 / 2.3, rel=1e-12)
    assert clear / muted == pytest.approx(2.0 / 0.5, rel=1e-12)
