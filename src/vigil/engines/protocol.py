"""The interface every visibility engine implements.

An engine is a module with the two functions of `Engine`: the mid-time of each transit as
seen at a site, and, for padded windows, the observable intervals inside each window with the
conditions at mid-transit. `vigil.engines.engine_for` picks one for a site.
"""

from __future__ import annotations

from typing import Callable, Protocol

import numpy as np
import pandas as pd

from vigil.constraints import Constraints
from vigil.notes import Note
from vigil.sites import Site

# A flat interval set: (row, start, end) arrays, JD UTC (see vigil.intervals).
Intervals = tuple[np.ndarray, np.ndarray, np.ndarray]
# conditions_of(rows): the conditions at mid-transit of the windows numbered by `rows` (columns
# alt_mid_deg, airmass_mid, sun_alt_mid_deg, moon_sep_deg, moon_illumination, moon_alt_mid_deg,
# meridian_jd_utc; index 0, 1, ...).
ConditionsOf = Callable[[np.ndarray], pd.DataFrame]


class Engine(Protocol):
    """What the windows stage asks of a visibility engine (modules implement it)."""

    def site_mid_jd_utc(self, transits: pd.DataFrame, site: Site) -> np.ndarray:
        """JD UTC at which each transit's mid-time (column mid_bjd_tdb, BJD_TDB) is seen at the site."""

    def evaluate(self, windows: pd.DataFrame, site: Site, constraints: Constraints,
                 timed: np.ndarray) -> tuple[Intervals, ConditionsOf, tuple[Note, ...]]:
        """Observable intervals inside the windows of the rows numbered by `timed` (row numbers
        of `windows`), a `ConditionsOf` for the rows of `windows` (asked only for the rows the
        caller keeps, so an engine can skip the rest), and the notes for the user on these
        windows (`vigil.notes`)."""


def evaluate_in_two_steps(observable_intervals: Callable, conditions_at_mid: Callable, windows: pd.DataFrame,
                          site: Site, constraints: Constraints, timed: np.ndarray,
                          notes: tuple[Note, ...]) -> tuple[Intervals, ConditionsOf, tuple[Note, ...]]:
    """`Engine.evaluate` for an engine whose observable intervals and conditions at mid share
    no work: each is computed by its own function; `notes` are handed back with them."""
    row, start, end = observable_intervals(windows[timed].reset_index(drop=True), site, constraints)
    return (np.flatnonzero(timed)[row], start, end), lambda rows: conditions_at_mid(
        windows.take(rows).reset_index(drop=True), site), notes
