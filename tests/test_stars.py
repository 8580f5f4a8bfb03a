"""Tests of the stellar flux in an instrument's band: real colours, band integration, photons.

Reference values and their sources are in tests/authorities/stars.py.
"""

import numpy as np
import pytest

import vigil  # noqa: F401  (configures astropy offline before astropy is used)
from astropy import constants as const
from astropy import units as u
from astropy.modeling.models import BlackBody

from vigil import passbands, stars
from vigil.errors import InputError

from authorities import stars as refs

ROWS = {row[0]: row for row in refs.MEAN_DWARF_SEQUENCE}


def _magnitudes(flux_w_m2_um, bands=("V", "J", "Ks")):
    return {band: float(passbands.vega_magnitude(band, stars.GRID_UM, flux_w_m2_um)) for band in bands}


@pytest.mark.parametrize("spectral_type", sorted(ROWS))
def test_colours_follow_the_mean_dwarf_sequence(spectral_type):
    # Pecaut & Mamajek 2013, Table 5 (tests/authorities/stars.py): V - J and J - Ks of a star
    # given by its J magnitude, integrated through the band curves, within 0.1 mag.
    _, teff_k, m_v, m_j, m_ks = ROWS[spectral_type]
    flux = stars.flux_at_earth_w_m2_um(teff_k, 1.0, magnitude=m_j, band="J")
    got = _magnitudes(flux)
    assert got["J"] == pytest.approx(m_j, abs=1e-6)
    assert got["V"] - got["J"] == pytest.approx(m_v - m_j, abs=refs.COLOUR_TOLERANCE_MAG)
    assert got["J"] - got["Ks"] == pytest.approx(m_j - m_ks, abs=refs.COLOUR_TOLERANCE_MAG)


@pytest.mark.parametrize("spectral_type", sorted(refs.BLACKBODY_V_MINUS_J_DEFICIT_MAG))
def test_a_pure_blackbody_fails_the_colour_check(spectral_type):
    # The check above can fail: a blackbody is too blue by the deficits of the reference table.
    _, teff_k, m_v, m_j, _ = ROWS[spectral_type]
    got = _magnitudes(stars.blackbody_surface_flux_w_m2_um(stars.GRID_UM, teff_k))
    deficit = (m_v - m_j) - (got["V"] - got["J"])
    assert deficit == pytest.approx(refs.BLACKBODY_V_MINUS_J_DEFICIT_MAG[spectral_type], abs=0.1)
    assert deficit > refs.COLOUR_TOLERANCE_MAG


def test_sun_twin_at_10_pc_has_the_suns_absolute_magnitudes():
    # Willmer 2018, Table 3 (V, J, Ks within 0.1 mag; H is not a knot of the colour correction,
    # it lies between J and Ks, so 0.2 mag); Casagrande & VandenBerg 2018 for Gaia G.
    sun = stars.flux_at_earth_w_m2_um(refs.SUN_TEFF_K, refs.SUN_RADIUS_M / const.R_sun.value, distance_pc=10.0)
    got = _magnitudes(sun, ("V", "J", "H", "Ks", "G"))
    for band in ("V", "J", "Ks"):
        assert got[band] == pytest.approx(refs.SUN_ABSOLUTE_MAG[band], abs=0.1), band
    assert got["H"] == pytest.approx(refs.SUN_ABSOLUTE_MAG["H"], abs=0.2)
    assert got["G"] == pytest.approx(refs.SUN_ABSOLUTE_G_MAG, abs=0.1)


def test_v0_star_gives_a_thousand_photons_per_angstrom_near_550_nm():
    # Common practice, no source: ~1000 photons s^-1 cm^-2 A^-1, within 5 %.
    for teff_k in (5770.0, 4440.0):
        flux = stars.flux_at_earth_w_m2_um(teff_k, 1.0, magnitude=0.0, band="V")
        per_cm2_a = float(stars.photon_flux(flux, 0.55)) * 1e-4 * 1e-4
        assert per_cm2_a == pytest.approx(refs.V0_PHOTONS_S_CM2_A, rel=refs.V0_TOLERANCE)


@pytest.mark.parametrize("band", ["V", "J", "H", "Ks", "G", "TESS"])
def test_the_star_is_scaled_to_its_magnitude_through_the_band(band):
    # Definition of a band magnitude: the scaled spectrum, integrated again, gives it back.
    flux = stars.flux_at_earth_w_m2_um(3600.0, 0.45, magnitude=9.3, band=band)
    assert float(passbands.vega_magnitude(band, stars.GRID_UM, flux)) == pytest.approx(9.3, abs=1e-9)


def test_tess_zero_magnitude_star_has_the_published_band_flux():
    # Sullivan et al. 2015, section 6.1: a T = 0 star gives 4.03e-6 erg s^-1 cm^-2 in the band
    # (its flat top, 0.6-1.0 um); checked for a flat spectrum, as the zero point is defined here.
    level = np.full(stars.GRID_UM.size, 1.0)
    scale = 10.0 ** (-0.4 * (0.0 - float(passbands.vega_magnitude("TESS", stars.GRID_UM, level))))
    inside = (stars.GRID_UM >= 0.6) & (stars.GRID_UM <= 1.0)
    band_flux_w_m2 = np.trapezoid(scale * level[inside], stars.GRID_UM[inside])
    assert band_flux_w_m2 * 1e3 == pytest.approx(refs.TESS_ZERO_FLUX_ERG_S_CM2, rel=0.03)


def test_blackbody_sun_gives_the_solar_irradiance():
    # Kopp & Lean 2011: TSI = 1361 W m^-2; IAU 2015 nominal T_eff and R_sun at 1 au.
    wavelength_um = np.geomspace(0.01, 1000.0, 200_001)
    surface = stars.blackbody_surface_flux_w_m2_um(wavelength_um, refs.SUN_TEFF_K)
    irradiance = np.trapezoid(surface, wavelength_um) * (refs.SUN_RADIUS_M / const.au.value) ** 2
    assert irradiance == pytest.approx(refs.SOLAR_IRRADIANCE_W_M2, rel=0.01)


def test_blackbody_matches_astropy():
    # Reference library: astropy.modeling BlackBody, pi B_lambda.
    wavelength = np.array([0.3, 0.7, 1.5, 4.0, 12.0]) * u.um
    radiance = BlackBody(temperature=4200.0 * u.K, scale=1.0 * u.W / (u.m**2 * u.um * u.sr))(wavelength)
    expected = (np.pi * u.sr * radiance).to_value(u.W / (u.m**2 * u.um))
    assert stars.blackbody_surface_flux_w_m2_um(wavelength.to_value(u.um), 4200.0) == pytest.approx(expected, rel=1e-9)


def test_unknown_band_is_one_error_line():
    with pytest.raises(InputError, match="band: expected one of V, J, H, Ks, G, TESS"):
        passbands.band("Q")
