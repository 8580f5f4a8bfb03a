"""How each target's predicted mid-time uncertainty grows, against the threshold past which its
windows are flagged stale (K sigma above a quarter of the duration or above the baseline)."""

from __future__ import annotations

import math

import numpy as np
from astropy.time import Time
from matplotlib.figure import Figure
from matplotlib.ticker import NullFormatter, ScalarFormatter

from vigil.constraints import Constraints
from vigil.ephemeris.models import epochs_between, target_ephemerides
from vigil.ephemeris.staleness import DURATION_FRACTION
from vigil.errors import InputError
from vigil.export import palette
from vigil.time_units import DAYS_PER_JULIAN_YEAR, MINUTES_PER_DAY

COLUMNS = 3


def stale_sigma_min(duration_h: float, constraints: Constraints) -> float:
    """The 1-sigma mid-time uncertainty (minutes) past which a window is stale; inf without padding.

    Example: ``stale_sigma_min(2.0, Constraints(sigma_k=2.0, baseline_h=1.0))`` is 15.0.
    """
    if constraints.sigma_k == 0:
        return math.inf
    limit_h = min(DURATION_FRACTION * duration_h, constraints.baseline_h)
    return 60.0 * limit_h / constraints.sigma_k


def sigma_chart(targets: pd.DataFrame, constraints: Constraints, start: Time, years: float) -> Figure:
    """Small multiples, one per target (targets table), of sigma_T (minutes, log scale) from
    `start` over `years`, with the stale threshold and the first stale date.

    Example: ``sigma_chart(read_targets("targets.csv"), Constraints(), Time("2027-01-01"), 10)``.
    """
    if targets.empty:
        raise InputError("targets: expected at least one target for the uncertainty chart")
    rows = math.ceil(len(targets) / COLUMNS)
    figure = Figure(figsize=(11.0, 2.6 * rows + 0.6))
    axes_list = figure.subplots(rows, COLUMNS, sharex=True, squeeze=False).ravel()
    lo = start.tdb.jd
    hi = lo + DAYS_PER_JULIAN_YEAR * years
    for axes, target, model in zip(axes_list, targets.itertuples(index=False), target_ephemerides(targets)):
        epochs = epochs_between(model, lo, hi)
        sigma_min = MINUTES_PER_DAY * model.mid_sigma_d(epochs)
        year = start.utc.decimalyear + (model.mid_bjd_tdb(epochs) - lo) / DAYS_PER_JULIAN_YEAR
        axes.plot(year, sigma_min, color=palette.BLUE, linewidth=1.8)
        threshold = stale_sigma_min(target.duration_h, constraints)
        axes.axhline(threshold, color=palette.VERMILLION, linestyle="--", linewidth=1.2)
        stale = np.flatnonzero(sigma_min > threshold)
        note = ("not stale" if not stale.size else "stale already" if stale[0] == 0
                else f"stale from {Time(year[stale[0]], format='decimalyear').utc.iso[:10]}")
        if stale.size:
            axes.axvline(year[stale[0]], color=palette.VERMILLION, linewidth=0.8)
        axes.set_yscale("log")
        axes.yaxis.set_major_formatter(ScalarFormatter())
        axes.yaxis.set_minor_formatter(NullFormatter())
        axes.set_title(f"{target.name}: {note}", fontsize=8.5)
        axes.grid(alpha=0.3, which="both")
    for axes in axes_list[len(targets):]:
        axes.set_visible(False)
    for axes in axes_list[::COLUMNS]:
        axes.set_ylabel("1σ mid-time (min)")
    for axes in axes_list[-COLUMNS:]:
        axes.set_xlabel("year (UTC)")
    figure.suptitle(f"Timing uncertainty against the stale threshold (dashed: Kσ = min({DURATION_FRACTION:g} × "
                    f"duration, baseline {constraints.baseline_h:g} h), K = {constraints.sigma_k:g})", fontsize=9.5)
    figure.tight_layout()
    return figure
