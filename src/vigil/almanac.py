"""Fast almanac: sidereal time, Sun, Moon, precession, altitude and darkness in vectorised numpy.

This is the fast visibility path. No astropy coordinate transform runs here; only pyerfa's
leap-second table is consulted (once per call) to turn UTC into TT.

Conventions:
- Angles are degrees unless a name ends in ``_rad``; right ascension is in [0, 360).
- Times are Julian dates whose scale is in the name: ``jd_utc``, ``jd_tt``, ``jd_ut1``.
  ``jd_ut`` means UT1 approximated by UTC: |UT1 - UTC| < 0.9 s, so the hour angle is off
  by less than 0.004 deg (and darkness boundaries by less than about 1 s).
- Positions are geocentric (the Moon also topocentric), referred to the true equator and
  equinox of date, so that hour angle = apparent sidereal time - right ascension.

Models (low precision by design; worst differences from astropy over 1975-2075 in brackets):
- Sidereal time: IAU 1982 GMST (Meeus, Astronomical Algorithms, ch. 12) plus the equation of
  the equinoxes from the 13 largest IAU 1980 nutation terms (Meeus ch. 22) [0.015 s].
- Sun: Meeus ch. 25 "low accuracy" series [0.011 deg].
- Moon: Meeus ch. 47 series cut to its main terms [0.012 deg geocentric and topocentric].
- Star of date: IAU 1976 precession (Meeus ch. 21) + nutation + annual aberration [0.4"].
- Darkness: Sun-centre crossings [3 s from PyEphem at |lat| <= 45 deg, up to about 45 s
  at 63-80 deg where the Sun crosses the threshold slowly].
"""

import warnings
from typing import NamedTuple

import erfa
import numpy as np

from vigil.errors import InputError

J2000_JD = 2451545.0
_DAYS_PER_CENTURY = 36525.0
_ARCSEC_DEG = 1.0 / 3600.0
_AU_KM = 149597870.7
_EARTH_RADIUS_KM = 6378.137  # WGS84 equatorial radius
_EARTH_FLATTENING = 1.0 / 298.257223563  # WGS84
_TT_MINUS_TAI_S = 32.184  # TT - TAI, IAU definition
_FIRST_UTC_YEAR = 1960  # erfa's leap-second table starts here
_INTEGRAL_LEAP_SECONDS_JD = 2441317.5  # 1972-01-01 0h UTC: whole leap seconds from here on
_SOLAR_DAY_HOUR_ANGLE_RATE_DEG_PER_D = 360.0  # mean solar hour angle advances 360 deg per day


def _centuries_since_j2000(jd):
    return (np.asarray(jd, dtype=float) - J2000_JD) / _DAYS_PER_CENTURY


def _wrap360(angle_deg):
    return np.mod(angle_deg, 360.0)


def _wrap180(angle_deg):
    return np.mod(np.asarray(angle_deg) + 180.0, 360.0) - 180.0


def _check_latitude(lat_deg, field="lat_deg"):
    lat = np.asarray(lat_deg, dtype=float)
    if not np.all(np.isfinite(lat)) or np.any(np.abs(lat) > 90.0):
        raise InputError(f"{field}: expected a latitude in degrees within [-90, 90], got {lat_deg!r}")
    return lat


# ---------------------------------------------------------------------------------------------
# Time scales


def tt_minus_utc_s(jd_utc):
    """TT - UTC in seconds at the given UTC Julian dates (TAI - UTC from erfa's leap-second table).

    Before 1960 (no UTC) the 1960 value is used; after the table's last leap second it stays
    at the last value, since later leap seconds cannot be known in advance. From 1972 on,
    TAI - UTC is a step function of the date: looked up in the table by bisection.
    """
    jd = np.asarray(jd_utc, dtype=float)
    leaps = erfa.leap_seconds.get()
    step_jd = np.add(*erfa.cal2jd(leaps["year"], leaps["month"], np.ones(leaps.size, dtype=int)))
    tai_minus_utc = np.full(jd.shape, leaps["tai_utc"][-1])
    before_last = jd < step_jd[-1]  # most dates planned for lie after the last leap second
    if np.any(before_last):
        index = np.maximum(np.searchsorted(step_jd, jd[before_last], side="right") - 1, 0)
        tai_minus_utc[before_last] = leaps["tai_utc"][index]
    tai_minus_utc[np.isnan(jd)] = np.nan
    drifting = jd < _INTEGRAL_LEAP_SECONDS_JD
    if np.any(drifting):
        tai_minus_utc = np.where(drifting, _drifting_tai_minus_utc_s(np.where(drifting, jd, _INTEGRAL_LEAP_SECONDS_JD)),
                                 tai_minus_utc)
    return tai_minus_utc + _TT_MINUS_TAI_S


def _drifting_tai_minus_utc_s(jd):
    """TAI - UTC by erfa.dat date by date (needed before 1972, when UTC ran at a drifting rate)."""
    year, month, day, frac = erfa.jd2cal(jd, 0.0)
    early = year < _FIRST_UTC_YEAR
    year = np.where(early, _FIRST_UTC_YEAR, year)
    month = np.where(early, 1, month)
    day = np.where(early, 1, day)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", erfa.ErfaWarning)  # "dubious year" past the table
        return erfa.dat(year, month, day, frac)


def jd_tt_from_utc(jd_utc):
    """Julian date in TT from a Julian date in UTC."""
    return np.asarray(jd_utc, dtype=float) + tt_minus_utc_s(jd_utc) / 86400.0


# ---------------------------------------------------------------------------------------------
# Nutation and obliquity

# The 13 largest terms of the IAU 1980 nutation series (Meeus ch. 22, Table 22.A):
# multiples of D, M, M', F, Omega; dpsi = (S0 + S1 T) sin(arg), deps = (C0 + C1 T) cos(arg),
# in units of 0.0001". The omitted terms add up to less than 0.1".
_NUTATION_MULTIPLES = np.array(
    [
        [0, 0, 0, 0, 1],
        [-2, 0, 0, 2, 2],
        [0, 0, 0, 2, 2],
        [0, 0, 0, 0, 2],
        [0, 1, 0, 0, 0],
        [0, 0, 1, 0, 0],
        [-2, 1, 0, 2, 2],
        [0, 0, 0, 2, 1],
        [0, 0, 1, 2, 2],
        [-2, -1, 0, 2, 2],
        [-2, 0, 1, 0, 0],
        [-2, 0, 0, 2, 1],
        [0, 0, -1, 2, 2],
    ],
    dtype=float,
)
_NUTATION_COEFFS = np.array(
    [
        [-171996.0, -174.2, 92025.0, 8.9],
        [-13187.0, -1.6, 5736.0, -3.1],
        [-2274.0, -0.2, 977.0, -0.5],
        [2062.0, 0.2, -895.0, 0.5],
        [1426.0, -3.4, 54.0, -0.1],
        [712.0, 0.1, -7.0, 0.0],
        [-517.0, 1.2, 224.0, -0.6],
        [-386.0, -0.4, 200.0, 0.0],
        [-301.0, 0.0, 129.0, -0.1],
        [217.0, -0.5, -95.0, 0.3],
        [-158.0, 0.0, 0.0, 0.0],
        [129.0, 0.1, -70.0, 0.0],
        [123.0, 0.0, -53.0, 0.0],
    ]
)


def _nutation_arguments_deg(t):
    """Delaunay arguments D, M, M', F, Omega in degrees [0, 360) (Meeus ch. 22)."""
    return (
        np.mod(297.85036 + t * (445267.111480 + t * (-0.0019142 + t / 189474.0)), 360.0),
        np.mod(357.52772 + t * (35999.050340 + t * (-0.0001603 - t / 300000.0)), 360.0),
        np.mod(134.96298 + t * (477198.867398 + t * (0.0086972 + t / 56250.0)), 360.0),
        np.mod(93.27191 + t * (483202.017538 + t * (-0.0036825 + t / 327270.0)), 360.0),
        np.mod(125.04452 + t * (-1934.136261 + t * (0.0020708 + t / 450000.0)), 360.0),
    )


def _argument_table_rad(fundamentals_deg, multiples):
    """Integer combinations of fundamental arguments as an (n_terms, n_points) array in radians.

    Terms along the first axis make each series sum one matrix-vector product.
    """
    stacked = np.radians(np.stack([np.ravel(x) for x in fundamentals_deg]))
    return multiples @ stacked


def nutation_deg(jd_tt):
    """Nutation in longitude and in obliquity (dpsi_deg, deps_deg), IAU 1980 main terms."""
    t = _centuries_since_j2000(jd_tt)
    args_rad = _argument_table_rad(_nutation_arguments_deg(t), _NUTATION_MULTIPLES)
    sin_a, cos_a = np.sin(args_rad), np.cos(args_rad)
    c = _NUTATION_COEFFS
    t_flat = t.ravel()
    dpsi = c[:, 0] @ sin_a + t_flat * (c[:, 1] @ sin_a)
    deps = c[:, 2] @ cos_a + t_flat * (c[:, 3] @ cos_a)
    scale = 1e-4 * _ARCSEC_DEG
    return (dpsi * scale).reshape(t.shape), (deps * scale).reshape(t.shape)


def _nutation_state(jd_tt):
    """(dpsi_deg, mean obliquity_deg, true obliquity_deg) of date, shared by several models."""
    dpsi, deps = nutation_deg(jd_tt)
    eps_mean = mean_obliquity_deg(jd_tt)
    return dpsi, eps_mean, eps_mean + deps


def mean_obliquity_deg(jd_tt):
    """Mean obliquity of the ecliptic of date in degrees (IAU 1980, Meeus eq. 22.2)."""
    t = _centuries_since_j2000(jd_tt)
    return 23.0 + 26.0 / 60.0 + (21.448 + t * (-46.8150 + t * (-0.00059 + t * 0.001813))) / 3600.0


# ---------------------------------------------------------------------------------------------
# Sidereal time


def gmst_deg(jd_ut1):
    """Greenwich mean sidereal time in degrees [0, 360) (IAU 1982; Meeus eq. 12.4)."""
    d = np.asarray(jd_ut1, dtype=float) - J2000_JD
    t = d / _DAYS_PER_CENTURY
    theta = 280.46061837 + 360.98564736629 * d + t * t * (0.000387933 - t / 38710000.0)
    return _wrap360(theta)


def _equation_of_equinoxes_from_nutation_deg(nutation):
    dpsi, _, eps_true = nutation
    return dpsi * np.cos(np.radians(eps_true))


def equation_of_equinoxes_deg(jd_tt):
    """Apparent minus mean sidereal time in degrees: dpsi cos(true obliquity) (Meeus ch. 12)."""
    return _equation_of_equinoxes_from_nutation_deg(_nutation_state(jd_tt))


def _gast_from_nutation_deg(jd_ut1, nutation):
    return _wrap360(gmst_deg(jd_ut1) + _equation_of_equinoxes_from_nutation_deg(nutation))


def gast_deg(jd_ut1, jd_tt):
    """Greenwich apparent sidereal time in degrees: GMST + dpsi cos(true obliquity)."""
    return _gast_from_nutation_deg(jd_ut1, _nutation_state(jd_tt))


def local_sidereal_deg(jd_ut, longitude_deg):
    """Local apparent sidereal time in degrees, longitude east positive.

    jd_ut is UT1 taken as UTC (0.004 deg at most). It also stands in for TT in the equation
    of the equinoxes, which changes by under 1e-6 s over the ~69 s between the two scales.
    """
    return _wrap360(gast_deg(jd_ut, jd_ut) + np.asarray(longitude_deg, dtype=float))


# ---------------------------------------------------------------------------------------------
# Vectors and rotations (active rotations of (x, y, z) tuples of broadcastable arrays)


def _unit_vector(ra_rad, dec_rad):
    cos_dec = np.cos(dec_rad)
    return cos_dec * np.cos(ra_rad), cos_dec * np.sin(ra_rad), np.sin(dec_rad)


def _radec_deg_from_vector(x, y, z):
    ra = _wrap360(np.degrees(np.arctan2(y, x)))
    dec = np.degrees(np.arctan2(z, np.hypot(x, y)))
    return ra, dec


def _rot_x(v, a_rad):
    x, y, z = v
    c, s = np.cos(a_rad), np.sin(a_rad)
    return x, c * y - s * z, s * y + c * z


def _rot_y(v, a_rad):
    x, y, z = v
    c, s = np.cos(a_rad), np.sin(a_rad)
    return c * x + s * z, y, -s * x + c * z


def _rot_z(v, a_rad):
    x, y, z = v
    c, s = np.cos(a_rad), np.sin(a_rad)
    return c * x - s * y, s * x + c * y, z


def _ecliptic_to_radec_deg(lon_deg, lat_deg, obliquity_deg):
    v = _unit_vector(np.radians(lon_deg), np.radians(lat_deg))
    return _radec_deg_from_vector(*_rot_x(v, np.radians(obliquity_deg)))


# ---------------------------------------------------------------------------------------------
# Sun


def _sun_true_longitude(t):
    """Geometric true longitude (deg, mean equinox of date), distance (au), mean anomaly (deg)."""
    l0 = 280.46646 + t * (36000.76983 + t * 0.0003032)
    m = 357.52911 + t * (35999.05029 - t * 0.0001537)
    e = 0.016708634 - t * (0.000042037 + t * 0.0000001267)
    m_rad = np.radians(m)
    c = (
        (1.914602 - t * (0.004817 + t * 0.000014)) * np.sin(m_rad)
        + (0.019993 - t * 0.000101) * np.sin(2.0 * m_rad)
        + 0.000289 * np.sin(3.0 * m_rad)
    )
    nu_rad = m_rad + np.radians(c)
    r_au = 1.000001018 * (1.0 - e * e) / (1.0 + e * np.cos(nu_rad))
    return l0 + c, r_au, e


def _sun_radec_from_nutation_deg(jd_tt, nutation):
    t = _centuries_since_j2000(jd_tt)
    true_lon, r_au, _ = _sun_true_longitude(t)
    dpsi, _, eps_true = nutation
    aberration = -20.4898 * _ARCSEC_DEG / r_au
    return _ecliptic_to_radec_deg(true_lon + dpsi + aberration, 0.0, eps_true)


def sun_radec_deg(jd_tt):
    """Apparent geocentric (ra_deg, dec_deg) of the Sun, true equator and equinox of date.

    Meeus ch. 25 low-accuracy series with the nutation above; about 0.01 deg (the series
    itself is off by about 8" in longitude on average, plus omitted planetary terms).
    """
    return _sun_radec_from_nutation_deg(jd_tt, _nutation_state(jd_tt))


# ---------------------------------------------------------------------------------------------
# Moon

# Main terms of Meeus ch. 47, Table 47.A: multiples of D, M, M', F; longitude in 1e-6 deg and
# distance in 1e-3 km. Terms with M carry the factor E^|M|. Omitted terms sum to < 0.02 deg.
_MOON_LR_TERMS = np.array(
    [
        [0, 0, 1, 0, 6288774, -20905355],
        [2, 0, -1, 0, 1274027, -3699111],
        [2, 0, 0, 0, 658314, -2955968],
        [0, 0, 2, 0, 213618, -569925],
        [0, 1, 0, 0, -185116, 48888],
        [0, 0, 0, 2, -114332, -3149],
        [2, 0, -2, 0, 58793, 246158],
        [2, -1, -1, 0, 57066, -152138],
        [2, 0, 1, 0, 53322, -170733],
        [2, -1, 0, 0, 45758, -204586],
        [0, 1, -1, 0, -40923, -129620],
        [1, 0, 0, 0, -34720, 108743],
        [0, 1, 1, 0, -30383, 104755],
        [2, 0, 0, -2, 15327, 10321],
        [0, 0, 1, 2, -12528, 0],
        [0, 0, 1, -2, 10980, 79661],
        [4, 0, -1, 0, 10675, -34782],
        [0, 0, 3, 0, 10034, -23210],
        [4, 0, -2, 0, 8548, -21636],
        [2, 1, -1, 0, -7888, 24208],
        [2, 1, 0, 0, -6766, 30824],
        [1, 0, -1, 0, -5163, -8379],
        [1, 1, 0, 0, 4987, -16675],
        [2, -1, 1, 0, 4036, -12831],
        [2, 0, 2, 0, 3994, -10445],
        [4, 0, 0, 0, 3861, -11650],
        [2, 0, -3, 0, 3665, 14403],
        [0, 1, -2, 0, -2689, -7003],
        [2, 0, -1, 2, -2602, 0],
        [2, -1, -2, 0, 2390, 10056],
        [1, 0, 1, 0, -2348, 6322],
        [2, -2, 0, 0, 2236, -9884],
        [0, 1, 2, 0, -2120, 5751],
        [0, 2, 0, 0, -2069, 0],
    ],
    dtype=float,
)

# Main terms of Meeus ch. 47, Table 47.B: multiples of D, M, M', F; latitude in 1e-6 deg.
def _by_power_of_e(table):
    """Rows sorted by |multiple of M| (column 1), with the slices of rows for |M| = 0, 1, 2."""
    table = table[np.argsort(np.abs(table[:, 1]), kind="stable")]
    bounds = np.searchsorted(np.abs(table[:, 1]), [0, 1, 2, 3])
    return table, [slice(bounds[k], bounds[k + 1]) for k in range(3)]


def _eccentricity_weighted_sum(coeffs, values, groups, e):
    """sum over terms of coeffs * E^|M| * values, for a table sorted by _by_power_of_e."""
    return sum(e**power * (coeffs[rows] @ values[rows]) for power, rows in enumerate(groups))


_MOON_LR_TERMS, _MOON_LR_GROUPS = _by_power_of_e(_MOON_LR_TERMS)

_MOON_B_TERMS = np.array(
    [
        [0, 0, 0, 1, 5128122],
        [0, 0, 1, 1, 280602],
        [0, 0, 1, -1, 277693],
        [2, 0, 0, -1, 173237],
        [2, 0, -1, 1, 55413],
        [2, 0, -1, -1, 46271],
        [2, 0, 0, 1, 32573],
        [0, 0, 2, 1, 17198],
        [2, 0, 1, -1, 9266],
        [0, 0, 2, -1, 8822],
        [2, -1, 0, -1, 8216],
        [2, 0, -2, -1, 4324],
        [2, 0, 1, 1, 4200],
        [2, 1, 0, -1, -3359],
        [2, -1, -1, 1, 2463],
        [2, -1, 0, 1, 2211],
        [2, -1, -1, -1, 2065],
        [0, 1, -1, -1, -1870],
        [4, 0, -1, -1, 1828],
        [0, 1, 0, 1, -1794],
        [0, 0, 0, 3, -1749],
        [0, 1, -1, 1, -1565],
        [1, 0, 0, 1, -1491],
        [0, 1, 1, 1, -1475],
        [0, 1, 1, -1, -1410],
        [0, 1, 0, -1, -1344],
        [1, 0, 0, -1, -1335],
    ],
    dtype=float,
)
_MOON_B_TERMS, _MOON_B_GROUPS = _by_power_of_e(_MOON_B_TERMS)


def _moon_ecliptic_of_date(t):
    """Geometric Moon: longitude, latitude (deg, mean equinox of date) and distance (km)."""
    lp = 218.3164477 + t * (481267.88123421 + t * (-0.0015786 + t * (1.0 / 538841.0 - t / 65194000.0)))
    d = 297.8501921 + t * (445267.1114034 + t * (-0.0018819 + t * (1.0 / 545868.0 - t / 113065000.0)))
    m = 357.5291092 + t * (35999.0502909 + t * (-0.0001536 + t / 24490000.0))
    mp = 134.9633964 + t * (477198.8675055 + t * (0.0087414 + t * (1.0 / 69699.0 - t / 14712000.0)))
    f = 93.2720950 + t * (483202.0175233 + t * (-0.0036539 + t * (-1.0 / 3526000.0 + t / 863310000.0)))
    e = 1.0 - t * (0.002516 + t * 0.0000074)
    a1 = np.radians(119.75 + 131.849 * t)
    a2 = np.radians(53.09 + 479264.290 * t)
    a3 = np.radians(313.45 + 481266.484 * t)
    fundamentals = [np.mod(x, 360.0) for x in (d, m, mp, f)]
    e = e.ravel()

    lr = _MOON_LR_TERMS
    arg = _argument_table_rad(fundamentals, lr[:, :4])
    sum_l = _eccentricity_weighted_sum(lr[:, 4], np.sin(arg), _MOON_LR_GROUPS, e).reshape(t.shape)
    sum_r = _eccentricity_weighted_sum(lr[:, 5], np.cos(arg), _MOON_LR_GROUPS, e).reshape(t.shape)

    bt = _MOON_B_TERMS
    arg_b = _argument_table_rad(fundamentals, bt[:, :4])
    sum_b = _eccentricity_weighted_sum(bt[:, 4], np.sin(arg_b), _MOON_B_GROUPS, e).reshape(t.shape)

    lp_rad, f_rad, mp_rad = np.radians(lp), np.radians(f), np.radians(mp)
    sum_l += 3958.0 * np.sin(a1) + 1962.0 * np.sin(lp_rad - f_rad) + 318.0 * np.sin(a2)
    sum_b += (
        -2235.0 * np.sin(lp_rad)
        + 382.0 * np.sin(a3)
        + 175.0 * np.sin(a1 - f_rad)
        + 175.0 * np.sin(a1 + f_rad)
        + 127.0 * np.sin(lp_rad - mp_rad)
        - 115.0 * np.sin(lp_rad + mp_rad)
    )
    return lp + sum_l * 1e-6, sum_b * 1e-6, 385000.56 + sum_r * 1e-3


def _moon_apparent(jd_tt):
    """Apparent geocentric Moon: ra_deg, dec_deg (true equator of date) and distance_km."""
    t = _centuries_since_j2000(jd_tt)
    lon, lat, dist_km = _moon_ecliptic_of_date(t)
    dpsi, _, eps_true = _nutation_state(jd_tt)
    ra, dec = _ecliptic_to_radec_deg(lon + dpsi, lat, eps_true)
    return ra, dec, dist_km


def moon_geocentric_km(jd_tt):
    """Apparent geocentric position of the Moon (x, y, z) in km, true equator and equinox of date."""
    ra, dec, dist_km = _moon_apparent(jd_tt)
    return tuple(dist_km * c for c in _unit_vector(np.radians(ra), np.radians(dec)))


def moon_radec_deg(jd_tt):
    """Apparent geocentric (ra_deg, dec_deg) of the Moon, true equator and equinox of date.

    Main terms of Meeus ch. 47; about 0.02 deg.
    """
    ra, dec, _ = _moon_apparent(jd_tt)
    return ra, dec


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
    lat = _check_latitude(lat_deg)
    mx, my, mz = moon_geocentric_km(jd_tt)
    rho_cos, rho_sin = observer_geocentric_km(lat, elev_m)
    last_rad = np.radians(gast_deg(jd_ut, jd_tt) + np.asarray(lon_deg, dtype=float))
    return _radec_deg_from_vector(mx - rho_cos * np.cos(last_rad), my - rho_cos * np.sin(last_rad), mz - rho_sin)


def moon_illuminated_fraction(jd_tt):
    """Illuminated fraction of the Moon's disc in [0, 1] seen from the Earth's centre.

    From the geocentric Sun-Moon elongation psi and the phase angle
    i = atan2(R sin psi, Delta - R cos psi) (Meeus ch. 48); k = (1 + cos i) / 2.
    """
    t = _centuries_since_j2000(jd_tt)
    moon_lon, moon_lat, moon_km = _moon_ecliptic_of_date(t)
    sun_lon, sun_au, _ = _sun_true_longitude(t)
    cos_psi = np.cos(np.radians(moon_lat)) * np.cos(np.radians(moon_lon - sun_lon))
    sin_psi = np.sqrt(np.clip(1.0 - cos_psi * cos_psi, 0.0, None))
    sun_km = sun_au * _AU_KM
    phase_angle = np.arctan2(sun_km * sin_psi, moon_km - sun_km * cos_psi)
    return 0.5 * (1.0 + np.cos(phase_angle))


# ---------------------------------------------------------------------------------------------
# Precession, nutation and aberration of a fixed star


def _precess_nutate(v, jd_tt):
    """Rotate J2000 mean-equator vectors to the true equator and equinox of date."""
    t = _centuries_since_j2000(jd_tt)
    zeta = t * (2306.2181 + t * (0.30188 + t * 0.017998)) * _ARCSEC_DEG
    z = t * (2306.2181 + t * (1.09468 + t * 0.018203)) * _ARCSEC_DEG
    theta = t * (2004.3109 - t * (0.42665 + t * 0.041833)) * _ARCSEC_DEG
    v = _rot_z(_rot_y(_rot_z(v, np.radians(zeta)), -np.radians(theta)), np.radians(z))
    dpsi, eps_mean, eps_true = _nutation_state(jd_tt)
    return _rot_x(_rot_z(_rot_x(v, -np.radians(eps_mean)), np.radians(dpsi)), np.radians(eps_true))


def _earth_velocity_over_c(jd_tt):
    """Earth's orbital velocity / c in equatorial coordinates of date (Meeus ch. 23 terms)."""
    t = _centuries_since_j2000(jd_tt)
    true_lon, _, e = _sun_true_longitude(t)
    perihelion_rad = np.radians(102.93735 + t * (1.71946 + t * 0.00046))
    kappa_rad = np.radians(20.49552 * _ARCSEC_DEG)
    sun_rad = np.radians(true_lon)
    ecliptic = (
        kappa_rad * (np.sin(sun_rad) - e * np.sin(perihelion_rad)),
        -kappa_rad * (np.cos(sun_rad) - e * np.cos(perihelion_rad)),
        np.zeros_like(sun_rad),
    )
    return _rot_x(ecliptic, np.radians(mean_obliquity_deg(jd_tt)))


def star_of_date_terms(jd_tt):
    """The target-independent part of a star's apparent place of date, for many stars at once.

    Returns (matrix, beta): the precession-nutation matrix from J2000 mean equator to the true
    equator and equinox of date, shaped (3, 3) + shape(jd_tt) as [row, column, ...], and the
    Earth's velocity / c in the frame of date, shaped (3,) + shape(jd_tt). A J2000 unit vector
    v0 goes to v = matrix v0, then to the apparent direction v + beta - (v . beta) v.
    """
    jd = np.asarray(jd_tt, dtype=float)
    basis = tuple(np.eye(3)[i].reshape((3,) + (1,) * jd.ndim) for i in range(3))
    matrix = np.array(np.broadcast_arrays(*_precess_nutate(basis, jd)))
    return matrix, np.array(np.broadcast_arrays(*_earth_velocity_over_c(jd)))


def precess_to_date(ra_deg, dec_deg, jd_tt):
    """Apparent (ra_deg, dec_deg) of date of a star given its ICRS / J2000 mean place.

    Rigorous IAU 1976 precession (Meeus ch. 21), nutation (main terms) and annual aberration
    (20.5"); inputs broadcast against each other. Ignored: the ICRS-J2000 frame bias (0.02"),
    light deflection (< 0.01" away from the Sun), proper motion and parallax of the star.
    Agrees with astropy's TETE frame to under 0.5" for 1975-2075.
    """
    matrix, beta = star_of_date_terms(jd_tt)
    x0, y0, z0 = _unit_vector(np.radians(ra_deg), np.radians(dec_deg))
    v = tuple(matrix[r, 0] * x0 + matrix[r, 1] * y0 + matrix[r, 2] * z0 for r in range(3))
    v_dot_beta = v[0] * beta[0] + v[1] * beta[1] + v[2] * beta[2]
    return _radec_deg_from_vector(*(v[i] + beta[i] - v_dot_beta * v[i] for i in range(3)))


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
        return cls(tt_offset_d, _nutation_state(jd_utc_0h + tt_offset_d))

    def take(self, index):
        """The constants for the days numbered by index (integer array)."""
        return _Days(self.tt_offset_d[index], tuple(x[index] for x in self.nutation))


def _sun_hour_angle_dec(jd_utc, day, lon_deg):
    """Sun's hour angle (deg, UT1 taken as UTC) and declination (deg) at UTC Julian dates."""
    jd_tt = jd_utc + day.tt_offset_d
    ra, dec = _sun_radec_from_nutation_deg(jd_tt, day.nutation)
    return _gast_from_nutation_deg(jd_utc, day.nutation) + lon_deg - ra, dec


def _solar_transits(first_guess_jd_utc, day, lon_deg, hour_angle_deg):
    """Times when the Sun's hour angle equals hour_angle_deg, iterated from a guess within hours."""
    t = first_guess_jd_utc
    for _ in range(2):
        ha, _ = _sun_hour_angle_dec(t, day, lon_deg)
        t = t - _wrap180(ha - hour_angle_deg) / _SOLAR_DAY_HOUR_ANGLE_RATE_DEG_PER_D
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
    from_noon = np.abs(_wrap180(ha_a)) < 90.0
    ha_target = np.where(from_noon, half_width, 360.0 - half_width)
    t = start + _wrap360(ha_target - ha_a) / _SOLAR_DAY_HOUR_ANGLE_RATE_DEG_PER_D
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
    lat = float(_check_latitude(lat_deg))
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

    lon = float(_wrap180(lon))
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
