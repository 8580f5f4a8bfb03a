"""Low-precision apparent places of date: the Sun, the Moon and fixed stars, in vectorised numpy.

These series serve the fast engine; no astropy coordinate transform runs here.

Conventions:
- Angles are degrees unless a name ends in ``_rad``; right ascension is in [0, 360).
- Times are Julian dates whose scale is in the name: ``jd_utc``, ``jd_tt``.
- Positions are geocentric (the Moon also topocentric), referred to the true equator and
  equinox of date, so that hour angle = apparent sidereal time - right ascension.

Models (low precision by design; worst differences from astropy over 1975-2075 in brackets):
- Nutation: the 13 largest IAU 1980 terms (Meeus, Astronomical Algorithms, ch. 22).
- Sun: Meeus ch. 25 "low accuracy" series [0.011 deg].
- Moon: Meeus ch. 47 series cut to its main terms [0.012 deg geocentric].
- Star of date: IAU 1976 precession (Meeus ch. 21) + nutation + annual aberration [0.4"].
"""

import numpy as np

from vigil.errors import InputError

J2000_JD = 2451545.0
DAYS_PER_CENTURY = 36525.0
_ARCSEC_DEG = 1.0 / 3600.0
_AU_KM = 149597870.7


def _centuries_since_j2000(jd):
    return (np.asarray(jd, dtype=float) - J2000_JD) / DAYS_PER_CENTURY


def wrap360(angle_deg):
    return np.mod(angle_deg, 360.0)


def wrap180(angle_deg):
    return np.mod(np.asarray(angle_deg) + 180.0, 360.0) - 180.0


def check_latitude(lat_deg, field="lat_deg"):
    lat = np.asarray(lat_deg, dtype=float)
    if not np.all(np.isfinite(lat)) or np.any(np.abs(lat) > 90.0):
        raise InputError(f"{field}: expected a latitude in degrees within [-90, 90], got {lat_deg!r}")
    return lat

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


def nutation_state(jd_tt):
    """(dpsi_deg, mean obliquity_deg, true obliquity_deg) of date, shared by several models."""
    dpsi, deps = nutation_deg(jd_tt)
    eps_mean = mean_obliquity_deg(jd_tt)
    return dpsi, eps_mean, eps_mean + deps


def mean_obliquity_deg(jd_tt):
    """Mean obliquity of the ecliptic of date in degrees (IAU 1980, Meeus eq. 22.2)."""
    t = _centuries_since_j2000(jd_tt)
    return 23.0 + 26.0 / 60.0 + (21.448 + t * (-46.8150 + t * (-0.00059 + t * 0.001813))) / 3600.0


# ---------------------------------------------------------------------------------------------
# Vectors and rotations (active rotations of (x, y, z) tuples of broadcastable arrays)


def _unit_vector(ra_rad, dec_rad):
    cos_dec = np.cos(dec_rad)
    return cos_dec * np.cos(ra_rad), cos_dec * np.sin(ra_rad), np.sin(dec_rad)


def radec_deg_from_vector(x, y, z):
    ra = wrap360(np.degrees(np.arctan2(y, x)))
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
    return radec_deg_from_vector(*_rot_x(v, np.radians(obliquity_deg)))


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


def sun_radec_from_nutation_deg(jd_tt, nutation):
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
    return sun_radec_from_nutation_deg(jd_tt, nutation_state(jd_tt))


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
    dpsi, _, eps_true = nutation_state(jd_tt)
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
    dpsi, eps_mean, eps_true = nutation_state(jd_tt)
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
    return radec_deg_from_vector(*(v[i] + beta[i] - v_dot_beta * v[i] for i in range(3)))
