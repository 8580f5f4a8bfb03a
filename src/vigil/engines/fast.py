"""Fast visibility engine: interval arithmetic on analytic rise/set times (numpy only).

Per site, the dark intervals over the whole span are found once (engines.darkness).
Per transit, the target's apparent place of date gives the hour-angle half-width above the
altitude limit; the limit is an apparent altitude, so it is lowered by the refraction there
(constant for a site). The stretches above the limit around the culminations nearest
mid-transit are intersected with the dark intervals and clipped to the window by
`searchsorted`, for all transits at once. The Moon separation, when asked, is sampled every
`MOON_STEP_MIN` minutes with the Moon's altitude (the limit holds only while the Moon is up)
and its edges interpolated, in the windows where it can fall below the limit; the others are
clear throughout, settled by its value at mid-transit (see `_moon_clear`).

Target-independent quantities are tabulated once per process on fixed grids of Julian dates,
in blocks computed on first use (`vigil.tabulated.Table`), and read at the nearest node or interpolated
linearly. Linear interpolation over a step h errs by at most h^2/8 max|f''|; for a rotating
direction, interpolating the vector leaves only the part due to the change of its angular
rate (and a shortening of the vector, removed by normalising). Bounds, checked in the tests
(the Earth's table for BJD_TDB -> UTC is in `vigil.timescales`):
- `SKY_TABLE` (3 h, JD UTC): precession-nutation matrix, annual aberration and equation of
  the equinoxes at the nearest node (< 0.05": the place of date moves < 0.7"/day), and the
  Sun's direction, interpolated (< 0.01").
- `MOON_TABLE` (1 h, JD UTC): the geocentric Moon (< 1", and < 7 km in distance) and its
  illuminated fraction (< 1e-5: the phase angle turns by < 0.6 deg/h).
Error budget of the engine (checked against the reference path in the tests): place of date
~0.5", UT1 taken as UTC < 0.004 deg in hour angle, Sun ~0.003 deg, refraction model ~0.01 deg:
window edges within about a minute. Each row's results depend on that row alone (the tables
on their fixed nodes, the dark intervals night by night), so a catalog planned in chunks gets
the same numbers bit for bit (vigil.sweep relies on this).
"""

from __future__ import annotations

from functools import lru_cache
from typing import Callable, NamedTuple

import numpy as np
import pandas as pd

from vigil import intervals, local_sky, places_of_date, schema
from vigil.constraints import Constraints
from vigil.engines.darkness import ground_notes, span_dark_intervals
from vigil.local_sky import SIDEREAL_DEG_PER_DAY
from vigil.sites import Site
from vigil.sky import airmass_kasten_young
from vigil.tabulated import BLOCKS_KEPT, Table, block_nodes
from vigil.time_units import MINUTES_PER_DAY
from vigil.timescales import geocentre_mid_jd_utc, jd_tt_from_utc
from vigil.vectors import angle_deg, unit_vectors
from vigil.visibility import window_bounds

MOON_STEP_MIN = 20.0
# The topocentric Moon moves against the stars by at most about 16.5 deg/day in its orbit plus
# 6.5 deg/day from the diurnal parallax (1.02 deg swung at 6.3 rad/day): 23 deg/day, taken as
# 26; the Moon-target angle changes no faster (triangle inequality).
MOON_SEPARATION_RATE_DEG_PER_D = 26.0
FACILITY_STEP_MIN = 5.0
SKY_STEP_D = 1.0 / 8.0
MOON_STEP_D = 1.0 / 24.0


@lru_cache(maxsize=BLOCKS_KEPT)
def _sky_block(block: int) -> np.ndarray:
    """Columns `SKY_STAR_OF_DATE` (precession-nutation matrix, row by row, then aberration beta),
    `SKY_EQUATION_OF_EQUINOXES` (deg) and `SKY_SUN` (unit vector of date) at nodes of JD UTC."""
    jd_tt = jd_tt_from_utc(block_nodes(block, SKY_STEP_D))
    matrix, beta = places_of_date.star_of_date_terms(jd_tt)
    sun_ra, sun_dec = np.radians(places_of_date.sun_radec_deg(jd_tt))
    sun = [np.cos(sun_dec) * np.cos(sun_ra), np.cos(sun_dec) * np.sin(sun_ra), np.sin(sun_dec)]
    return np.column_stack([*matrix.reshape(9, -1), *beta, local_sky.equation_of_equinoxes_deg(jd_tt), *sun])


@lru_cache(maxsize=BLOCKS_KEPT)
def _moon_block(block: int) -> np.ndarray:
    """Columns `MOON_XYZ` (the geocentric Moon, km, true equator and equinox of date) and
    `MOON_ILLUMINATION` (its illuminated fraction) at nodes of JD UTC."""
    jd_tt = jd_tt_from_utc(block_nodes(block, MOON_STEP_D))
    return np.column_stack([*places_of_date.moon_geocentric_km(jd_tt), places_of_date.moon_illuminated_fraction(jd_tt)])


SKY_TABLE = Table(SKY_STEP_D, 16, _sky_block)
MOON_TABLE = Table(MOON_STEP_D, 4, _moon_block)
# SKY_TABLE columns: matrix row by row (9) and aberration (3), equation of the equinoxes, Sun
SKY_STAR_OF_DATE, SKY_EQUATION_OF_EQUINOXES, SKY_SUN = slice(0, 12), slice(12, 13), slice(13, 16)
_POINTING = slice(0, 13)  # star of date and equation of the equinoxes, fetched together
MOON_XYZ, MOON_ILLUMINATION = slice(0, 3), slice(3, 4)


class _Latest:
    """The result of the latest computation with copies of its inputs, handed back when the
    next call's inputs are equal (plan_windows asks for the mid-times and places of date once
    per site, and this engine computes both at the geocentre, alike for every site). Inputs
    and result are kept as one entry, replaced at once, so threads planning side by side
    never get another's result."""

    def __init__(self):
        self._entry = None

    def get(self, key, arrays: tuple, compute: Callable):
        entry = self._entry
        if entry is not None and entry[0] == key and all(np.array_equal(a, b) for a, b in zip(entry[1], arrays)):
            return entry[2]
        result = compute(*arrays)
        self._entry = (key, tuple(a.copy() for a in arrays), result)
        return result


_latest_mid = _Latest()
_latest_place = _Latest()


def site_mid_jd_utc(transits: pd.DataFrame, site: Site) -> np.ndarray:
    """Mid-transit as seen at the site, JD UTC, from BJD_TDB: the fast conversion at the
    geocentre (`timescales.geocentre_mid_jd_utc`, within 0.05 s of astropy's at the site).
    Being the same for every site, it is computed once for a run of sites."""
    columns = tuple(transits[c].to_numpy(dtype=float) for c in (schema.MID_BJD_TDB, "ra_deg", "dec_deg"))
    return _latest_mid.get(None, columns, geocentre_mid_jd_utc).copy()


class _Pointing(NamedTuple):
    """Per transit at mid-time: the target's apparent direction of date (3, n; unit length to
    1e-8, the aberration's second order) and the local apparent sidereal time (deg, UT1 taken
    as UTC) with its cosine and sine."""

    target: np.ndarray
    lst_deg: np.ndarray
    cos_lst: np.ndarray
    sin_lst: np.ndarray


def _pointing(windows: pd.DataFrame, site: Site) -> _Pointing:
    """Each window's pointing at mid-transit; read-only arrays."""
    columns = tuple(windows[c].to_numpy(dtype=float) for c in (schema.MID_JD_UTC, "ra_deg", "dec_deg"))
    target, greenwich_deg = _latest_place.get(None, columns, _place_of_date)
    lst = greenwich_deg + site.longitude_deg
    lst_rad = np.radians(lst)
    return _Pointing(target, lst, np.cos(lst_rad), np.sin(lst_rad))


def _place_of_date(mid, ra, dec) -> tuple[np.ndarray, np.ndarray]:
    """The apparent directions of date (3, n) of ICRS (ra, dec) (deg) at the JD UTC `mid`, and the
    Greenwich apparent sidereal time there (deg, UT1 taken as UTC); read-only. Alike for every
    site, so `_pointing` computes them once for a run of sites (`_latest_place`)."""
    terms = SKY_TABLE.nearest(mid, _POINTING)  # (n, 13): its columns are read strided, not copied
    x0, y0, z0 = unit_vectors(ra, dec).T
    v = np.empty((3, mid.size))
    for r in range(3):
        np.multiply(terms[:, 3 * r], x0, out=v[r])
        v[r] += terms[:, 3 * r + 1] * y0
        v[r] += terms[:, 3 * r + 2] * z0
    beta = terms[:, 9:12].T
    v_dot_beta = v[0] * beta[0] + v[1] * beta[1] + v[2] * beta[2]
    v += beta
    v -= v_dot_beta * v
    greenwich = local_sky.gmst_deg(mid) + terms[:, 12]
    v.setflags(write=False)
    greenwich.setflags(write=False)
    return v, greenwich


def _local_sidereal_deg(jd_utc, equation_of_equinoxes_deg, site: Site):
    return local_sky.gmst_deg(jd_utc) + equation_of_equinoxes_deg + site.longitude_deg


def _sin_altitude(x, y, z, pointing: _Pointing, site: Site) -> np.ndarray:
    """sin(geometric altitude) of unit vectors of date (components x, y, z) at the pointing's sidereal times."""
    lat = np.radians(site.latitude_deg)
    return np.cos(lat) * (x * pointing.cos_lst + y * pointing.sin_lst) + np.sin(lat) * z


def _culmination_jd_utc(mid: np.ndarray, pointing: _Pointing) -> np.ndarray:
    """JD UTC of the upper culmination (hour angle 0) nearest each mid-time `mid` (JD UTC)."""
    x, y, _ = pointing.target
    ha_mid = (pointing.lst_deg - np.degrees(np.arctan2(y, x)) + 180.0) % 360.0 - 180.0
    return mid - ha_mid / SIDEREAL_DEG_PER_DAY


def _above_limit(windows: pd.DataFrame, site: Site, constraints: Constraints, pointing: _Pointing):
    """Flat interval set of time above the apparent altitude limit near each window."""
    limit = constraints.min_altitude_deg
    geometric_limit = limit - local_sky.refraction_deg(limit, site.air_pressure_hpa, site.temperature_c,
                                                     alt_is_apparent=True)
    x, y, z = pointing.target
    lat = np.radians(site.latitude_deg)
    numerator = np.sin(np.radians(geometric_limit)) - np.sin(lat) * z
    denominator = np.cos(lat) * np.hypot(x, y)
    flat = denominator < 1e-12  # pole of the sky or of the Earth: altitude is constant
    with np.errstate(divide="ignore", invalid="ignore"):
        cos_h = np.where(flat, np.where(numerator < 0.0, -1.0, 1.0), numerator / denominator)
    half_width_d = np.degrees(np.arccos(np.clip(cos_h, -1.0, 1.0))) / SIDEREAL_DEG_PER_DAY
    mid = windows[schema.MID_JD_UTC].to_numpy(dtype=float)
    lo, hi = window_bounds(windows)
    culmination = _culmination_jd_utc(mid, pointing)
    sidereal_day = 360.0 / SIDEREAL_DEG_PER_DAY
    reach = int(np.ceil(np.max(np.maximum(mid - lo, hi - mid), initial=0.0) / sidereal_day + 0.5))
    offsets = sidereal_day * np.arange(-reach, reach + 1)  # the culminations that can touch a window
    always = half_width_d >= 0.5 * sidereal_day
    centres = culmination[:, None] + offsets
    start = np.maximum(centres - half_width_d[:, None], lo[:, None])
    end = np.minimum(centres + half_width_d[:, None], hi[:, None])
    start[always, :] = np.inf  # never sets: one interval, the whole window
    start[always, reach], end[always, reach] = lo[always], hi[always]
    row = np.repeat(np.arange(len(windows)), offsets.size)
    start, end = start.ravel(), end.ravel()
    keep = end > start
    return row[keep], start[keep], end[keep]


def _topocentric_moon_km(jd_utc, site: Site, lst_deg=None):
    """The Moon seen from the site at jd_utc (x, y, z; km, true equator and equinox of date) and
    the local apparent sidereal time (deg; computed unless given).

    It is the tabulated geocentric Moon minus the site's position (WGS84) turned by the local
    apparent sidereal time.
    """
    if lst_deg is None:
        lst_deg = _local_sidereal_deg(jd_utc, SKY_TABLE.nearest(jd_utc, SKY_EQUATION_OF_EQUINOXES)[:, 0], site)
    mx, my, mz = MOON_TABLE.at(jd_utc, MOON_XYZ).T
    rho_cos, rho_sin = local_sky.observer_geocentric_km(site.latitude_deg, site.elevation_m)
    lst_rad = np.radians(lst_deg)
    return (mx - rho_cos * np.cos(lst_rad), my - rho_cos * np.sin(lst_rad), mz - rho_sin), lst_deg


def _moon_separation_deg(jd_utc, target: np.ndarray, site: Site, lst_deg=None) -> np.ndarray:
    """Angle (deg) between directions of date (3, n) and the Moon seen from the site at jd_utc
    (`vectors.angle_deg`)."""
    moon, _ = _topocentric_moon_km(jd_utc, site, lst_deg)
    return angle_deg(target, moon)


def _moon_margin_deg(jd_utc, target: np.ndarray, site: Site, limit_deg) -> np.ndarray:
    """How far (deg) the Moon is beyond the separation limit or below the horizon, whichever is
    larger: the limit holds only while the Moon's centre is above the horizon (geometric)."""
    moon, lst_deg = _topocentric_moon_km(jd_utc, site)
    return np.maximum(angle_deg(target, moon) - limit_deg, -_moon_altitude_deg(moon, lst_deg, site))


def _moon_altitude_deg(moon, lst_deg, site: Site) -> np.ndarray:
    """Geometric altitude (deg) of the topocentric Moon (x, y, z; km, of date) at the local
    apparent sidereal times lst_deg."""
    mx, my, mz = moon
    lst_rad = np.radians(lst_deg)
    lat = np.radians(site.latitude_deg)
    sin_alt = (np.cos(lat) * (mx * np.cos(lst_rad) + my * np.sin(lst_rad)) + np.sin(lat) * mz) / np.sqrt(
        mx ** 2 + my ** 2 + mz ** 2)
    return np.degrees(np.arcsin(np.clip(sin_alt, -1.0, 1.0)))


def _moon_clear(windows: pd.DataFrame, site: Site, constraints: Constraints, pointing: _Pointing):
    """Flat interval set where the Moon is at least the required angle away.

    A window whose separation at mid-transit exceeds the limit by more than the separation can
    move in its half-length (MOON_SEPARATION_RATE_DEG_PER_D) is clear throughout; the others
    are sampled, as the Moon may be below the horizon for some of the window.
    """
    mid = windows[schema.MID_JD_UTC].to_numpy(dtype=float)
    lo, hi = window_bounds(windows)
    facility = site.facility
    margin_mid = _moon_separation_deg(mid, pointing.target, site, pointing.lst_deg) - constraints.moon_sep_deg
    reach_deg = MOON_SEPARATION_RATE_DEG_PER_D * np.maximum(mid - lo, hi - mid)
    if facility.moon_table:  # the limit follows the phase: every window is sampled
        reach_deg = np.full(mid.shape, np.inf)
    near = np.flatnonzero(margin_mid <= reach_deg)
    clear = np.flatnonzero(margin_mid > reach_deg)
    sample_row, jd = intervals.sample_grid(lo[near], hi[near], MOON_STEP_MIN / MINUTES_PER_DAY)
    limit = facility.moon_limit_deg(MOON_TABLE.at(jd, MOON_ILLUMINATION)[:, 0],
                                    constraints.moon_sep_deg)
    row, start, end = intervals.from_samples(sample_row, jd, _moon_margin_deg(jd, pointing.target[:, near[sample_row]],
                                                                              site, limit))
    row = np.concatenate([near[row], clear])
    order = np.argsort(row, kind="stable")
    return row[order], np.concatenate([start, lo[clear]])[order], np.concatenate([end, hi[clear]])[order]


def evaluate(windows: pd.DataFrame, site: Site, constraints: Constraints, timed: np.ndarray):
    """Observable intervals of the `timed` rows (row numbers of `windows`) and the conditions at
    mid of any rows asked for later, from one pointing computation."""
    pointing = _pointing(windows, site)
    if timed.all():  # as usual: no row to leave out
        row, start, end = observable_intervals(windows, site, constraints, pointing)
    else:
        row, start, end = observable_intervals(windows[timed].reset_index(drop=True), site, constraints,
                                               _Pointing(*(a[..., timed] for a in pointing)))
    mid = windows["mid_jd_utc"].to_numpy(dtype=float)

    def conditions_of(rows: np.ndarray) -> pd.DataFrame:
        return _conditions(mid[rows], site, _Pointing(*(a[..., rows] for a in pointing)))

    return (np.flatnonzero(timed)[row], start, end), conditions_of, ground_notes(windows, site, constraints)


def observable_intervals(windows: pd.DataFrame, site: Site, constraints: Constraints, pointing: _Pointing | None = None):
    """Flat interval set (row, start, end), JD UTC, of observable time inside each window."""
    n = len(windows)
    if n == 0:
        empty = np.array([], dtype=float)
        return np.array([], dtype=int), empty, empty
    lo, hi = window_bounds(windows)
    dark_start, dark_end = span_dark_intervals(windows, site, constraints)
    pointing = _pointing(windows, site) if pointing is None else pointing
    observable = intervals.intersect(intervals.clip_to_windows(dark_start, dark_end, lo, hi),
                                     _above_limit(windows, site, constraints, pointing), n)
    if site.facility.limits_sky_position:
        observable = intervals.intersect(observable, _facility_clear(windows, site, pointing), n)
    if constraints.moon_sep_deg > 0 or site.facility.moon_table:
        observable = intervals.intersect(observable, _moon_clear(windows, site, constraints, pointing), n)
    return observable


def _facility_clear(windows: pd.DataFrame, site: Site, pointing: _Pointing):
    """Flat interval set inside the horizon mask and mount limits (facility.py), sampled every
    FACILITY_STEP_MIN minutes with edges interpolated: the target's place of date is held at its
    mid-transit value and the hour angle advances at the sidereal rate."""
    lo, hi = window_bounds(windows)
    row, jd = intervals.sample_grid(lo, hi, FACILITY_STEP_MIN / MINUTES_PER_DAY)
    x, y, z = pointing.target[:, row]
    mid = windows[schema.MID_JD_UTC].to_numpy(dtype=float)[row]
    ha = (pointing.lst_deg[row] + SIDEREAL_DEG_PER_DAY * (jd - mid) - np.degrees(np.arctan2(y, x)) + 180.0) % 360.0 - 180.0
    dec = np.degrees(np.arcsin(np.clip(z, -1.0, 1.0)))
    geometric = local_sky.altitude_deg(ha, dec, site.latitude_deg)
    apparent = geometric + local_sky.refraction_deg(geometric, site.air_pressure_hpa, site.temperature_c)
    azimuth = local_sky.azimuth_deg(ha, dec, site.latitude_deg)
    return intervals.from_samples(row, jd, site.facility.margin_deg(apparent, azimuth, ha, dec))


def conditions_at_mid(windows: pd.DataFrame, site: Site) -> pd.DataFrame:
    """Target altitude (apparent above the horizon, geometric below) and airmass, Sun altitude,
    Moon separation, illumination and altitude at mid-transit, and the meridian crossing
    nearest it, indexed like `windows`."""
    conditions = _conditions(windows[schema.MID_JD_UTC].to_numpy(dtype=float), site, _pointing(windows, site))
    return conditions.set_axis(windows.index)


def _conditions(mid: np.ndarray, site: Site, pointing: _Pointing) -> pd.DataFrame:
    """conditions_at_mid at the JD UTC `mid` with the pointing there (index 0, 1, ...)."""
    geometric = np.degrees(np.arcsin(np.clip(_sin_altitude(*pointing.target, pointing, site), -1.0, 1.0)))
    sun = SKY_TABLE.at(mid, SKY_SUN).T
    sin_sun_alt = _sin_altitude(*sun, pointing, site) / np.sqrt(sun[0] ** 2 + sun[1] ** 2 + sun[2] ** 2)
    refraction = np.where(geometric >= 0.0, local_sky.refraction_deg(geometric, site.air_pressure_hpa,
                                                                      site.temperature_c), 0.0)
    moon, _ = _topocentric_moon_km(mid, site, pointing.lst_deg)
    return pd.DataFrame({
        "alt_mid_deg": geometric + refraction,
        "airmass_mid": airmass_kasten_young(geometric),
        "sun_alt_mid_deg": np.degrees(np.arcsin(np.clip(sin_sun_alt, -1.0, 1.0))),
        "moon_sep_deg": angle_deg(pointing.target, moon),
        "moon_illumination": MOON_TABLE.at(mid, MOON_ILLUMINATION)[:, 0],
        "moon_alt_mid_deg": _moon_altitude_deg(moon, pointing.lst_deg, site),
        schema.MERIDIAN_JD_UTC: _culmination_jd_utc(mid, pointing),
    })
