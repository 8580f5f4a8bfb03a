"""Observing constraints and the coverage of each transit window.

A visibility engine turns a site's transits into the intervals during which the target is
observable inside each padded window; this module owns what the engines share: the
constraints, the padding, and the classification of each transit from those intervals.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np
import pandas as pd

from vigil import intervals
from vigil.ephemeris.staleness import stale_flags
from vigil.errors import InputError
from vigil.schema import COVERAGE_CLASSES
from vigil.sky import TWILIGHT_SUN_ALT_DEG

HOURS_PER_DAY = 24.0


@dataclass(frozen=True)
class Constraints:
    """What makes a moment observable at a site, and how wide each window is.

    min_altitude_deg: lowest apparent target altitude; twilight: civil, nautical or
    astronomical (Sun's centre below -6, -12, -18 deg); baseline_h: out-of-transit time wanted
    on each side; sigma_k: pad each side by k times the mid-time's 1-sigma (0 disables);
    moon_sep_deg: least Moon-target angle (0 disables).
    """

    min_altitude_deg: float = 30.0
    twilight: str = "astronomical"
    baseline_h: float = 1.0
    sigma_k: float = 1.0
    moon_sep_deg: float = 0.0

    def __post_init__(self):
        if self.twilight not in TWILIGHT_SUN_ALT_DEG:
            raise InputError(f"twilight: expected civil, nautical or astronomical, got {self.twilight!r}")
        _check_range("min_altitude_deg", self.min_altitude_deg, -5.0, 89.0, "degrees")
        _check_range("baseline_h", self.baseline_h, 0.0, 48.0, "hours")
        _check_range("sigma_k", self.sigma_k, 0.0, 10.0, "(a multiple of sigma)")
        _check_range("moon_sep_deg", self.moon_sep_deg, 0.0, 180.0, "degrees")

    @property
    def sun_altitude_deg(self) -> float:
        return TWILIGHT_SUN_ALT_DEG[self.twilight]


def _check_range(name: str, value, low: float, high: float, unit: str) -> None:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not low <= value <= high:
        raise InputError(f"{name}: expected a number from {low:g} to {high:g} {unit}, got {value!r}")


def resolve_constraints(site_defaults: dict, overrides: dict) -> Constraints:
    """Constraints for one site: command-line overrides, then the site's defaults, then built-ins."""
    names = {f.name for f in fields(Constraints)}
    chosen = {k: v for k, v in site_defaults.items() if k in names}
    chosen.update({k: v for k, v in overrides.items() if k in names and v is not None})
    return Constraints(**chosen)


def pad_windows(transits: pd.DataFrame, constraints: Constraints) -> pd.DataFrame:
    """Add ingress, egress and the padded window (JD UTC) around each site-time mid-transit."""
    half = transits["duration_h"] / (2 * HOURS_PER_DAY)
    pad = constraints.baseline_h / HOURS_PER_DAY + constraints.sigma_k * transits["mid_sigma_d"]
    out = transits.copy()
    out["ingress_jd_utc"] = out["mid_jd_utc"] - half
    out["egress_jd_utc"] = out["mid_jd_utc"] + half
    out["window_start_jd_utc"] = out["ingress_jd_utc"] - pad
    out["window_end_jd_utc"] = out["egress_jd_utc"] + pad
    out["stale"] = stale_flags(out["mid_sigma_d"], out["duration_h"], constraints.sigma_k, constraints.baseline_h)
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
    lo, hi = windows["window_start_jd_utc"].to_numpy(), windows["window_end_jd_utc"].to_numpy()
    ingress, egress = windows["ingress_jd_utc"].to_numpy(), windows["egress_jd_utc"].to_numpy()
    mid = windows["mid_jd_utc"].to_numpy()
    ksig = sigma_k * windows["mid_sigma_d"].to_numpy()
    fraction = np.clip(intervals.overlap_per_row(row, start, end, ingress, egress, n) / (egress - ingress), 0.0, 1.0)
    full = intervals.any_covers(row, start, end, lo, hi, n)
    pre = intervals.any_covers(row, start, end, lo, mid + ksig, n)
    post = intervals.any_covers(row, start, end, mid - ksig, hi, n)
    codes = np.select([full, pre, post, fraction > 0], [0, 1, 2, 3], 4)  # positions in COVERAGE_CLASSES
    coverage = pd.Categorical.from_codes(codes, categories=COVERAGE_CLASSES)
    out = windows.copy()
    out["coverage"] = coverage
    out["observable_fraction"] = np.where(full, 1.0, fraction)
    out["observable_start_jd_utc"], out["observable_end_jd_utc"] = _main_stretch(observable, ingress, egress, n)
    return out


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
