"""The physical pieces of a visit's noise budget, one small function each, with its source.

Every rate here is per second of wall-clock time at the telescope; the visit model
(``visit_budget``) turns them into the variance of a transit depth in one spectral bin.
"""

from __future__ import annotations

import math

import numpy as np

from vigil import stars

#: Atmospheric extinction at a good site, (wavelength um, mag per airmass), interpolated
#: linearly and held at the ends: about 0.13 mag in V, falling to a few hundredths in the near
#: infrared outside the telluric bands (common practice, no source).
EXTINCTION_MAG_PER_AIRMASS = ((0.35, 0.50), (0.44, 0.24), (0.55, 0.13), (0.65, 0.09), (0.80, 0.05),
                              (0.90, 0.04), (1.25, 0.06), (1.65, 0.04), (2.20, 0.07))
#: Moonless sky at a good dark site, (wavelength um, Vega F_lambda zero point W m^-2 um^-1,
#: sky mag arcsec^-2): B, V, R, I zero points from Bessell, Castelli & Plez 1998 (A&A 333,
#: 231, Table A2), J, H, Ks from Cohen, Wheaton & Megeath 2003 (AJ 126, 1090, Table 2), both
#: from memory; sky brightness common practice, no source (V about 21.5-22 at a good site).
DARK_SKY = ((0.44, 6.32e-8, 22.7), (0.55, 3.631e-8, 21.8), (0.64, 2.177e-8, 20.9), (0.80, 1.126e-8, 19.9),
            (1.235, 3.129e-9, 16.5), (1.662, 1.133e-9, 14.4), (2.159, 4.283e-10, 13.0))
#: Young (1967) scintillation constant in Osborn et al. (2015, MNRAS 452, 1707) eq. 7, and the
#: atmospheric scale height (m) it uses.
YOUNG_CONSTANT = 10e-6
SCINTILLATION_SCALE_HEIGHT_M = 8000.0
#: Krisciunas & Schaefer (1991, PASP 103, 1033) V-band extinction used in their Moon model, and
#: the Moon's altitude assumed where a visit's is unknown (deg; a nominal visit, a ledger written
#: before the windows carried it).
KS_EXTINCTION_V = 0.172
MOON_ALTITUDE_DEG = 30.0
_V_UM, _V_ZERO_W_M2_UM = DARK_SKY[1][:2]


def duty_cycle(exposure_s: float, readout_s: float) -> float:
    """Fraction of wall-clock time spent integrating, t_exp / (t_exp + t_read).

    Examples
    --------
    >>> duty_cycle(60.0, 20.0)
    0.75
    """
    return exposure_s / (exposure_s + readout_s)


def extinction_mag_per_airmass(wavelength_um) -> np.ndarray:
    """Extinction coefficient k(lambda) (mag per airmass) of EXTINCTION_MAG_PER_AIRMASS.

    Examples
    --------
    >>> float(extinction_mag_per_airmass(0.55))
    0.13
    """
    at_um, k = zip(*EXTINCTION_MAG_PER_AIRMASS)
    return np.interp(np.asarray(wavelength_um, dtype=float), at_um, k)


def atmospheric_transmission(wavelength_um, airmass) -> np.ndarray:
    """Fraction of the star's light that crosses the atmosphere, 10^(-0.4 k(lambda) X)
    (Bouguer's law), broadcast over wavelength and airmass.

    Examples
    --------
    >>> round(float(atmospheric_transmission(0.55, 2.0)), 3)
    0.787
    """
    return 10.0 ** (-0.4 * extinction_mag_per_airmass(wavelength_um) * np.asarray(airmass, dtype=float))


def scintillation_variance_s(aperture_m: float, airmass, elevation_m, factor: float) -> np.ndarray:
    """Relative flux variance from scintillation times the integration time (s): Young (1967)
    as written by Osborn et al. (2015, MNRAS 452, 1707, eq. 7),
    sigma^2 t = 10e-6 D^(-4/3) X^3 exp(-2 h / 8000 m), multiplied by ``factor``^2 (Osborn et al.
    find the measured median larger than Young's estimate; 1.5 is the usual conservative
    factor, from memory). Airmass X stands for sec z.

    Examples
    --------
    >>> f"{float(scintillation_variance_s(1.0, 1.0, 0.0, 1.0)):.1e}"
    '1.0e-05'
    """
    airmass, elevation_m = np.asarray(airmass, dtype=float), np.asarray(elevation_m, dtype=float)
    return (factor**2 * YOUNG_CONSTANT * aperture_m ** (-4.0 / 3.0) * airmass**3
            * np.exp(-2.0 * elevation_m / SCINTILLATION_SCALE_HEIGHT_M))


def _nanolambert(v_mag_arcsec2):
    """Surface brightness in nanolamberts of a V mag arcsec^-2 (Krisciunas & Schaefer 1991)."""
    return 34.08 * np.exp(20.7233 - 0.92104 * np.asarray(v_mag_arcsec2, dtype=float))


def _ks_airmass(zenith_deg):
    """Krisciunas & Schaefer (1991) airmass of their Moon model, (1 - 0.96 sin^2 z)^(-1/2)."""
    return (1.0 - 0.96 * np.sin(np.radians(zenith_deg)) ** 2) ** -0.5


def moonlight_nanolambert(illumination, separation_deg, airmass, moon_altitude_deg=MOON_ALTITUDE_DEG) -> np.ndarray:
    """Scattered moonlight in V (nanolamberts), Krisciunas & Schaefer (1991, PASP 103, 1033,
    eqs. 15-21; from memory) for the Moon's centre at `moon_altitude_deg` (geometric; NaN:
    MOON_ALTITUDE_DEG), with its phase angle from the illuminated fraction,
    f = (1 + cos alpha) / 2; zero for a new Moon and for a Moon below the horizon.

    Examples
    --------
    >>> float(moonlight_nanolambert(0.0, 90.0, 1.2)), float(moonlight_nanolambert(1.0, 90.0, 1.2, -5.0))
    (0.0, 0.0)
    """
    illumination = np.asarray(illumination, dtype=float)
    alpha_deg = np.degrees(np.arccos(np.clip(2.0 * illumination - 1.0, -1.0, 1.0)))
    moon_illuminance = 10.0 ** (-0.4 * (3.84 + 0.026 * alpha_deg + 4e-9 * alpha_deg**4))
    rho = np.asarray(separation_deg, dtype=float)
    scattering = 10.0**5.36 * (1.06 + np.cos(np.radians(rho)) ** 2) + 10.0 ** (6.15 - rho / 40.0)
    moon_alt = np.nan_to_num(np.asarray(moon_altitude_deg, dtype=float), nan=MOON_ALTITUDE_DEG)
    moon_path = 10.0 ** (-0.4 * KS_EXTINCTION_V * _ks_airmass(90.0 - np.clip(moon_alt, 0.0, 90.0)))
    target_path = 1.0 - 10.0 ** (-0.4 * KS_EXTINCTION_V * np.asarray(airmass, dtype=float))
    up = (illumination > 0) & (moon_alt >= 0.0)
    return np.where(up, scattering * moon_illuminance * moon_path * target_path, 0.0)


def sky_v_mag_arcsec2(illumination, separation_deg, airmass, moon_altitude_deg=MOON_ALTITUDE_DEG) -> np.ndarray:
    """V sky brightness (mag arcsec^-2): the dark sky of DARK_SKY plus scattered moonlight
    (`moonlight_nanolambert`).

    Examples
    --------
    >>> round(float(sky_v_mag_arcsec2(0.0, 90.0, 1.0)), 2)
    21.8
    """
    dark = _nanolambert(DARK_SKY[1][2])
    total = dark + moonlight_nanolambert(illumination, separation_deg, airmass, moon_altitude_deg)
    return (20.7233 - np.log(total / 34.08)) / 0.92104


def sky_photon_flux(wavelength_um, illumination, separation_deg, airmass, moon_altitude_deg=MOON_ALTITUDE_DEG
                    ) -> np.ndarray:
    """Sky photons s^-1 m^-2 um^-1 arcsec^-2 at ``wavelength_um`` (last axis) for visits
    (leading axis): DARK_SKY interpolated in wavelength, plus moonlight (`moonlight_nanolambert`)
    scaled from V with the Sun's spectrum (moonlight is sunlight; the extra blue of its
    scattering is left out).

    Examples
    --------
    >>> sky_photon_flux([0.55, 0.80], [0.0], [90.0], [1.0]).shape
    (1, 2)
    """
    wavelength_um = np.asarray(wavelength_um, dtype=float)
    at_um, zero_w, mag = (np.array(c) for c in zip(*DARK_SKY))
    zero_here = np.exp(np.interp(np.log(wavelength_um), np.log(at_um), np.log(zero_w)))
    dark = zero_here * 10.0 ** (-0.4 * np.interp(wavelength_um, at_um, mag)) * stars.photons_per_joule(wavelength_um)
    moon_nl = moonlight_nanolambert(illumination, separation_deg, airmass, moon_altitude_deg)
    moon_v = _V_ZERO_W_M2_UM * moon_nl / _nanolambert(0.0) * stars.photons_per_joule(_V_UM)
    sun = stars.surface_flux_w_m2_um(5772.0)
    sun_shape = stars.photon_flux(sun, wavelength_um) / stars.photon_flux(sun, _V_UM)
    return dark[None, :] + np.atleast_1d(moon_v)[:, None] * sun_shape[None, :]


def trapezoid_time_fraction(radius_ratio: float, impact_parameter: float) -> float:
    """Effective share of the in-transit time for a trapezoidal transit: with the depth linear
    through ingress and egress and a least-squares fit of the depth, the information is
    T23 + (T14 - T23) / 3, i.e. (1 + 2 T23/T14) / 3 of T14; T23/T14 from Winn (2010, "Transits
    and Occultations", eqs. 14-15 in the small-angle limit), sqrt((1-k)^2 - b^2) /
    sqrt((1+k)^2 - b^2) (0 for a grazing transit).

    Examples
    --------
    >>> round(trapezoid_time_fraction(0.1, 0.0), 4)
    0.8788
    """
    inner = (1.0 - radius_ratio) ** 2 - impact_parameter**2
    ratio = math.sqrt(inner / ((1.0 + radius_ratio) ** 2 - impact_parameter**2)) if inner > 0 else 0.0
    return (1.0 + 2.0 * ratio) / 3.0
