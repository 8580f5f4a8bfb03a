"""Time scales: BJD_TDB -> UTC at an observing site, exact (astropy) and fast (numpy), and UTC -> TT.

A transit predicted at BJD_TDB reaches the site at the TDB instant t with
t + ltt(t) = BJD_TDB, where ltt is the light travel time from the site to the solar-system
barycentre along the target's direction (Eastman, Siverd & Gaudi 2010). We solve this by
fixed-point iteration; ltt changes by < 1e-4 s per second, so each pass shrinks the error
10^4-fold: two passes leave < 0.1 ms.

- Exact (`bjd_tdb_to_site_time`): astropy's light travel time, site position included.
- Fast (`geocentre_mid_jd_utc`): the Roemer delay of the geocentre from the Earth's
  barycentric position (erfa.epv00) tabulated daily (`EARTH_TABLE`), within 0.05 s of the
  exact one; leap seconds from erfa's table (`tt_minus_utc_s`).
"""

from __future__ import annotations

import warnings
from functools import lru_cache

import astropy.units as u
import erfa
import numpy as np
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.time import Time
from astropy.utils import iers

from vigil import notes
from vigil.errors import InputError
from vigil.notes import Note
from vigil.tabulated import BLOCKS_KEPT, Table, block_nodes
from vigil.time_units import SECONDS_PER_DAY
from vigil.vectors import row_dot, unit_vectors

# Full Julian dates of the telescope era (years 1858 to 2406); smaller values are MJDs or
# truncated JDs, larger ones a unit or offset mistake.
MIN_PLAUSIBLE_JD = 2_400_000.0
MAX_PLAUSIBLE_JD = 2_600_000.0
# The span of dates every command plans for (start and end of windows, campaigns, journal
# visits, space seasons): inside it the leap-second table, the IERS extrapolation and the
# low-precision Sun and Moon are all usable; outside it ERFA itself calls the years dubious.
FIRST_PLAN_YEAR, LAST_PLAN_YEAR = 1950, 2300
_PLAN_SPAN_JD_UTC = (2433282.5, 2561482.5)  # 1950-01-01 0h and 2301-01-01 0h UTC (astropy Time)
_ITERATIONS = 2
_TT_MINUS_TAI_S = 32.184  # TT - TAI, IAU definition
_FIRST_UTC_YEAR = 1960  # erfa's leap-second table starts here
_INTEGRAL_LEAP_SECONDS_JD = 2441317.5  # 1972-01-01 0h UTC: whole leap seconds from here on
EARTH_STEP_D = 1.0
_AU_LIGHT_D = 499.004783836 / SECONDS_PER_DAY  # light time for one astronomical unit, days


def check_plan_date(time: Time, what: str) -> Time:
    """`time` if it lies in the years FIRST_PLAN_YEAR to LAST_PLAN_YEAR (UTC); else an InputError
    starting with `what` (the option, or file and field).

    Examples
    --------
    >>> check_plan_date(Time("2027-01-01", scale="utc"), "--start").utc.iso[:10]
    '2027-01-01'
    """
    jd = float(time.utc.jd)
    if not _PLAN_SPAN_JD_UTC[0] <= jd < _PLAN_SPAN_JD_UTC[1]:
        year = float(time.utc.jyear)
        shown = time.utc.iso[:10] if 1000 <= year < 9999 else f"year {year:.0f}"
        raise InputError(f"{what}: expected a date from {FIRST_PLAN_YEAR}-01-01 to {LAST_PLAN_YEAR}-12-31 (UTC; the "
                         f"span vigil plans for), got {shown}")
    return time


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
    return seen


def site_time_to_bjd_tdb(times: Time, ra_deg, dec_deg, location: EarthLocation) -> np.ndarray:
    """BJD_TDB (float JD) of events seen at `location` at `times`."""
    return (times.tdb + light_travel_time_d(times, ra_deg, dec_deg, location) * u.day).jd


def beyond_earth_orientation_note(jd_utc_end: float) -> tuple[Note, ...]:
    """A note when dates up to jd_utc_end lie beyond the bundled Earth-orientation predictions
    (what astropy does there: UT1-UTC held at its last tabulated value, polar motion from its
    50-year mean); no note otherwise."""
    table = iers.earth_orientation_table.get()
    table_end = Time(table["MJD"][-1].value, format="mjd", scale="utc").jd
    if not jd_utc_end > table_end:
        return ()
    return (notes.beyond_earth_orientation(table_end, float(table["UT1_UTC"][-1].to_value(u.s)), jd_utc_end),)


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
    return np.asarray(jd_utc, dtype=float) + tt_minus_utc_s(jd_utc) / SECONDS_PER_DAY


@lru_cache(maxsize=BLOCKS_KEPT)
def _earth_block(block: int) -> np.ndarray:
    """The Earth's barycentric position (au, ICRS axes; erfa.epv00) at nodes of JD TDB."""
    jd_tdb = block_nodes(block, EARTH_STEP_D)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", erfa.ErfaWarning)  # said in vigil's words (outside_earth_series_notes)
        _, barycentric = erfa.epv00(jd_tdb, np.zeros_like(jd_tdb))
    return np.ascontiguousarray(barycentric["p"])


EARTH_SERIES_SPAN_JD = (2415020.5, 2488069.5)  # 1900-01-01 to 2100-01-01: the span the epv00 series was fitted to


def outside_earth_series_notes(jd_utc_start: float, jd_utc_end: float) -> tuple[Note, ...]:
    """A note when [start, end] (JD UTC) reaches outside the years the Earth's position series
    (ERFA epv00, used by astropy and by the fast conversion) was fitted to; none otherwise."""
    before, after = jd_utc_start < EARTH_SERIES_SPAN_JD[0], jd_utc_end > EARTH_SERIES_SPAN_JD[1]
    if not (before or after):
        return ()
    return (notes.outside_earth_series(jd_utc_start if before else EARTH_SERIES_SPAN_JD[1],
                                       jd_utc_end if after else EARTH_SERIES_SPAN_JD[0]),)


# The Earth's barycentric position every day (< 4e-5 au interpolated, 20 ms of light).
EARTH_TABLE = Table(EARTH_STEP_D, 3, _earth_block)


def geocentre_mid_jd_utc(bjd_tdb, ra_deg, dec_deg) -> np.ndarray:
    """JD UTC at which events at BJD_TDB (arrays) from ICRS directions (deg) reach the geocentre.

    The Roemer delay of the geocentre from the tabulated Earth. Neglected: a site's offset
    from the geocentre (< 21 ms on the ground), TDB - TT (< 2 ms), relativistic delays
    (< 0.1 ms); with the tabulated Earth (20 ms) the whole conversion is within 0.05 s of
    `bjd_tdb_to_site_time`.

    Examples
    --------
    >>> jd_utc = geocentre_mid_jd_utc(np.array([2461000.5]), np.array([0.0]), np.array([90.0]))
    >>> bool(abs(jd_utc[0] - 2461000.5) < 0.01)  # within the light time of 1 au (8.3 min)
    True
    """
    bjd = np.asarray(bjd_tdb, dtype=float)
    direction = unit_vectors(np.asarray(ra_deg, dtype=float), np.asarray(dec_deg, dtype=float))
    seen_tt = bjd
    for _ in range(_ITERATIONS):  # the delay changes by < 1e-4 s per s: two passes converge
        seen_tt = bjd - row_dot(EARTH_TABLE.at(seen_tt), direction) * _AU_LIGHT_D
    utc = seen_tt - tt_minus_utc_s(seen_tt) / SECONDS_PER_DAY
    return seen_tt - tt_minus_utc_s(utc) / SECONDS_PER_DAY
