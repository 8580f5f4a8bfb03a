"""Visibility engine for an observatory in space: the Sun angle, interruptions and blackouts.

A target is observable from a site of kind space while its angle from the Sun lies inside the
site's field of regard [sun_angle_min_deg, sun_angle_max_deg], outside the regular
interruptions and outside the blackouts (sites.SpaceSettings). There is no night, horizon or
Moon there: the constraints min_altitude_deg, twilight and moon_sep_deg are ignored, whether
they come from the site's defaults or from the command line; baseline_h and sigma_k pad the
windows as on the ground.

The observatory is taken at the Earth's centre. At a distance d from it, the site sees each
mid-time up to d / c earlier or later (the offset projected on the target's direction:
1.5e6 km gives 5.0 s, a low orbit at 7000 km 23 ms) and the Sun up to asin(d / 1 au) away
from its geocentric direction (0.57 deg at 1.5e6 km, but nothing for an offset along the
Sun-Earth line). Neither is widened for: catalog.read_sites notes both when the site gives
distance_from_earth_km.

The Sun (places_of_date.sun_radec_deg, about 0.01 deg) and the target (places_of_date.precess_to_date,
0.5") are apparent geocentric places of date. The Sun moves by at most 1.02 deg/day along the
ecliptic, so the Sun angle changes by less than 0.05 deg/h (triangle inequality); it is
sampled every `SUN_STEP_H` and the edges of the field of regard interpolated linearly. Where
the angle changes fastest, the Sun's 0.01 deg places an edge within about 15 minutes.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from astropy.time import Time

from vigil import intervals, places_of_date, schema
from vigil.constraints import Constraints
from vigil.engines.protocol import evaluate_in_two_steps
from vigil.errors import InputError
from vigil.sites import Site, SpaceSettings
from vigil.time_units import HOURS_PER_DAY
from vigil.timescales import geocentre_mid_jd_utc, jd_tt_from_utc
from vigil.vectors import separation_deg
from vigil.visibility import window_bounds

SUN_STEP_H = 1.0
# The Moon's least distance from the Earth's centre (about 356,400 km at its closest perigees;
# from memory). Seen from d km off the geocentre its direction moves by up to asin(d / that).
MOON_NEAREST_KM = 356400.0
# moon_sep_deg is reported while that parallax stays below this (d up to 12,400 km: low orbits).
MOON_PARALLAX_LIMIT_DEG = 2.0


def site_mid_jd_utc(transits: pd.DataFrame, site: Site) -> np.ndarray:
    """Mid-transit at the Earth's centre, JD UTC, from BJD_TDB (Roemer delay of the geocentre,
    `timescales.geocentre_mid_jd_utc`). For an observatory d km from the Earth's centre the
    time seen there differs by up to d / c (module docstring)."""
    return geocentre_mid_jd_utc(*(transits[c].to_numpy(dtype=float) for c in (schema.MID_BJD_TDB, "ra_deg", "dec_deg")))


def sun_angle_deg(ra_deg, dec_deg, jd_utc) -> np.ndarray:
    """Angle between ICRS targets (ra_deg, dec_deg) and the Sun seen from the Earth's centre at
    the Julian dates jd_utc (UTC), degrees; inputs broadcast."""
    jd_tt = jd_tt_from_utc(jd_utc)
    target_ra, target_dec = places_of_date.precess_to_date(ra_deg, dec_deg, jd_tt)
    return separation_deg(target_ra, target_dec, *places_of_date.sun_radec_deg(jd_tt))


def _in_field_of_regard(ra_deg, dec_deg, lo, hi, space: SpaceSettings):
    """Flat interval set (row, start, end), JD UTC, where each row's target lies inside the
    Sun-angle band within [lo, hi] of that row."""
    row, jd = intervals.sample_grid(lo, hi, SUN_STEP_H / HOURS_PER_DAY)
    angle = sun_angle_deg(ra_deg[row], dec_deg[row], jd)
    margin = np.minimum(angle - space.sun_angle_min_deg, space.sun_angle_max_deg - angle)
    return intervals.from_samples(row, jd, margin)


def _between_interruptions(space: SpaceSettings, jd_lo: float, jd_hi: float):
    """Sorted disjoint stretches (starts, ends), JD UTC, between the interruptions, covering
    [jd_lo, jd_hi]."""
    period_d = space.interruption_period_h / HOURS_PER_DAY
    first = np.floor((jd_lo - space.interruption_start_jd_utc) / period_d)
    last = np.ceil((jd_hi - space.interruption_start_jd_utc) / period_d)
    begins = space.interruption_start_jd_utc + np.arange(first, last + 1) * period_d
    return begins + space.interruption_h / HOURS_PER_DAY, begins + period_d


def _outside_blackouts(space: SpaceSettings):
    """Sorted disjoint stretches (starts, ends), JD UTC, between the blackouts (which may
    overlap), open-ended before the first and after the last."""
    starts, ends = np.array(space.blackouts_jd_utc, dtype=float).reshape(-1, 2).T
    covered_until = np.maximum.accumulate(ends)
    gap_starts, gap_ends = np.r_[-np.inf, covered_until], np.r_[starts, np.inf]
    keep = gap_ends > gap_starts
    return gap_starts[keep], gap_ends[keep]


def usable_timelines(space: SpaceSettings, jd_lo: float, jd_hi: float) -> list:
    """The timelines (starts, ends), JD UTC, that observable time must also lie in: between
    interruptions (covering [jd_lo, jd_hi]) and outside blackouts; an empty list when neither
    is set."""
    timelines = []
    if space.interruption_period_h is not None and space.interruption_h > 0:
        timelines.append(_between_interruptions(space, jd_lo, jd_hi))
    if space.blackouts_jd_utc:
        timelines.append(_outside_blackouts(space))
    return timelines


def _space_settings(site: Site) -> SpaceSettings:
    if site.space is None:
        raise InputError(f"site {site.name!r}: expected a site of kind = \"space\" for the space engine")
    return site.space


def observable_intervals(windows: pd.DataFrame, site: Site, constraints: Constraints):
    """Flat interval set (row, start, end), JD UTC, of observable time inside each window:
    inside the field of regard, outside interruptions and blackouts. `constraints` is not
    read (the windows come padded; nothing else of it applies in space)."""
    space = _space_settings(site)
    n = len(windows)
    if n == 0:
        empty = np.array([], dtype=float)
        return np.array([], dtype=int), empty, empty
    lo, hi = window_bounds(windows)
    observable = _in_field_of_regard(windows["ra_deg"].to_numpy(dtype=float), windows["dec_deg"].to_numpy(dtype=float),
                                     lo, hi, space)
    for starts, ends in usable_timelines(space, float(lo.min()), float(hi.max())):
        observable = intervals.intersect(observable, intervals.clip_to_windows(starts, ends, lo, hi), n)
    return observable


def _moon_separation_deg(ra_deg, dec_deg, mid_jd_utc, space: SpaceSettings) -> np.ndarray:
    """Geocentric Moon-target angle, degrees; NaN when the site's distance from the Earth makes
    the Moon's parallax exceed MOON_PARALLAX_LIMIT_DEG."""
    distance = space.distance_from_earth_km
    if distance is not None and distance > MOON_NEAREST_KM * np.sin(np.radians(MOON_PARALLAX_LIMIT_DEG)):
        return np.full(mid_jd_utc.shape, np.nan)
    jd_tt = jd_tt_from_utc(mid_jd_utc)
    target_ra, target_dec = places_of_date.precess_to_date(ra_deg, dec_deg, jd_tt)
    return separation_deg(target_ra, target_dec, *places_of_date.moon_radec_deg(jd_tt))


def conditions_at_mid(windows: pd.DataFrame, site: Site) -> pd.DataFrame:
    """The columns of the ground engines at mid-transit: altitude, airmass and Sun altitude are
    NaN (no horizon in space), and so is the meridian crossing; moon_sep_deg is geocentric (NaN
    beyond a low orbit's distance)."""
    space = _space_settings(site)
    mid = windows[schema.MID_JD_UTC].to_numpy(dtype=float)
    nothing = np.full(mid.shape, np.nan)
    return pd.DataFrame({
        "alt_mid_deg": nothing,
        "airmass_mid": nothing,
        "sun_alt_mid_deg": nothing,
        "moon_sep_deg": _moon_separation_deg(windows["ra_deg"].to_numpy(dtype=float),
                                             windows["dec_deg"].to_numpy(dtype=float), mid, space),
        "moon_illumination": places_of_date.moon_illuminated_fraction(jd_tt_from_utc(mid)),
        "moon_alt_mid_deg": nothing,
        schema.MERIDIAN_JD_UTC: nothing,
    }, index=windows.index)


def evaluate(windows: pd.DataFrame, site: Site, constraints: Constraints, timed: np.ndarray):
    """Observable intervals of the `timed` rows and conditions at mid of all rows (the
    `vigil.engines.protocol.Engine` interface). No notes: there is no night in space, and the
    times do not depend on the Earth's rotation."""
    return evaluate_in_two_steps(observable_intervals, conditions_at_mid, windows, site, constraints, timed, ())


def field_of_regard_jd_utc(ra_deg: float, dec_deg: float, space: SpaceSettings, jd_utc_start: float,
                           jd_utc_end: float) -> tuple[np.ndarray, np.ndarray]:
    """(starts, ends), JD UTC: when one target lies inside the field of regard within
    [jd_utc_start, jd_utc_end] (stretches are cut at those ends). Interruptions and blackouts
    are not applied."""
    _, starts, ends = _in_field_of_regard(np.array([ra_deg], dtype=float), np.array([dec_deg], dtype=float),
                                          np.array([jd_utc_start]), np.array([jd_utc_end]), space)
    return starts, ends


def annual_windows(ra_deg: float, dec_deg: float, site: Site, year: int) -> list[tuple[Time, Time]]:
    """When the Sun angle lets the site observe the target (ICRS, degrees) in a calendar year:
    (start, end) UTC Times in order, cut at the year's first and last instant (UTC). Only the
    field of regard counts; interruptions and blackouts are not applied."""
    if isinstance(year, bool) or not isinstance(year, (int, np.integer)):
        raise InputError(f"year: expected a whole calendar year such as 2031, got {year!r}")
    bounds = Time([f"{year:04d}-01-01", f"{year + 1:04d}-01-01"], scale="utc").jd
    starts, ends = field_of_regard_jd_utc(ra_deg, dec_deg, _space_settings(site), bounds[0], bounds[1])
    return [(Time(s, format="jd", scale="utc"), Time(e, format="jd", scale="utc")) for s, e in zip(starts, ends)]
