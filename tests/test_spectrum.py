"""Tests of the planet, star and instrument of a forecast and of the feature size.

Reference values and their sources are in tests/authorities/spectrum_refs.py.
"""

import math
from dataclasses import replace

import pytest

import vigil  # noqa: F401  (configures astropy offline before astropy is used)
from vigil import spectrum as sp
from vigil.errors import InputError

from astropy import constants as const

from authorities import spectrum_refs as refs

# Invented targets and instrument.
WARM_SUB_NEPTUNE = sp.Planet(radius_earth=2.2, mass_earth=6.0, a_over_rstar=25.0, mu=2.3)
COOL_DWARF = sp.Star(radius_sun=0.35, teff_k=3400.0, magnitude=8.5, band="J")
SPECTROGRAPH = sp.Instrument(
    aperture_m=4.0, central_obstruction=0.2, throughput=0.3, wavelength_min_um=0.8, wavelength_max_um=2.4
)


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


def test_collecting_area_removes_obstruction():
    # Annulus area (common practice, no source): pi/4 (D^2 - (eps D)^2); eps = 0.5 keeps 3/4.
    full = sp.collecting_area_m2(replace(SPECTROGRAPH, central_obstruction=0.0))
    assert sp.collecting_area_m2(replace(SPECTROGRAPH, central_obstruction=0.5)) == pytest.approx(0.75 * full)
    assert full == pytest.approx(math.pi * 4.0, rel=1e-12)


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
        lambda: sp.Planet(radius_earth=1.0, mass_earth=1.0, teq_k=300.0, impact_parameter=1.2),
        lambda: sp.feature_depth(sp.Planet(radius_earth=1.0, mass_earth=1.0, teq_k=300.0), COOL_DWARF),
    ],
)
def test_bad_inputs_raise_input_error(build):
    # Project rule: impossible values raise InputError.
    with pytest.raises(InputError):
        build()
