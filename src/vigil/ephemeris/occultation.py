"""Occultation (secondary eclipse) timing and duration for eccentric orbits.

Convention (Winn 2010, "Transits and Occultations", section 2; from memory): the sky is the
X-Y plane and +Z points at the observer; the planet's position is X = -r cos(omega + f),
Y = -r sin(omega + f) cos i, Z = r sin(omega + f) sin i, where f is the true anomaly and omega
the argument of periastron of the *planet's* orbit (the star's omega, as quoted from radial
velocities, is omega + 180 deg). Conjunctions: transit at f = 90 deg - omega (planet in front),
occultation at f = 270 deg - omega (planet behind).

The "offset" is t_occ - t_tr - P/2: how late the occultation comes compared with half a period
after the transit. All times in days, angles in degrees; every function broadcasts over numpy
arrays.
"""

import numpy as np

from vigil.errors import InputError


def _check_orbit(period_d, e, omega_deg) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    period = np.asarray(period_d, dtype=float)
    ecc = np.asarray(e, dtype=float)
    omega = np.asarray(omega_deg, dtype=float)
    if not np.all(np.isfinite(period) & (period > 0)):
        raise InputError("period_d: expected a finite positive period in days")
    if not np.all(np.isfinite(ecc) & (ecc >= 0) & (ecc < 1)):
        raise InputError("e: expected an eccentricity in [0, 1)")
    if not np.all(np.isfinite(omega)):
        raise InputError("omega_deg: expected a finite argument of periastron in degrees")
    return period, ecc, omega


def _check_inclination(inc_deg) -> np.ndarray:
    inc = np.asarray(inc_deg, dtype=float)
    if not np.all(np.isfinite(inc) & (inc > 0) & (inc < 180)):
        raise InputError("inc_deg: expected an inclination strictly between 0 and 180 degrees")
    return inc


def _mean_anomaly_rad(true_anomaly_rad, e):
    """Mean anomaly for a given true anomaly: f -> E (half-angle form) -> M = E - e sin E."""
    half = 0.5 * true_anomaly_rad
    ecc_anomaly = 2.0 * np.arctan2(np.sqrt(1.0 - e) * np.sin(half), np.sqrt(1.0 + e) * np.cos(half))
    return ecc_anomaly - e * np.sin(ecc_anomaly)


def occultation_offset_exact_d(period_d, e, omega_deg):
    """Exact t_occ - t_tr - P/2 in days for conjunctions at f = 90 - omega and 270 - omega deg.

    Going from a true anomaly to a time needs no iteration (f -> E -> M is closed form), so
    this is exact for any e < 1. It times the conjunctions themselves: for i != 90 deg the
    minimum of the projected separation (the observed mid-eclipse) shifts slightly from
    conjunction; that first-order-in-e shift is what `occultation_mid_bjd_tdb` adds.
    """
    period, ecc, omega = _check_orbit(period_d, e, omega_deg)
    omega_rad = np.radians(omega)
    m_tr = _mean_anomaly_rad(0.5 * np.pi - omega_rad, ecc)
    m_occ = _mean_anomaly_rad(1.5 * np.pi - omega_rad, ecc)
    fraction = np.mod(m_occ - m_tr, 2.0 * np.pi) / (2.0 * np.pi)
    return period * (fraction - 0.5)


def occultation_offset_approx_d(period_d, e, omega_deg, inc_deg=90.0):
    """First-order offset in days: (P/pi) e cos(omega) (1 + csc^2 i).

    Winn 2010, eq. 33 (from memory). Valid to first order in e: the neglected terms are
    O(e^3) P (the offset is odd in e cos omega), so the relative error grows as e^2.
    """
    period, ecc, omega = _check_orbit(period_d, e, omega_deg)
    inc = _check_inclination(inc_deg)
    csc2 = 1.0 / np.sin(np.radians(inc)) ** 2
    return period / np.pi * ecc * np.cos(np.radians(omega)) * (1.0 + csc2)


def occultation_mid_bjd_tdb(transit_mid_bjd_tdb, period_d, e, omega_deg, inc_deg=90.0):
    """Mid-occultation BJD_TDB following a mid-transit BJD_TDB.

    Offset = exact conjunction offset + the first-order inclination term of Winn 2010 eq. 33
    beyond its i = 90 deg value, (P/pi) e cos(omega) cot^2 i. Exact in e for i = 90 deg; for
    other inclinations the remaining error is of order e^2 cot^2(i) P.
    """
    transit = np.asarray(transit_mid_bjd_tdb, dtype=float)
    if not np.all(np.isfinite(transit)):
        raise InputError("transit_mid_bjd_tdb: expected finite BJD_TDB values")
    period, ecc, omega = _check_orbit(period_d, e, omega_deg)
    inc = _check_inclination(inc_deg)
    cot2 = 1.0 / np.tan(np.radians(inc)) ** 2
    inclination_term = period / np.pi * ecc * np.cos(np.radians(omega)) * cot2
    return transit + 0.5 * period + occultation_offset_exact_d(period, ecc, omega) + inclination_term


def occultation_duration_h(transit_duration_h, e, omega_deg):
    """Occultation duration in hours from the transit duration: ratio (1 + e sin w)/(1 - e sin w).

    Winn 2010, eq. 16 (from memory): the ratio of the planet's sky speeds at the two
    conjunctions. It neglects the different impact parameters of transit and occultation,
    so it is a fair estimate only for impact parameters well below 1 - k.
    """
    duration = np.asarray(transit_duration_h, dtype=float)
    if not np.all(np.isfinite(duration) & (duration > 0)):
        raise InputError("transit_duration_h: expected a finite positive duration in hours")
    _, ecc, omega = _check_orbit(1.0, e, omega_deg)
    e_sin_w = ecc * np.sin(np.radians(omega))
    return duration * (1.0 + e_sin_w) / (1.0 - e_sin_w)
