"""Tests of the photon-noise model of a stacked transmission spectrum.

Reference values and their sources are in tests/authorities/spectrum_refs.py.
"""

import math
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import vigil  # noqa: F401  (configures astropy offline before astropy is used)
from vigil import spectrum as sp
from vigil.errors import InputError

from astropy import constants as const
from astropy import units as u
from astropy.modeling.models import BlackBody

from authorities import spectrum_refs as refs

# Invented targets and instrument.
WARM_SUB_NEPTUNE = sp.Planet(radius_earth=2.2, mass_earth=6.0, a_over_rstar=25.0, mu=2.3)
COOL_DWARF = sp.Star(radius_sun=0.35, teff_k=3400.0, magnitude=8.5, band="J")
SPECTROGRAPH = sp.Instrument(
    aperture_m=4.0, central_obstruction=0.2, throughput=0.3, wavelength_min_um=0.8, wavelength_max_um=2.4
)
FLOORED = replace(SPECTROGRAPH, noise_floor_ppm=20.0)


def test_blackbody_sun_gives_solar_irradiance():
    # Kopp & Lean 2011 (GRL 38, L01706): TSI = 1361 W m^-2; IAU 2015 nominal T_eff, R_sun.
    au_pc = (1 * u.au).to_value(u.pc)
    sun = sp.Star(radius_sun=refs.SUN_RADIUS_M / const.R_sun.value, teff_k=refs.SUN_TEFF_K, distance_pc=au_pc)
    wavelength_um = np.geomspace(0.01, 1000.0, 200_001)
    photon_energy_j = const.h.value * const.c.value / (wavelength_um * 1e-6)
    irradiance = np.trapezoid(sp.stellar_photon_flux(sun, wavelength_um) * photon_energy_j, wavelength_um)
    assert irradiance == pytest.approx(refs.SOLAR_IRRADIANCE_W_M2, rel=0.01)


def test_surface_photon_flux_matches_astropy_blackbody():
    # Reference library: astropy.modeling BlackBody; photon flux = pi B_lambda / (h c / lambda).
    teff_k = 4200.0
    wavelength = np.array([0.3, 0.7, 1.5, 4.0, 12.0]) * u.um
    radiance = BlackBody(temperature=teff_k * u.K, scale=1.0 * u.W / (u.m**2 * u.um * u.sr))(wavelength)
    expected = (np.pi * u.sr * radiance / (const.h * const.c / wavelength)).to_value(1 / (u.s * u.m**2 * u.um))
    assert sp.surface_photon_flux(wavelength.to_value(u.um), teff_k) == pytest.approx(expected, rel=1e-9)


def test_earth_scale_height():
    # H ~ 8.5 km for T = 288 K, mu = 28.97, g = 9.81 m s^-2 (common practice, no source).
    assert sp.scale_height_m(288.0, 28.97, 9.81) == pytest.approx(8500.0, rel=0.03)


def test_gravity_from_mass_matches_nominal_earth():
    # IAU 2015 nominal GM_earth and R_earth (from memory): g = GM / R^2.
    earth = sp.Planet(radius_earth=1.0, mass_earth=1.0, teq_k=288.0)
    assert sp.surface_gravity_m_s2(earth) == pytest.approx(refs.EARTH_GM_M3_S2 / refs.EARTH_RADIUS_M**2, rel=1e-4)


def test_equilibrium_temperature_of_earth():
    # Zero-albedo, full-redistribution T_eq of Earth ~ 278 K (common practice, no source).
    earth = sp.Planet(radius_earth=1.0, mass_earth=1.0, a_over_rstar=refs.EARTH_A_OVER_RSUN)
    sun = sp.Star(radius_sun=1.0, teff_k=refs.SUN_TEFF_K, distance_pc=10.0)
    assert sp.equilibrium_temperature_k(earth, sun) == pytest.approx(refs.EARTH_TEQ_ZERO_ALBEDO_K, abs=1.0)


def test_feature_depth_is_first_order_annulus():
    # Geometry (common practice, no source): an opaque annulus n_H H thick adds
    # ((R_p + n_H H)^2 - R_p^2) / R_*^2 to the depth; the model keeps the first order in H / R_p.
    height_m = sp.scale_height_m(
        sp.equilibrium_temperature_k(WARM_SUB_NEPTUNE, COOL_DWARF), 2.3, sp.surface_gravity_m_s2(WARM_SUB_NEPTUNE)
    )
    r_p = 2.2 * const.R_earth.value
    r_s = 0.35 * const.R_sun.value
    annulus = ((r_p + 2.0 * height_m) ** 2 - r_p**2) / r_s**2
    assert sp.feature_depth(WARM_SUB_NEPTUNE, COOL_DWARF) == pytest.approx(annulus, rel=2.0 * height_m / r_p)


def test_default_mean_molecular_weight_follows_radius_convention():
    # Documented convention (Rogers 2015 threshold, from memory): H2/He at >= 1.6 R_earth.
    small = sp.Planet(radius_earth=1.2, mass_earth=1.5, teq_k=500.0)
    large = sp.Planet(radius_earth=2.5, mass_earth=7.0, teq_k=500.0)
    assert (sp.mean_molecular_weight(small), sp.mean_molecular_weight(large)) == (28.97, 2.3)


def test_photon_limit_scales_with_stacked_time():
    # Photon-noise limit (common practice, no source): at fixed SNR, R grows linearly with
    # time; at fixed R, SNR grows as sqrt(time).
    r1 = sp.achievable_resolution(WARM_SUB_NEPTUNE, COOL_DWARF, SPECTROGRAPH, 5.0, 12.0, 30.0)
    r2 = sp.achievable_resolution(WARM_SUB_NEPTUNE, COOL_DWARF, SPECTROGRAPH, 5.0, 24.0, 60.0)
    assert r2 / r1 == pytest.approx(2.0, rel=1e-12)
    s1 = sp.spectrum_snr(WARM_SUB_NEPTUNE, COOL_DWARF, SPECTROGRAPH, 100.0, 12.0, 30.0)
    s2 = sp.spectrum_snr(WARM_SUB_NEPTUNE, COOL_DWARF, SPECTROGRAPH, 100.0, 24.0, 60.0)
    assert s2 / s1 == pytest.approx(math.sqrt(2.0), rel=1e-12)


def test_noise_floor_caps_snr():
    # A floor f added in quadrature gives SNR = delta / sqrt(sigma_ph^2 + f^2) < delta / f
    # (common practice, no source). Checked over a wide grid of R and time.
    delta = sp.feature_depth(WARM_SUB_NEPTUNE, COOL_DWARF)
    resolution = np.geomspace(1e-3, 1e5, 60)[:, None]
    hours = np.geomspace(1e-2, 1e6, 60)[None, :]
    snr = sp.spectrum_snr(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED, resolution, hours, 2.0 * hours)
    assert np.all(snr < delta / 20e-6)
    assert sp.snr_cap(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED) == pytest.approx(delta / 20e-6, rel=1e-12)
    assert sp.snr_cap(WARM_SUB_NEPTUNE, COOL_DWARF, SPECTROGRAPH) == math.inf


def test_achievable_resolution_with_floor_matches_derivation():
    # Derivation (common practice, no source): with sigma^2 = R / C + f^2 (C = photons-per-bin
    # times R, fixed by star, instrument and time), SNR = s gives R_f = C (delta^2 / s^2 - f^2).
    # Without the floor R_0 = C delta^2 / s^2, hence R_f = R_0 (1 - (s f / delta)^2).
    goal, floor = 4.0, 20e-6
    delta = sp.feature_depth(WARM_SUB_NEPTUNE, COOL_DWARF)
    r_photon = sp.achievable_resolution(WARM_SUB_NEPTUNE, COOL_DWARF, SPECTROGRAPH, goal, 40.0, 80.0)
    r_floor = sp.achievable_resolution(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED, goal, 40.0, 80.0)
    assert goal * floor / delta < 1  # the goal is reachable with this floor
    assert r_floor == pytest.approx(r_photon * (1.0 - (goal * floor / delta) ** 2), rel=1e-12)
    assert sp.spectrum_snr(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED, r_floor, 40.0, 80.0) == pytest.approx(goal, rel=1e-12)


def test_goal_above_floor_cap_is_unreachable():
    # Above delta / f no resolution and no amount of time reaches the goal (documented: R = 0, t = inf).
    above = 1.01 * sp.snr_cap(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED)
    assert sp.achievable_resolution(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED, above, 1e9, 1e9) == 0.0
    assert sp.hours_in_transit_needed(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED, 1.0, above) == math.inf


def test_hours_needed_inverts_achievable_resolution():
    # Exact inverse of the same closed form (common practice, no source).
    hours_in = sp.hours_in_transit_needed(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED, 150.0, 5.0, out_per_in=2.5)
    reached = sp.achievable_resolution(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED, 5.0, hours_in, 2.5 * hours_in)
    assert reached == pytest.approx(150.0, rel=1e-12)


def test_weakest_bin_is_at_an_end_of_the_range():
    # Brute force over a dense grid: the summary SNR is the minimum of the per-bin SNR across
    # the range, and every bin centre does at least as well (blackbody photons per ln lambda
    # have a single maximum; common practice, no source).
    for star in (COOL_DWARF, sp.Star(radius_sun=1.1, teff_k=6200.0, magnitude=7.0, band="V")):
        grid_um = np.linspace(SPECTROGRAPH.wavelength_min_um, SPECTROGRAPH.wavelength_max_um, 20_001)
        per_bin = sp.snr_per_bin(WARM_SUB_NEPTUNE, star, SPECTROGRAPH, grid_um, 80.0, 10.0, 10.0)
        summary = sp.spectrum_snr(WARM_SUB_NEPTUNE, star, SPECTROGRAPH, 80.0, 10.0, 10.0)
        assert summary == pytest.approx(per_bin.min(), rel=1e-12)
        centres = sp.bin_centres_um(SPECTROGRAPH, 80.0)
        assert np.all(sp.snr_per_bin(WARM_SUB_NEPTUNE, star, SPECTROGRAPH, centres, 80.0, 10.0, 10.0) >= summary)


def test_snr_ratio_reproduces_tsm_ratio():
    # Kempton et al. 2018 (PASP 130, 114401): TSM = scale x R_p^3 T_eq / (M_p R_*^2) x 10^(-m_J/5),
    # T_eq = T_* sqrt(R_*/a) (1/4)^(1/4). Same size bin (1.5-2.75 R_earth, same scale factor),
    # same mu, J band, same time, equal T_eff: SNR ratio = TSM ratio.
    planets_stars = [
        (sp.Planet(radius_earth=1.8, mass_earth=4.0, a_over_rstar=18.0, mu=2.3),
         sp.Star(radius_sun=0.25, teff_k=3500.0, magnitude=9.3, band="J")),
        (sp.Planet(radius_earth=2.6, mass_earth=9.5, a_over_rstar=40.0, mu=2.3),
         sp.Star(radius_sun=0.55, teff_k=3500.0, magnitude=7.6, band="J")),
    ]

    def tsm(planet, star):
        teq = star.teff_k * math.sqrt(1.0 / planet.a_over_rstar) * 0.25**0.25
        return planet.radius_earth**3 * teq / (planet.mass_earth * star.radius_sun**2) * 10 ** (-star.magnitude / 5)

    snr = [sp.spectrum_snr(p, s, SPECTROGRAPH, 50.0, 6.0, 12.0) for p, s in planets_stars]
    assert snr[0] / snr[1] == pytest.approx(tsm(*planets_stars[0]) / tsm(*planets_stars[1]), rel=0.01)


@pytest.mark.parametrize("band", sorted(refs.ZERO_POINTS))
def test_zero_magnitude_star_flux_equals_zero_point(band):
    # Bessell, Castelli & Plez 1998 (V); Cohen, Wheaton & Megeath 2003 (2MASS); from memory.
    wavelength_um, f_lambda_w_m2_um, _ = refs.ZERO_POINTS[band]
    star = sp.Star(radius_sun=0.8, teff_k=4800.0, magnitude=0.0, band=band)
    expected_photons = f_lambda_w_m2_um / (const.h.value * const.c.value / (wavelength_um * 1e-6))
    assert sp.stellar_photon_flux(star, wavelength_um) == pytest.approx(expected_photons, rel=1e-3)


@pytest.mark.parametrize("band", [b for b, ref in refs.ZERO_POINTS.items() if ref[2] is not None])
def test_2mass_zero_points_agree_with_their_jansky_values(band):
    # Cohen, Wheaton & Megeath 2003, Table 2 (from memory): F_nu = F_lambda lambda^2 / c. The
    # isophotal wavelength and frequency are not exact reciprocals, hence 2.5 %.
    zero = sp.BANDS[band]
    f_nu_jy = (zero.zero_point_w_m2_um * u.W / u.m**2 / u.um * (zero.wavelength_eff_um * u.um) ** 2 / const.c).to_value(u.Jy)
    assert f_nu_jy == pytest.approx(refs.ZERO_POINTS[band][2], rel=0.025)


def test_v0_photon_rate_per_angstrom():
    # A V = 0 star gives ~1000 photons s^-1 cm^-2 A^-1 near 550 nm (common practice, no source).
    # Aperture of 1 m^2, perfect throughput, 10 A bin (R = 545 at 0.545 um), one hour.
    one_square_metre = sp.Instrument(math.sqrt(4.0 / math.pi), 0.0, 1.0, 0.4, 0.7)
    vega_like = sp.Star(radius_sun=2.0, teff_k=9600.0, magnitude=0.0, band="V")
    photons = sp.photons_per_bin(vega_like, one_square_metre, 0.545, 545.0, 1.0)
    assert photons / (1e4 * 10.0 * 3600.0) == pytest.approx(refs.V0_PHOTONS_S_CM2_A, rel=0.02)


def test_sun_twin_at_10_pc_has_solar_absolute_magnitude():
    # M_V(Sun) ~ 4.83 (from memory); a blackbody is not the Sun, so allow 0.15 mag.
    m_v = sp.blackbody_magnitude(refs.SUN_TEFF_K, 1.0, 10.0, "V")
    assert m_v == pytest.approx(refs.SUN_ABSOLUTE_V_MAG, abs=0.15)


def test_collecting_area_removes_obstruction():
    # Annulus area (common practice, no source): pi/4 (D^2 - (eps D)^2); eps = 0.5 keeps 3/4.
    full = sp.collecting_area_m2(replace(SPECTROGRAPH, central_obstruction=0.0))
    assert sp.collecting_area_m2(replace(SPECTROGRAPH, central_obstruction=0.5)) == pytest.approx(0.75 * full)
    assert full == pytest.approx(math.pi * 4.0, rel=1e-12)


def test_zero_time_gives_zero_snr_and_resolution():
    # Nothing stacked, nothing measured (definition).
    assert sp.spectrum_snr(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED, 100.0, 0.0, 5.0) == 0.0
    assert sp.achievable_resolution(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED, 3.0, 0.0, 0.0) == 0.0


@pytest.mark.parametrize(
    "build",
    [
        lambda: sp.Planet(radius_earth=-1.0, mass_earth=1.0, teq_k=300.0),
        lambda: sp.Planet(radius_earth=1.0, teq_k=300.0),
        lambda: sp.Planet(radius_earth=1.0, mass_earth=1.0, surface_gravity_m_s2=9.8, teq_k=300.0),
        lambda: sp.Planet(radius_earth=1.0, mass_earth=1.0),
        lambda: sp.Planet(radius_earth=1.0, mass_earth=1.0, a_over_rstar=0.5),
        lambda: sp.Planet(radius_earth=1.0, mass_earth=1.0, teq_k=300.0, mu=0.0),
        lambda: sp.Planet(radius_earth=1.0, mass_earth=1.0, teq_k=float("nan")),
        lambda: sp.Star(radius_sun=0.0, teff_k=5000.0, distance_pc=10.0),
        lambda: sp.Star(radius_sun=1.0, teff_k=5000.0),
        lambda: sp.Star(radius_sun=1.0, teff_k=5000.0, magnitude=8.0, band="Q"),
        lambda: sp.Star(radius_sun=1.0, teff_k=5000.0, magnitude=8.0, band="V", distance_pc=10.0),
        lambda: sp.Star(radius_sun=1.0, teff_k=5000.0, distance_pc=-3.0),
        lambda: sp.Instrument(2.0, 1.0, 0.5, 0.5, 1.0),
        lambda: sp.Instrument(2.0, 0.1, 1.5, 0.5, 1.0),
        lambda: sp.Instrument(2.0, 0.1, 0.5, 1.0, 0.5),
        lambda: sp.Instrument(-2.0, 0.1, 0.5, 0.5, 1.0),
        lambda: sp.Instrument(2.0, 0.1, 0.5, 0.5, 1.0, noise_floor_ppm=-1.0),
        lambda: sp.scale_height_m(-10.0, 2.3, 9.8),
        lambda: sp.spectrum_snr(WARM_SUB_NEPTUNE, COOL_DWARF, SPECTROGRAPH, 0.0, 1.0, 1.0),
        lambda: sp.spectrum_snr(WARM_SUB_NEPTUNE, COOL_DWARF, SPECTROGRAPH, 10.0, -1.0, 1.0),
        lambda: sp.achievable_resolution(WARM_SUB_NEPTUNE, COOL_DWARF, SPECTROGRAPH, -5.0, 1.0, 1.0),
        lambda: sp.hours_in_transit_needed(WARM_SUB_NEPTUNE, COOL_DWARF, SPECTROGRAPH, 10.0, 5.0, out_per_in=0.0),
        lambda: sp.blackbody_magnitude(5772.0, 1.0, 10.0, "Z"),
    ],
)
def test_bad_inputs_raise_input_error(build):
    # Project rule: impossible values raise InputError.
    with pytest.raises(InputError):
        build()


hours = st.floats(min_value=0.0, max_value=1e5, allow_nan=False)
floors = st.sampled_from([SPECTROGRAPH, FLOORED])


@settings(max_examples=60, deadline=None)
@given(hours_in=hours, extra=hours, instrument=floors)
def test_achievable_resolution_never_drops_as_hours_are_added(hours_in, extra, instrument):
    # Property: more stacked time never lowers the achievable resolution (common practice, no source).
    before = sp.achievable_resolution(WARM_SUB_NEPTUNE, COOL_DWARF, instrument, 5.0, hours_in, 2.0 * hours_in)
    after = sp.achievable_resolution(
        WARM_SUB_NEPTUNE, COOL_DWARF, instrument, 5.0, hours_in + extra, 2.0 * (hours_in + extra)
    )
    assert after >= before


@settings(max_examples=60, deadline=None)
@given(
    r_low=st.floats(min_value=1e-2, max_value=1e5),
    factor=st.floats(min_value=1.0, max_value=1e3),
    hours_in=st.floats(min_value=1e-3, max_value=1e5),
)
def test_snr_never_rises_with_resolution_and_stays_under_cap(r_low, factor, hours_in):
    # Property: finer bins collect fewer photons; the floor caps SNR at delta / f (common practice, no source).
    low, high = (
        sp.spectrum_snr(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED, r, hours_in, hours_in) for r in (r_low, r_low * factor)
    )
    assert high <= low * (1 + 1e-12)
    assert low <= sp.snr_cap(WARM_SUB_NEPTUNE, COOL_DWARF, FLOORED)
