"""PNG chart of when an observatory in space can point at each target over whole years
(matplotlib, Agg canvas: no display needed)."""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
from astropy.time import Time
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from vigil.engines import space
from vigil.errors import InputError
from vigil.export.files import write_atomic
from vigil.sites import Site

ROW_HEIGHT_IN = 0.35
BAR_COLOR = "tab:blue"
BLACKOUT_COLOR = "0.6"


def _decimal_year(jd_utc) -> np.ndarray:
    return np.atleast_1d(Time(jd_utc, format="jd", scale="utc").decimalyear)


def _year_list(years) -> list[int]:
    chosen = sorted({int(y) for y in years})
    if not chosen:
        raise InputError("years: expected at least one calendar year")
    return chosen


def annual_visibility_plot(targets: pd.DataFrame, site: Site, years, path) -> None:
    """One row per target (columns name, ra_deg, dec_deg, ICRS degrees): bars where the target
    lies inside the site's field of regard over the calendar years `years` (whole years, UTC,
    from the first to the last), blackouts shaded. Interruptions are too short to show."""
    if site.space is None:
        raise InputError(f"site {site.name!r}: the annual visibility chart is for sites of kind = \"space\"")
    if targets.empty:
        raise InputError("targets: expected at least one target for the annual visibility chart")
    chosen = _year_list(years)
    span = Time([f"{chosen[0]:04d}-01-01", f"{chosen[-1] + 1:04d}-01-01"], scale="utc")
    lo, hi = span.jd
    figure = Figure(figsize=(max(6.0, 2.0 + 2.5 * len(chosen)), 1.5 + ROW_HEIGHT_IN * len(targets)))
    axes = figure.add_subplot()
    for position, target in enumerate(targets.itertuples(index=False)):
        starts, ends = space.field_of_regard_jd_utc(float(target.ra_deg), float(target.dec_deg), site.space, lo, hi)
        first = _decimal_year(starts) if starts.size else starts
        last = _decimal_year(ends) if ends.size else ends
        axes.broken_barh(list(zip(first, last - first)), (position - 0.35, 0.7), color=BAR_COLOR)
    for blackout_start, blackout_end in site.space.blackouts_jd_utc:
        if blackout_end > lo and blackout_start < hi:
            shown = _decimal_year([max(blackout_start, lo), min(blackout_end, hi)])
            axes.axvspan(shown[0], shown[1], color=BLACKOUT_COLOR, alpha=0.5, linewidth=0)
    axes.set_yticks(range(len(targets)), list(targets["name"]), fontsize=8)
    axes.set_ylim(len(targets) - 0.5, -0.5)
    axes.set_xlim(chosen[0], chosen[-1] + 1)
    axes.set_xticks(range(chosen[0], chosen[-1] + 2))
    months = Time([f"{y:04d}-{m:02d}-01" for y in range(chosen[0], chosen[-1] + 1) for m in range(1, 13)], scale="utc")
    axes.set_xticks(_decimal_year(months.jd), minor=True)
    axes.grid(axis="x", alpha=0.3)
    axes.set_xlabel("year (UTC)" + ("; grey: blackouts" if site.space.blackouts_jd_utc else ""))
    axes.set_title(f"{site.name}: targets {site.space.sun_angle_min_deg:g}–{site.space.sun_angle_max_deg:g}° "
                   "from the Sun", fontsize=10)
    figure.tight_layout()
    FigureCanvasAgg(figure)
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=110, metadata={"Software": None})
    write_atomic(path, buffer.getvalue())
