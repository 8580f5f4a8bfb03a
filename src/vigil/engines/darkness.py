"""Darkness over the span of a site's windows, and the notes both ground engines give on it.

The dark intervals come from `local_sky.dark_intervals` over the windows' span rounded out to
whole days plus a margin (chunks of a catalog share their span, so the result is cached per
process; rounding changes no night inside the span).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
import pandas as pd

from vigil import local_sky, notes
from vigil.constraints import Constraints
from vigil.notes import Note
from vigil.sites import Site
from vigil.timescales import beyond_earth_orientation_note
from vigil.visibility import window_bounds

DARK_MARGIN_D = 1.0


@lru_cache(maxsize=64)
def _dark_intervals(lat_deg, lon_deg, elev_m, jd_utc_start, jd_utc_end, sun_alt_deg):
    """local_sky.dark_intervals, kept for repeated calls; read-only arrays."""
    starts, ends = local_sky.dark_intervals(lat_deg, lon_deg, elev_m, jd_utc_start, jd_utc_end, sun_alt_deg)
    starts.setflags(write=False)
    ends.setflags(write=False)
    return starts, ends


def span_dark_intervals(windows: pd.DataFrame, site: Site, constraints: Constraints) -> tuple[np.ndarray, np.ndarray]:
    """(starts, ends), JD UTC: when the Sun is below the twilight altitude at the site, over the
    span of the (non-empty) windows table, rounded out to days with a margin."""
    lo, hi = window_bounds(windows)
    return _dark_intervals(site.latitude_deg, site.longitude_deg, site.elevation_m,
                           float(np.floor(lo.min()) - DARK_MARGIN_D), float(np.ceil(hi.max()) + DARK_MARGIN_D),
                           constraints.sun_altitude_deg)


def ground_notes(windows: pd.DataFrame, site: Site, constraints: Constraints) -> tuple[Note, ...]:
    """The notes on a ground site's windows: dates beyond the Earth-orientation predictions, and
    no darkness at all over their span."""
    if windows.empty:
        return ()
    starts, ends = window_bounds(windows)
    lo, hi = float(starts.min()), float(ends.max())
    found = beyond_earth_orientation_note(hi)
    if span_dark_intervals(windows, site, constraints)[0].size == 0:
        found += (notes.no_darkness(site.name, constraints.twilight, constraints.sun_altitude_deg, lo, hi),)
    return found
