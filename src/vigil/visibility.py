"""The padding and the coverage of each transit window.

A visibility engine (vigil.engines) turns a site's transits into the intervals during which
the target is observable inside each padded window; this module owns what the engines share:
the padding before, and the classification of each transit from those intervals after.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from vigil import intervals, schema
from vigil.constraints import Constraints
from vigil.ephemeris.staleness import stale_flags
from vigil.errors import InputError
from vigil.schema import COVERAGE_CLASSES
from vigil.time_units import HOURS_PER_DAY

def window_bounds(windows: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """(start, end) of each padded window, JD UTC, as float arrays."""
    return (windows[schema.WINDOW_START_JD_UTC].to_numpy(dtype=float),
            windows[schema.WINDOW_END_JD_UTC].to_numpy(dtype=float))


def pad_windows(transits: pd.DataFrame, constraints: Constraints) -> pd.DataFrame:
    """Add ingress, egress and the padded window (JD UTC) around each site-time mid-transit."""
    half = transits["duration_h"] / (2 * HOURS_PER_DAY)
    pad = constraints.baseline_h / HOURS_PER_DAY + constraints.sigma_k * transits[schema.MID_SIGMA_D]
    out = transits.copy(deep=False)  # copy-on-write: the new columns leave the input alone
    out[schema.INGRESS_JD_UTC] = out[schema.MID_JD_UTC] - half
    out[schema.EGRESS_JD_UTC] = out[schema.MID_JD_UTC] + half
    out[schema.WINDOW_START_JD_UTC] = out[schema.INGRESS_JD_UTC] - pad
    out[schema.WINDOW_END_JD_UTC] = out[schema.EGRESS_JD_UTC] + pad
    out["stale"] = stale_flags(out[schema.MID_SIGMA_D], out["duration_h"], constraints.sigma_k, constraints.baseline_h)
    return out


def classify(windows: pd.DataFrame, observable, sigma_k: float) -> pd.DataFrame:
    """Coverage class and observable fraction from each row's observable intervals.

    `observable` is a flat interval set (row, start, end) in JD UTC, clipped to the windows.
    full: one stretch holds the whole padded window. ingress: one stretch holds the window's
    start through mid + k sigma (pre-transit baseline, ingress and at least half the transit
    for any mid-time within k sigma), but not the whole window. egress: the mirror case.
    partial: some in-transit time observable otherwise. none: no in-transit time observable.
    """
    row, start, end = observable
    n = len(windows)
    lo, hi = window_bounds(windows)
    ingress, egress = windows[schema.INGRESS_JD_UTC].to_numpy(), windows[schema.EGRESS_JD_UTC].to_numpy()
    mid = windows[schema.MID_JD_UTC].to_numpy()
    ksig = sigma_k * windows[schema.MID_SIGMA_D].to_numpy()
    fraction = np.clip(intervals.overlap_per_row(row, start, end, ingress, egress, n) / (egress - ingress), 0.0, 1.0)
    full = intervals.any_covers(row, start, end, lo, hi, n)
    pre = intervals.any_covers(row, start, end, lo, mid + ksig, n)
    post = intervals.any_covers(row, start, end, mid - ksig, hi, n)
    codes = np.select([full, pre, post, fraction > 0], [0, 1, 2, 3], 4)  # positions in COVERAGE_CLASSES
    coverage = pd.Categorical.from_codes(codes, categories=COVERAGE_CLASSES)
    out = windows.copy(deep=False)  # copy-on-write: the new columns leave the input alone
    out["coverage"] = coverage
    out[schema.OBSERVABLE_FRACTION] = np.where(full, 1.0, fraction)
    stretch = _main_stretch(observable, ingress, egress, n)
    out[schema.OBSERVABLE_START_JD_UTC], out[schema.OBSERVABLE_END_JD_UTC] = stretch
    return out


def meridian_in_transit(windows: pd.DataFrame) -> np.ndarray:
    """True where the meridian crossing (JD UTC) falls between ingress and egress (False where
    it is NaN, as in space).

    Examples
    --------
    >>> meridian_in_transit(pd.DataFrame({"ingress_jd_utc": [1.0, 1.0], "egress_jd_utc": [1.1, 1.1],
    ...                                   "meridian_jd_utc": [1.05, 1.2]})).tolist()
    [True, False]
    """
    meridian = windows[schema.MERIDIAN_JD_UTC].to_numpy(dtype=float)
    return (meridian >= windows[schema.INGRESS_JD_UTC].to_numpy(dtype=float)) & (
        meridian <= windows[schema.EGRESS_JD_UTC].to_numpy(dtype=float))


def _main_stretch(observable, ingress, egress, n: int):
    """Start and end of each row's stretch with the most in-transit time (NaN where none)."""
    row, start, end = observable
    inside = np.clip(np.minimum(end, egress[row]) - np.maximum(start, ingress[row]), 0.0, None)
    best_start, best_end = np.full(n, np.nan), np.full(n, np.nan)
    order = np.lexsort((inside, row))  # last entry of each row is its longest
    keep = order[np.r_[row[order][1:] != row[order][:-1], True]] if order.size else order
    keep = keep[inside[keep] > 0]
    best_start[row[keep]], best_end[row[keep]] = start[keep], end[keep]
    return best_start, best_end
