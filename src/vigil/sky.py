"""Reference positions of the Sun, the Moon and targets at a site (astropy transforms).

This is the truth the fast path is checked against. The Sun's altitude is geometric (no
refraction: twilight is defined by the Sun's true centre, common practice); the target's
altitude is apparent, with refraction for the site's pressure and temperature.
"""

from __future__ import annotations

import astropy.units as u
import numpy as np
from astropy.coordinates import AltAz, HADec, SkyCoord, get_body, get_sun
from astropy.time import Time


def _frame(times: Time, location, pressure_hpa: float = 0.0, temperature_c: float = 10.0) -> AltAz:
    return AltAz(obstime=times, location=location, pressure=pressure_hpa * u.hPa,
                 temperature=temperature_c * u.deg_C, relative_humidity=0.0, obswl=0.55 * u.micron)


def sun_altitude_deg(times: Time, location) -> np.ndarray:
    """Geometric altitude of the Sun's centre, degrees."""
    return get_sun(times).transform_to(_frame(times, location)).alt.deg


def target_altaz_deg(ra_deg, dec_deg, times: Time, location, pressure_hpa=0.0, temperature_c=10.0):
    """(altitude, azimuth) of ICRS targets, degrees; refraction applied when pressure > 0."""
    target = SkyCoord(ra=np.asarray(ra_deg) * u.deg, dec=np.asarray(dec_deg) * u.deg, frame="icrs")
    altaz = target.transform_to(_frame(times, location, pressure_hpa, temperature_c))
    return altaz.alt.deg, altaz.az.deg


def moon_separation_deg(ra_deg, dec_deg, times: Time, location) -> np.ndarray:
    """Angle between the topocentric Moon and ICRS targets, degrees."""
    moon = get_body("moon", times, location)
    target = SkyCoord(ra=np.asarray(ra_deg) * u.deg, dec=np.asarray(dec_deg) * u.deg, frame="icrs")
    # Compare in the Moon's own (topocentric GCRS) frame: the ICRS -> GCRS step is not a pure rotation.
    return moon.separation(target.transform_to(moon.frame)).deg


def target_hadec_deg(ra_deg, dec_deg, times: Time, location):
    """(hour angle in -180..180, declination) of date of ICRS targets, degrees (astropy HADec, no refraction)."""
    target = SkyCoord(ra=np.asarray(ra_deg) * u.deg, dec=np.asarray(dec_deg) * u.deg, frame="icrs")
    hadec = target.transform_to(HADec(obstime=times, location=location))
    return hadec.ha.wrap_at(180 * u.deg).deg, hadec.dec.deg


def moon_illumination(times: Time) -> np.ndarray:
    """Illuminated fraction of the Moon's disk (astroplan, from astropy's Sun and Moon)."""
    from astroplan import moon_illumination as illumination

    return np.asarray(illumination(times), dtype=float)


def airmass_kasten_young(alt_deg):
    """Relative air mass, Kasten & Young (1989, Applied Optics 28, 4735), from altitude in degrees.

    X = 1 / (sin h + 0.50572 (h + 6.07995 deg)^-1.6364); NaN below -6.07995 deg where it is undefined.
    """
    h = np.asarray(alt_deg, dtype=float)
    with np.errstate(invalid="ignore"):
        return np.where(h > -6.07995, 1.0 / (np.sin(np.radians(h)) + 0.50572 * (h + 6.07995) ** -1.6364), np.nan)


def moon_altitude_deg(times: Time, location) -> np.ndarray:
    """Geometric altitude of the topocentric Moon's centre, degrees (no refraction).

    Example: ``moon_altitude_deg(Time("2027-03-01T03:00"), earth_location(-30.5, -70.8, 2450))``.
    """
    return get_body("moon", times, location).transform_to(_frame(times, location)).alt.deg
