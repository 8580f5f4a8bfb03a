"""Reference visibility engine: astropy positions sampled across every whole window.

Each padded window is sampled every `STEP_MIN` minutes (both ends included); the edges of the
observable stretches are placed by linear interpolation of the constraint margins between
samples. Altitude changes by at most 0.25 deg per minute, so the interpolation error on an
edge is a few seconds; a constraint that holds for less than one step is missed.
Astrometric parameters are interpolated over 5 minutes (astropy's ErfaAstromInterpolator),
which astropy documents as sub-milliarcsecond.
"""

from __future__ import annotations

import astropy.units as u
import numpy as np
import pandas as pd
from astropy.coordinates import erfa_astrom
from astropy.time import Time

from vigil import intervals, schema, sky
from vigil.constraints import Constraints
from vigil.engines.darkness import ground_notes
from vigil.engines.protocol import evaluate_in_two_steps
from vigil.sites import Site
from vigil.local_sky import SIDEREAL_DEG_PER_DAY
from vigil.time_units import MINUTES_PER_DAY
from vigil.timescales import bjd_tdb_to_site_time, earth_location
from vigil.visibility import window_bounds

STEP_MIN = 5.0


def site_mid_jd_utc(transits: pd.DataFrame, site: Site) -> np.ndarray:
    """Mid-transit as seen at the site, JD UTC, from BJD_TDB (astropy light travel time)."""
    location = earth_location(site.latitude_deg, site.longitude_deg, site.elevation_m)
    seen = bjd_tdb_to_site_time(transits[schema.MID_BJD_TDB].to_numpy(), transits["ra_deg"].to_numpy(),
                                transits["dec_deg"].to_numpy(), location)
    return seen.utc.jd


def sample_windows(windows: pd.DataFrame, step_min: float = STEP_MIN):
    """Flat sample grid (row, jd_utc) covering each row's padded window."""
    lo, hi = window_bounds(windows)
    return intervals.sample_grid(lo, hi, step_min / MINUTES_PER_DAY)


def constraint_margin_deg(windows: pd.DataFrame, row, jd_utc, site: Site, constraints: Constraints) -> np.ndarray:
    """Smallest margin (degrees) by which each sample meets the constraints; >= 0 is observable."""
    location = earth_location(site.latitude_deg, site.longitude_deg, site.elevation_m)
    times = Time(jd_utc, format="jd", scale="utc")
    ra, dec = windows["ra_deg"].to_numpy()[row], windows["dec_deg"].to_numpy()[row]
    margin = constraints.sun_altitude_deg - sky.sun_altitude_deg(times, location)
    alt, az = sky.target_altaz_deg(ra, dec, times, location, site.air_pressure_hpa, site.temperature_c)
    margin = np.minimum(margin, alt - constraints.min_altitude_deg)
    facility = site.facility
    if facility.limits_sky_position:
        ha, dec_of_date = sky.target_hadec_deg(ra, dec, times, location)
        margin = np.minimum(margin, facility.margin_deg(alt, az, ha, dec_of_date))
    if constraints.moon_sep_deg > 0 or facility.moon_table:
        limit = facility.moon_limit_deg(sky.moon_illumination(times), constraints.moon_sep_deg)
        # the limit holds only while the Moon's centre is above the horizon (geometric)
        moon_margin = np.maximum(sky.moon_separation_deg(ra, dec, times, location) - limit,
                                 -sky.moon_altitude_deg(times, location))
        margin = np.minimum(margin, moon_margin)
    return margin


def observable_intervals(windows: pd.DataFrame, site: Site, constraints: Constraints):
    """Flat interval set (row, start, end), JD UTC, of observable time inside each window."""
    if windows.empty:
        empty = np.array([], dtype=float)
        return np.array([], dtype=int), empty, empty
    row, jd = sample_windows(windows)
    with erfa_astrom.erfa_astrom.set(erfa_astrom.ErfaAstromInterpolator(300 * u.s)):
        margin = constraint_margin_deg(windows, row, jd, site, constraints)
    return intervals.from_samples(row, jd, margin)


def conditions_at_mid(windows: pd.DataFrame, site: Site) -> pd.DataFrame:
    """Target altitude (apparent above the horizon, geometric below) and airmass, Sun altitude,
    Moon separation, illumination and altitude at mid-transit, and the meridian crossing nearest
    it (astropy hour angle)."""
    location = earth_location(site.latitude_deg, site.longitude_deg, site.elevation_m)
    times = Time(windows[schema.MID_JD_UTC].to_numpy(), format="jd", scale="utc")
    ra, dec = windows["ra_deg"].to_numpy(), windows["dec_deg"].to_numpy()
    apparent, _ = sky.target_altaz_deg(ra, dec, times, location, site.air_pressure_hpa, site.temperature_c)
    geometric, _ = sky.target_altaz_deg(ra, dec, times, location)
    ha_deg, _ = sky.target_hadec_deg(ra, dec, times, location)
    return pd.DataFrame({
        "alt_mid_deg": np.where(geometric >= 0.0, apparent, geometric),
        "airmass_mid": sky.airmass_kasten_young(geometric),
        "sun_alt_mid_deg": sky.sun_altitude_deg(times, location),
        "moon_sep_deg": sky.moon_separation_deg(ra, dec, times, location),
        "moon_illumination": sky.moon_illumination(times),
        "moon_alt_mid_deg": sky.moon_altitude_deg(times, location),
        schema.MERIDIAN_JD_UTC: times.jd - ha_deg / SIDEREAL_DEG_PER_DAY,
    }, index=windows.index)


def evaluate(windows: pd.DataFrame, site: Site, constraints: Constraints, timed: np.ndarray):
    """Observable intervals of the `timed` rows, conditions at mid of all rows, notes (the
    `vigil.engines.protocol.Engine` interface)."""
    return evaluate_in_two_steps(observable_intervals, conditions_at_mid, windows, site, constraints, timed,
                                 ground_notes(windows, site, constraints))
