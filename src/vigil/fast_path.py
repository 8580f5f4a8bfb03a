"""Fast visibility engine: interval arithmetic on analytic rise/set times (numpy only).

Per site, the dark intervals over the whole span are found once (almanac.dark_intervals).
Per transit, the target's apparent place of date gives the hour-angle half-width above the
altitude limit; the limit is an apparent altitude, so it is lowered by the refraction there
(constant for a site). The stretches above the limit around the three culminations nearest
mid-transit are intersected with the dark intervals and clipped to the window by
`searchsorted`, for all transits at once. The Moon separation, when asked, is sampled every
`MOON_STEP_MIN` minutes and its edges interpolated. Error budget (checked against the
reference path in the tests): place of date ~0.5", UT1 taken as UTC < 0.004 deg in hour
angle, Sun ~0.003 deg, refraction model ~0.01 deg: window edges within about a minute.
"""

from __future__ import annotations

import erfa
import numpy as np
import pandas as pd

from vigil import almanac, intervals
from vigil.catalog import Site
from vigil.sky import airmass_kasten_young
from vigil.visibility import Constraints

SIDEREAL_DEG_PER_DAY = 360.98564736629  # Earth's rotation relative to the equinox, per UT day
MOON_STEP_MIN = 20.0
_DARK_MARGIN_D = 1.0
_AU_LIGHT_D = 499.004783836 / 86400.0  # light time for one astronomical unit, days
_EARTH_GRID_D = 1.0


def _earth_barycentric_au(jd_tdb: np.ndarray) -> np.ndarray:
    """Earth's barycentric position (au, ICRS axes), erfa.epv00 on a daily grid, interpolated.

    Linear interpolation over one day errs by at most 4e-5 au (20 ms of light time).
    """
    grid = np.arange(np.floor(jd_tdb.min()) - 1.0, np.ceil(jd_tdb.max()) + 2.0, _EARTH_GRID_D)
    _, barycentric = erfa.epv00(grid, np.zeros_like(grid))
    position = barycentric["p"]
    return np.stack([np.interp(jd_tdb, grid, position[:, k]) for k in range(3)], axis=-1)


def site_mid_jd_utc(transits: pd.DataFrame, site: Site) -> np.ndarray:
    """Mid-transit as seen at the site, JD UTC, from BJD_TDB (Roemer delay of the geocentre).

    Neglected: the site's offset from the geocentre (< 21 ms), TDB - TT (< 2 ms), relativistic
    delays (< 0.1 ms); the whole conversion is within 0.05 s of astropy's.
    """
    bjd = transits["mid_bjd_tdb"].to_numpy()
    ra, dec = np.radians(transits["ra_deg"].to_numpy()), np.radians(transits["dec_deg"].to_numpy())
    direction = np.stack([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)], axis=-1)
    seen_tt = bjd.copy()
    for _ in range(2):  # the delay changes by < 1e-4 s per s: two passes converge
        seen_tt = bjd - np.einsum("ij,ij->i", _earth_barycentric_au(seen_tt), direction) * _AU_LIGHT_D
    utc = seen_tt - almanac.tt_minus_utc_s(seen_tt) / 86400.0
    return seen_tt - almanac.tt_minus_utc_s(utc) / 86400.0


def _place_of_date(windows: pd.DataFrame):
    jd_tt = almanac.jd_tt_from_utc(windows["mid_jd_utc"].to_numpy())
    ra, dec = almanac.precess_to_date(windows["ra_deg"].to_numpy(), windows["dec_deg"].to_numpy(), jd_tt)
    return ra, dec, jd_tt


def _above_limit(windows: pd.DataFrame, site: Site, constraints: Constraints, ra, dec):
    """Flat interval set of time above the apparent altitude limit near each window."""
    limit = constraints.min_altitude_deg
    geometric_limit = limit - almanac.refraction_deg(limit, site.air_pressure_hpa, site.temperature_c, alt_is_apparent=True)
    half_width_d = almanac.hour_angle_at_altitude_deg(geometric_limit, dec, site.latitude_deg) / SIDEREAL_DEG_PER_DAY
    mid = windows["mid_jd_utc"].to_numpy()
    ha_mid = (almanac.local_sidereal_deg(mid, site.longitude_deg) - ra + 180.0) % 360.0 - 180.0
    culmination = mid - ha_mid / SIDEREAL_DEG_PER_DAY
    sidereal_day = 360.0 / SIDEREAL_DEG_PER_DAY
    n = len(windows)
    lo, hi = windows["window_start_jd_utc"].to_numpy(), windows["window_end_jd_utc"].to_numpy()
    centres = culmination[:, None] + sidereal_day * np.array([-1.0, 0.0, 1.0])
    start = centres - half_width_d[:, None]
    end = centres + half_width_d[:, None]
    always = (half_width_d >= 0.5 * sidereal_day)[:, None]
    start = np.where(always, lo[:, None], np.maximum(start, lo[:, None]))
    end = np.where(always, hi[:, None], np.minimum(end, hi[:, None]))
    row = np.repeat(np.arange(n), 3)
    start, end = start.ravel(), end.ravel()
    keep = end > start
    keep &= ~(always.repeat(3, axis=1).ravel() & (np.tile([0, 1, 2], n) != 1))  # circumpolar: one interval
    return row[keep], start[keep], end[keep]


def _moon_clear(windows: pd.DataFrame, site: Site, constraints: Constraints, ra, dec):
    """Flat interval set where the Moon is at least the required angle away."""
    row, jd = intervals.sample_grid(windows["window_start_jd_utc"].to_numpy(),
                                    windows["window_end_jd_utc"].to_numpy(), MOON_STEP_MIN / 1440.0)
    separation = _moon_separation_deg(jd, site, ra[row], dec[row])
    return intervals.from_samples(row, jd, separation - constraints.moon_sep_deg)


def _moon_separation_deg(jd_utc, site: Site, ra, dec):
    moon_ra, moon_dec = almanac.moon_topocentric_radec_deg(almanac.jd_tt_from_utc(jd_utc), jd_utc, site.latitude_deg,
                                                           site.longitude_deg, site.elevation_m)
    return _angle_deg(ra, dec, moon_ra, moon_dec)


def _angle_deg(ra1, dec1, ra2, dec2):
    """Angle between two directions (degrees), by the haversine form (accurate at small angles)."""
    d1, d2 = np.radians(dec1), np.radians(dec2)
    h = np.sin((d2 - d1) / 2) ** 2 + np.cos(d1) * np.cos(d2) * np.sin(np.radians(ra2 - ra1) / 2) ** 2
    return np.degrees(2 * np.arcsin(np.sqrt(np.clip(h, 0.0, 1.0))))


def observable_intervals(windows: pd.DataFrame, site: Site, constraints: Constraints):
    """Flat interval set (row, start, end), JD UTC, of observable time inside each window."""
    n = len(windows)
    if n == 0:
        empty = np.array([], dtype=float)
        return np.array([], dtype=int), empty, empty
    lo, hi = windows["window_start_jd_utc"].to_numpy(), windows["window_end_jd_utc"].to_numpy()
    dark_start, dark_end = almanac.dark_intervals(site.latitude_deg, site.longitude_deg, site.elevation_m,
                                                  lo.min() - _DARK_MARGIN_D, hi.max() + _DARK_MARGIN_D,
                                                  constraints.sun_altitude_deg)
    ra, dec, _ = _place_of_date(windows)
    observable = intervals.intersect(intervals.clip_to_windows(dark_start, dark_end, lo, hi),
                                     _above_limit(windows, site, constraints, ra, dec), n)
    if constraints.moon_sep_deg > 0:
        observable = intervals.intersect(observable, _moon_clear(windows, site, constraints, ra, dec), n)
    return observable


def conditions_at_mid(windows: pd.DataFrame, site: Site) -> pd.DataFrame:
    """Target altitude (apparent) and airmass, Sun altitude and Moon separation at mid-transit."""
    ra, dec, jd_tt = _place_of_date(windows)
    mid = windows["mid_jd_utc"].to_numpy()
    lst = almanac.local_sidereal_deg(mid, site.longitude_deg)
    geometric = almanac.altitude_deg(lst - ra, dec, site.latitude_deg)
    sun_ra, sun_dec = almanac.sun_radec_deg(jd_tt)
    return pd.DataFrame({
        "alt_mid_deg": geometric + almanac.refraction_deg(geometric, site.air_pressure_hpa, site.temperature_c),
        "airmass_mid": airmass_kasten_young(geometric),
        "sun_alt_mid_deg": almanac.altitude_deg(lst - sun_ra, sun_dec, site.latitude_deg),
        "moon_sep_deg": _moon_separation_deg(mid, site, ra, dec),
    }, index=windows.index)
