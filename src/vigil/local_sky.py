"""Sidereal time, altitude, refraction and darkness at a site, in vectorised numpy.

The fast engine's local sky, built on the low-precision places of date (`places_of_date`).
``jd_ut`` means UT1 approximated by UTC: |UT1 - UTC| < 0.9 s, so the hour angle is off by
less than 0.004 deg (and darkness boundaries by less than about 1 s).

Models (worst differences in brackets):
- Sidereal time: IAU 1982 GMST (Meeus, Astronomical Algorithms, ch. 12) plus the equation of
  the equinoxes from the nutation's main terms (Meeus ch. 22) [0.015 s from astropy].
- Moon seen from the site: the geocentric Moon minus the site's position [0.012 deg].
- Refraction: Saemundsson (1986) for true altitudes, Bennett (1982) for apparent ones.
- Darkness: Sun-centre crossings [3 s from PyEphem at |lat| <= 45 deg, up to about 45 s
  at 63-80 deg where the Sun crosses the threshold slowly].
"""

from typing import NamedTuple

import numpy as np

from vigil.errors import InputError
from vigil import places_of_date
from vigil.places_of_date import (DAYS_PER_CENTURY, J2000_JD, check_latitude, nutation_state, radec_deg_from_vector,
                                  sun_radec_from_nutation_deg, wrap180, wrap360)
from vigil.timescales import tt_minus_utc_s

_SOLAR_DAY_HOUR_ANGLE_RATE_DEG_PER_D = 360.0  # mean solar hour angle advances 360 deg per day
SIDEREAL_DEG_PER_DAY = 360.98564736629  # Earth's rotation relative to the equinox, per UT day
_EARTH_RADIUS_KM = 6378.137  # WGS84 equatorial radius
_EARTH_FLATTENING = 1.0 / 298.257223563  # WGS84


# ---------------------------------------------------------------------------------------------
# Sidereal time


def gmst_deg(jd_ut1):
    """Greenwich mean sidereal time in degrees [0, 360) (IAU 1982; Meeus eq. 12.4)."""
    d = np.asarray(jd_ut1, dtype=float) - J2000_JD
    t = d / DAYS_PER_CENTURY
    theta = 280.46061837 + SIDEREAL_DEG_PER_DAY * d + t * t * (0.000387933 - t / 38710000.0)
    return wrap360(theta)


def _equation_of_equinoxes_from_nutation_deg(nutation):
    dpsi, _, eps_true = nutation
    return dpsi * np.cos(np.radians(eps_true))


def equation_of_equinoxes_deg(jd_tt):
    """Apparent minus mean sidereal time in degrees: dpsi cos(true obliquity) (Meeus ch. 12)."""
    return _equation_of_equinoxes_from_nutation_deg(nutation_state(jd_tt))


def _gast_from_nutation_deg(jd_ut1, nutation):
    return wrap360(gmst_deg(jd_ut1) + _equation_of_equinoxes_from_nutation_deg(nutation))


def gast_deg(jd_ut1, jd_tt):
    """Greenwich apparent sidereal time in degrees: GMST + dpsi cos(true obliquity)."""
    return _gast_from_nutation_deg(jd_ut1, nutation_state(jd_tt))


def local_sidereal_deg(jd_ut, longitude_deg):
    """Local apparent sidereal time in degrees, longitude east positive.

    jd_ut is UT1 taken as UTC (0.004 deg at most). It also stands in for TT in the equation
    of the equinoxes, which changes by under 1e-6 s over the ~69 s between the two scales.
    """
    return wrap360(gast_deg(jd_ut, jd_ut) + np.asarray(longitude_deg, dtype=float))


# ---------------------------------------------------------------------------------------------
# The site's place and the Moon seen from it


def observer_geocentric_km(lat_deg, elev_m):
    """Observer's distance from the Earth's axis and from the equator plane (km), WGS84."""
    lat_rad = np.radians(lat_deg)
    b_over_a = 1.0 - _EARTH_FLATTENING
    u = np.arctan(b_over_a * np.tan(lat_rad))
    h = np.asarray(elev_m, dtype=float) / 1000.0
    rho_cos = _EARTH_RADIUS_KM * np.cos(u) + h * np.cos(lat_rad)
    rho_sin = _EARTH_RADIUS_KM * b_over_a * np.sin(u) + h * np.sin(lat_rad)
    return rho_cos, rho_sin


def moon_topocentric_radec_deg(jd_tt, jd_ut, lat_deg, lon_deg, elev_m):
    """Apparent topocentric (ra_deg, dec_deg) of the Moon seen from a site (lon east positive).

    The geocentric position minus the observer's position (WGS84) rotated by the local
    apparent sidereal time; the parallax removed this way reaches about 1 deg.
    jd_ut is UT1 taken as UTC.
    """
    lat = check_latitude(lat_deg)
    mx, my, mz = places_of_date.moon_geocentric_km(jd_tt)
    rho_cos, rho_sin = observer_geocentric_km(lat, elev_m)
    last_rad = np.radians(gast_deg(jd_ut, jd_tt) + np.asarray(lon_deg, dtype=float))
    return radec_deg_from_vector(mx - rho_cos * np.cos(last_rad), my - rho_cos * np.sin(last_rad), mz - rho_sin)


# ---------------------------------------------------------------------------------------------
# Altitude and refraction


def altitude_deg(ha_deg, dec_deg, lat_deg):
    """Geometric altitude in degrees from hour angle, declination and latitude (all deg)."""
    lat = np.radians(lat_deg)
    dec = np.radians(dec_deg)
    sin_alt = np.sin(lat) * np.sin(dec) + np.cos(lat) * np.cos(dec) * np.cos(np.radians(ha_deg))
    return np.degrees(np.arcsin(np.clip(sin_alt, -1.0, 1.0)))


def azimuth_deg(ha_deg, dec_deg, lat_deg):
    """Azimuth in degrees [0, 360), north 0 and east 90, from hour angle, declination and latitude (deg)."""
    ha, dec, lat = np.radians(ha_deg), np.radians(dec_deg), np.radians(lat_deg)
    east = -np.cos(dec) * np.sin(ha)
    north = np.sin(dec) * np.cos(lat) - np.cos(dec) * np.cos(ha) * np.sin(lat)
    return np.degrees(np.arctan2(east, north)) % 360.0


def hour_angle_at_altitude_deg(alt_deg, dec_deg, lat_deg):
    """Half-width in hour angle (deg, [0, 180]) of the arc where a target is above alt_deg.

    0 if it never rises above alt_deg, 180 if it never sets below it. At a pole (where the
    altitude does not depend on hour angle) the answer is 0 or 180 from the declination.
    """
    lat = np.radians(lat_deg)
    dec = np.radians(dec_deg)
    numerator = np.sin(np.radians(alt_deg)) - np.sin(lat) * np.sin(dec)
    denominator = np.cos(lat) * np.cos(dec)
    flat = denominator < 1e-12  # pole of the sky or of the Earth: altitude is constant
    with np.errstate(divide="ignore", invalid="ignore"):
        cos_h = np.where(flat, np.where(numerator < 0.0, -2.0, 2.0), numerator / denominator)
    return np.degrees(np.arccos(np.clip(cos_h, -1.0, 1.0)))


def refraction_deg(alt_deg, pressure_hpa=1010.0, temp_c=10.0, *, alt_is_apparent=False):
    """Atmospheric refraction in degrees (apparent altitude - true altitude).

    By default alt_deg is the true (geometric) altitude and Saemundsson's (1986) formula
    R' = 1.02 / tan(h + 10.3 / (h + 5.11)) is used, so apparent = true + refraction.
    With alt_is_apparent=True, Bennett's (1982) R' = 1 / tan(h + 7.31 / (h + 4.4)) is used.
    Both in arcminutes, scaled by (P / 1010 hPa) (283 K / T) and offset to give 0 at the
    zenith (Meeus ch. 16). Altitudes below -1 deg are taken as -1 deg.
    """
    h = np.clip(np.asarray(alt_deg, dtype=float), -1.0, 90.0)
    if alt_is_apparent:
        r_arcmin = 1.0 / np.tan(np.radians(h + 7.31 / (h + 4.4))) + 0.0013515
    else:
        r_arcmin = 1.02 / np.tan(np.radians(h + 10.3 / (h + 5.11))) + 0.0019279
    scale = (np.asarray(pressure_hpa, dtype=float) / 1010.0) * (283.0 / (273.0 + np.asarray(temp_c, dtype=float)))
    return r_arcmin / 60.0 * scale


# ---------------------------------------------------------------------------------------------
# Darkness


class _Days(NamedTuple):
    """Per-day constants for the Sun: TT - UTC (days) and nutation (changes < 0.1" in a day)."""

    tt_offset_d: np.ndarray
    nutation: tuple

    @classmethod
    def at(cls, jd_utc_0h):
        tt_offset_d = tt_minus_utc_s(jd_utc_0h) / 86400.0
        return cls(tt_offset_d, nutation_state(jd_utc_0h + tt_offset_d))

    def take(self, index):
        """The constants for the days numbered by index (integer array)."""
        return _Days(self.tt_offset_d[index], tuple(x[index] for x in self.nutation))


def _sun_hour_angle_dec(jd_utc, day, lon_deg):
    """Sun's hour angle (deg, UT1 taken as UTC) and declination (deg) at UTC Julian dates."""
    jd_tt = jd_utc + day.tt_offset_d
    ra, dec = sun_radec_from_nutation_deg(jd_tt, day.nutation)
    return _gast_from_nutation_deg(jd_utc, day.nutation) + lon_deg - ra, dec


def _solar_transits(first_guess_jd_utc, day, lon_deg, hour_angle_deg):
    """Times when the Sun's hour angle equals hour_angle_deg, iterated from a guess within hours."""
    t = first_guess_jd_utc
    for _ in range(2):
        ha, _ = _sun_hour_angle_dec(t, day, lon_deg)
        t = t - wrap180(ha - hour_angle_deg) / _SOLAR_DAY_HOUR_ANGLE_RATE_DEG_PER_D
    return t


def _sun_crossings(start, end, start_dark, day, lat_deg, lon_deg, sun_alt_deg):
    """Time in each bracket [start, end] where the Sun's altitude crosses sun_alt_deg.

    The brackets run between solar transits, where the altitude is monotone, and their ends
    lie on opposite sides of the threshold. First guess from the hour angle at the threshold,
    then Newton steps on sin(altitude), falling back to bisection when a step leaves the bracket.
    """
    ha_a, dec_a = _sun_hour_angle_dec(start, day, lon_deg)
    _, dec_b = _sun_hour_angle_dec(end, day, lon_deg)
    dec_rate_rad = np.radians(dec_b - dec_a) / (end - start)  # per day, constant over half a day
    half_width = hour_angle_at_altitude_deg(sun_alt_deg, 0.5 * (dec_a + dec_b), lat_deg)
    from_noon = np.abs(wrap180(ha_a)) < 90.0
    ha_target = np.where(from_noon, half_width, 360.0 - half_width)
    t = start + wrap360(ha_target - ha_a) / _SOLAR_DAY_HOUR_ANGLE_RATE_DEG_PER_D
    t = np.clip(t, start, end)

    lat = np.radians(lat_deg)
    sin_lat, cos_lat, sin_h0 = np.sin(lat), np.cos(lat), np.sin(np.radians(sun_alt_deg))
    ha_rate_rad = np.radians(_SOLAR_DAY_HOUR_ANGLE_RATE_DEG_PER_D)
    lo, hi = start.copy(), end.copy()
    converged = np.zeros(t.shape, dtype=bool)
    for _ in range(40):
        ha, dec = _sun_hour_angle_dec(t, day, lon_deg)
        ha_rad, dec_rad = np.radians(ha), np.radians(dec)
        sin_dec, cos_dec, cos_ha = np.sin(dec_rad), np.cos(dec_rad), np.cos(ha_rad)
        g = sin_lat * sin_dec + cos_lat * cos_dec * cos_ha - sin_h0
        dg = (sin_lat * cos_dec - cos_lat * sin_dec * cos_ha) * dec_rate_rad - cos_lat * cos_dec * np.sin(
            ha_rad
        ) * ha_rate_rad
        on_start_side = (g < 0.0) == start_dark
        lo = np.where(on_start_side, t, lo)
        hi = np.where(on_start_side, hi, t)
        with np.errstate(divide="ignore", invalid="ignore"):
            t_new = t - g / dg
        t_new = np.where((t_new >= lo) & (t_new <= hi), t_new, 0.5 * (lo + hi))
        # Each crossing stops once its own step is below 1e-6 d (0.09 s), so that a night's
        # answer does not depend on which other nights are solved in the same call.
        t_new = np.where(converged, t, t_new)
        converged |= np.abs(t_new - t) < 1e-6
        t = t_new
        if np.all(converged):
            break
    return t


def dark_intervals(lat_deg, lon_deg, elev_m, jd_utc_start, jd_utc_end, sun_alt_deg):
    """Intervals when the Sun's centre is below sun_alt_deg, as (start_jd_utc, end_jd_utc) arrays.

    Geometric altitude of the Sun's centre (no refraction), the usual twilight convention:
    -6, -12, -18 deg for civil, nautical, astronomical. Intervals are sorted, disjoint, clipped
    to [jd_utc_start, jd_utc_end] and merged across days when the Sun stays below all day
    (polar night). Method: solar upper and lower transits each day; the darkness state at each
    and one crossing in each half-day where the state changes, solved to under 0.1 s on the
    fast Sun (whose 0.01 deg model error is a few seconds at mid latitudes). UT1 is taken as UTC.
    The Sun's parallax (0.0024 deg) is ignored; elev_m is accepted for a uniform site signature.
    Within about 1 deg of a pole, two crossings within one half-day can be missed.
    """
    lat = float(check_latitude(lat_deg))
    lon = float(lon_deg)
    if not np.isfinite(lon):
        raise InputError(f"lon_deg: expected a finite longitude in degrees, got {lon_deg!r}")
    if not np.isfinite(float(elev_m)):
        raise InputError(f"elev_m: expected a finite elevation in metres, got {elev_m!r}")
    if not (np.isfinite(jd_utc_start) and np.isfinite(jd_utc_end) and jd_utc_end > jd_utc_start):
        raise InputError(
            f"jd_utc_end: expected a finite Julian date after jd_utc_start={jd_utc_start!r}, got {jd_utc_end!r}"
        )
    if not -90.0 < sun_alt_deg < 90.0:
        raise InputError(f"sun_alt_deg: expected an altitude in degrees within (-90, 90), got {sun_alt_deg!r}")

    lon = float(wrap180(lon))
    # 0h UTC of each day, one spare day on each side so that transits bracket the whole range.
    midnight_0h = np.arange(np.floor(jd_utc_start - 0.5) - 1.0, np.floor(jd_utc_end - 0.5) + 2.0) + 0.5
    days = _Days.at(midnight_0h)
    local_noon_guess = midnight_0h + 0.5 - lon / 360.0
    noons = _solar_transits(local_noon_guess, days, lon, 0.0)
    lower = _solar_transits(local_noon_guess + 0.5, days, lon, 180.0)
    transits = np.stack([noons, lower], axis=-1).ravel()
    day_of_transit = days.take(np.repeat(np.arange(midnight_0h.size), 2))
    ha, dec = _sun_hour_angle_dec(transits, day_of_transit, lon)
    dark = altitude_deg(ha, dec, lat) < sun_alt_deg

    change = np.flatnonzero(dark[:-1] != dark[1:])
    crossings = _sun_crossings(
        transits[change], transits[change + 1], dark[change], day_of_transit.take(change), lat, lon, sun_alt_deg
    )
    falling = ~dark[change]
    starts = np.concatenate([transits[:1][dark[:1]], crossings[falling]])
    ends = np.concatenate([crossings[~falling], transits[-1:][dark[-1:]]])
    starts = np.maximum(starts, jd_utc_start)
    ends = np.minimum(ends, jd_utc_end)
    keep = ends > starts
    return starts[keep], ends[keep]
