"""Transit geometry of a circular orbit: total duration and the scaled semi-major axis.

Total duration, first to fourth contact (Winn 2010, "Transits and Occultations", in
*Exoplanets*, ed. Seager, eq. 14, with e = 0):

    T14 = (P / pi) asin[ (R*/a) sqrt((1 + k)^2 - b^2) / sin i ],   b = (a / R*) cos i,

k = R_p / R* the radius ratio and b the impact parameter in stellar radii. The scaled
semi-major axis a / R* follows from Kepler's third law, neglecting the planet's mass:
a^3 = G M* P^2 / (4 pi^2), or with the mean stellar density rho* = M* / (4/3 pi R*^3),
(a / R*)^3 = G rho* P^2 / (3 pi).
"""

from __future__ import annotations

import numpy as np
from astropy import constants as const

from vigil.errors import InputError
from vigil.time_units import HOURS_PER_DAY, SECONDS_PER_DAY

_GM_SUN_M3_S2 = const.GM_sun.si.value  # IAU 2015 nominal
_R_SUN_M = const.R_sun.si.value  # IAU 2015 nominal
_G_SI = const.G.si.value
_EARTH_RADII_PER_SUN = (const.R_sun / const.R_earth).si.value  # IAU 2015 nominal
#: A catalogue duration this much longer than a central transit allows is reported (catalog.read_targets).
DURATION_SLACK = 1.1


def _positive(field: str, value) -> np.ndarray:
    """`value` as a float array, InputError unless every entry is finite and > 0."""
    try:
        array = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{field}: expected a number or array of numbers, got {value!r}") from None
    bad = ~(np.isfinite(array) & (array > 0))
    if bad.any():
        raise InputError(f"{field}: expected finite values > 0, got {float(array[bad].flat[0])!r}")
    return array


def transit_duration_h(period_d, a_over_rstar, radius_ratio, impact_parameter=0.0):
    """Total transit duration T14 in hours for a circular orbit (Winn 2010, eq. 14).

    period_d: orbital period (days); a_over_rstar: semi-major axis over stellar radius (> 1 + k);
    radius_ratio: k = R_p / R*; impact_parameter: b = (a / R*) cos i in stellar radii, >= 0.
    numpy-broadcast over all arguments. InputError where b >= 1 + k (the planet misses the
    star's disc, no transit) or the orbit lies inside the star (a / R* <= 1 + k).
    """
    period_d = _positive("period_d", period_d)
    a_over_rstar = _positive("a_over_rstar", a_over_rstar)
    k = _positive("radius_ratio", radius_ratio)
    b = np.asarray(impact_parameter, dtype=float)
    if not np.all(np.isfinite(b) & (b >= 0)):
        raise InputError(f"impact_parameter: expected finite values >= 0, got {impact_parameter!r}")
    if np.any(a_over_rstar <= 1.0 + k):
        raise InputError("a_over_rstar: expected an orbit outside the star, a / R* > 1 + radius_ratio")
    if np.any(b >= 1.0 + k):
        raise InputError("impact_parameter: expected b < 1 + radius_ratio; "
                         "the planet does not cross the star (no transit)")
    cos_i = b / a_over_rstar
    sin_i = np.sqrt(1.0 - cos_i**2)
    argument = np.sqrt((1.0 + k) ** 2 - b**2) / (a_over_rstar * sin_i)
    return period_d / np.pi * np.arcsin(argument) * HOURS_PER_DAY


def a_over_rstar_from_mass_radius(period_d, star_mass_sun, star_radius_sun):
    """a / R* from Kepler's third law, a^3 = G M* P^2 / (4 pi^2) (planet mass neglected).

    period_d in days, stellar mass and radius in IAU nominal solar units; numpy-broadcast.
    """
    period_s = _positive("period_d", period_d) * SECONDS_PER_DAY
    gm = _positive("star_mass_sun", star_mass_sun) * _GM_SUN_M3_S2
    radius_m = _positive("star_radius_sun", star_radius_sun) * _R_SUN_M
    return np.cbrt(gm * period_s**2 / (4.0 * np.pi**2)) / radius_m


def a_over_rstar_from_density(period_d, star_density_kg_m3):
    """a / R* from the mean stellar density, (a / R*)^3 = G rho* P^2 / (3 pi) (planet mass
    neglected); period_d in days, density in kg m^-3; numpy-broadcast."""
    period_s = _positive("period_d", period_d) * SECONDS_PER_DAY
    density = _positive("star_density_kg_m3", star_density_kg_m3)
    return np.cbrt(_G_SI * density * period_s**2 / (3.0 * np.pi))


def central_duration_h(period_d, a_over_rstar, planet_radius_earth, star_radius_sun):
    """T14 in hours of a central transit (b = 0), the longest a circular orbit allows (Winn 2010, eq. 14).

    Radii in Earth and Sun radii (IAU nominal); the catalogue reader warns when a duration_h
    exceeds DURATION_SLACK times this.

    Examples
    --------
    >>> round(float(central_duration_h(365.256, 215.03, 1.0, 1.0)), 1)
    13.1
    """
    radius_ratio = _positive("planet_radius_earth", planet_radius_earth) / (
        _positive("star_radius_sun", star_radius_sun) * _EARTH_RADII_PER_SUN)
    return transit_duration_h(period_d, a_over_rstar, radius_ratio, 0.0)
