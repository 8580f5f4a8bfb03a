"""BJD_TDB <-> UTC at an observing site, through the barycentric light travel time (astropy).

A transit predicted at BJD_TDB reaches the site at the TDB instant t with
t + ltt(t) = BJD_TDB, where ltt is the light travel time from the site to the solar-system
barycentre along the target's direction (Eastman, Siverd & Gaudi 2010). We solve this by
fixed-point iteration; ltt changes by < 1e-4 s per second, so each pass shrinks the error
10^4-fold: two passes leave < 0.1 ms.
"""

from __future__ import annotations

import logging

import astropy.units as u
import numpy as np
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.time import Time
from astropy.utils import iers

log = logging.getLogger("vigil")
_ITERATIONS = 2


def earth_location(latitude_deg: float, longitude_deg: float, elevation_m: float) -> EarthLocation:
    """WGS84 geodetic site position (longitude east positive)."""
    return EarthLocation.from_geodetic(longitude_deg * u.deg, latitude_deg * u.deg, elevation_m * u.m)


def light_travel_time_d(times: Time, ra_deg, dec_deg, location: EarthLocation) -> np.ndarray:
    """Barycentric light travel time (site -> barycentre, toward the target) in days."""
    target = SkyCoord(ra=np.asarray(ra_deg) * u.deg, dec=np.asarray(dec_deg) * u.deg, frame="icrs")
    return times.light_travel_time(target, kind="barycentric", location=location).to_value(u.day)


def bjd_tdb_to_site_time(bjd_tdb, ra_deg, dec_deg, location: EarthLocation) -> Time:
    """The instant (astropy Time, TDB) at which a barycentric event is seen at `location`."""
    bjd = np.asarray(bjd_tdb, dtype=float)
    seen = Time(bjd, format="jd", scale="tdb")
    for _ in range(_ITERATIONS):
        ltt = light_travel_time_d(seen, ra_deg, dec_deg, location)
        seen = Time(bjd, -ltt, format="jd", scale="tdb")
    note_beyond_earth_orientation(seen)
    return seen


def site_time_to_bjd_tdb(times: Time, ra_deg, dec_deg, location: EarthLocation) -> np.ndarray:
    """BJD_TDB (float JD) of events seen at `location` at `times`."""
    return (times.tdb + light_travel_time_d(times, ra_deg, dec_deg, location) * u.day).jd


_noted = False


def note_beyond_earth_orientation(times: Time) -> None:
    """Log once when dates lie beyond the bundled Earth-orientation predictions."""
    global _noted
    if _noted or times.size == 0:
        return
    table_end = Time(iers.earth_orientation_table.get()["MJD"][-1].value, format="mjd")
    if np.max(times.utc.mjd) > table_end.mjd:
        log.info("dates after %s lie beyond the bundled Earth-orientation predictions; "
                 "UT1-UTC and polar motion are extrapolated (seconds of time at most)", table_end.utc.iso[:10])
        _noted = True
