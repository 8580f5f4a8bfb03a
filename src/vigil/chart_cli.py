"""`vigil chart ...`: the pictures an observer reads before a night or a semester (PNG).

night: altitude of chosen transit windows against UTC and local time; timeline: every window
per site and target over a month or semester, clashes marked; sigma: how each ephemeris's
timing uncertainty grows against the stale threshold.
"""

from __future__ import annotations

from pathlib import Path
from typing import Optional

import typer

from vigil.cli_options import (BASELINE_OPTION, FORCE_OPTION, SIGMA_OPTION, SITE_OPTION, SITES_OPTION,
                               WindowOptions, constraint_options, with_window_options)
from vigil.cli_support import out, setup_logging, user_errors
from vigil.export.files import OutputTransaction
from vigil.errors import InputError
from vigil.inputs import as_time
from vigil.export.palette import save_png
from vigil import api
from vigil.constraints import resolve_constraints

chart_app = typer.Typer(help="Draw charts (PNG): a transit night, a timeline of windows, timing uncertainty growth. "
                             "Times UTC (the night chart also in site local time), angles in degrees.",
                        no_args_is_help=True, rich_markup_mode=None)
TARGETS_ARG = typer.Argument(..., metavar="TARGETS.csv", help="Targets CSV (as for vigil windows).")
OUT_OPTION = typer.Option(..., "--out", metavar="FILE.png", help="Write the chart here (PNG).")
START_OPTION = typer.Option(..., "--start", metavar="DATE", help="First date, UTC (e.g. 2027-03-01).")


def _windows(targets_file: Path, sites_file: Path, site, start: str, end: str, options: WindowOptions,
             include_all: bool):
    """The windows (internal JD columns, with each target's coordinates) and sites, through the
    windows command's own path so that both agree."""
    from vigil.cli import _run_windows
    from vigil.export.night_chart import with_coordinates

    run = _run_windows(targets_file, sites_file, site, start, end, options.constraints, include_all, None, None,
                       coverage=options.coverage, min_fraction=options.min_fraction, keep_all=True)
    return with_coordinates(run.windows, run.targets), run.sites


@chart_app.command("night")
@with_window_options
def night(
    targets_file: Path = TARGETS_ARG,
    sites_file: Path = SITES_OPTION,
    target: str = typer.Option(..., "--target", metavar="NAME", help="Target to chart."),
    site: Optional[list[str]] = SITE_OPTION,
    start: str = START_OPTION,
    end: Optional[str] = typer.Option(None, "--end", metavar="DATE", help="Last date, UTC, included [default --start]."),
    count: int = typer.Option(3, "--count", metavar="N", min=1, max=12, help="Chart the first N windows [default 3]."),
    out_path: Path = OUT_OPTION,
    window_options: WindowOptions = WindowOptions(),
    include_all: bool = typer.Option(False, "--all", help="Chart unobservable transits too."),
    force: bool = FORCE_OPTION,
):
    """Altitude of a target's transit windows through the night, one panel per window: twilight
    shading, ingress/mid/egress, baseline and timing band, altitude limit and mask, Moon, meridian."""
    from vigil.export.night_chart import night_chart

    setup_logging()
    with user_errors():
        OutputTransaction([out_path], force=force)  # the output checks; the write itself is atomic
        windows, sites = _windows(targets_file, sites_file, site, start, end or start, window_options, include_all)
        ground = windows["site"].map(lambda s: sites[s].kind == "ground").astype(bool)
        mine = windows[(windows["target"] == target) & ground]
        if mine.empty:
            raise InputError(f"no {'' if include_all else 'observable '}windows of {target!r} at a ground site from "
                             f"{start} to {end or start}")
        overrides = api.constraint_overrides(window_options.constraints)
        constraints = {n: resolve_constraints(s.defaults, overrides) for n, s in sites.items()}
        save_png(night_chart(mine.head(count), sites, constraints), out_path)
    out.print(f"charted {min(count, len(mine))} of {len(mine)} windows; wrote {out_path}")


@chart_app.command("timeline")
@with_window_options
def timeline(
    targets_file: Path = TARGETS_ARG,
    sites_file: Path = SITES_OPTION,
    site: Optional[list[str]] = SITE_OPTION,
    start: str = START_OPTION,
    end: str = typer.Option(..., "--end", metavar="DATE", help="Last date, UTC, included (a month or a semester)."),
    out_path: Path = OUT_OPTION,
    window_options: WindowOptions = WindowOptions(),
    force: bool = FORCE_OPTION,
):
    """Every window per site over a span, one row per target, coloured by coverage; windows of
    different targets that overlap at one site (clashes) outlined and marked."""
    from vigil.cli import _inclusive_end
    from vigil.export.timeline_chart import timeline_chart

    setup_logging()
    with user_errors():
        OutputTransaction([out_path], force=force)  # the output checks; the write itself is atomic
        windows, _ = _windows(targets_file, sites_file, site, start, end, window_options, False)
        bars = windows.rename(columns={"window_start_jd_utc": "start_jd_utc", "window_end_jd_utc": "end_jd_utc"})
        figure = timeline_chart(bars, as_time(start, "--start").utc.jd, as_time(_inclusive_end(end), "--end").utc.jd,
                                f"Transit windows {start} to {end} (bars: padded windows)")
        save_png(figure, out_path)
    out.print(f"{len(windows)} windows; wrote {out_path}")


@chart_app.command("sigma")
def sigma_growth(
    targets_file: Path = TARGETS_ARG,
    start: str = START_OPTION,
    years: float = typer.Option(10.0, "--years", metavar="N", min=0.1, max=100.0, help="Span in years [default 10]."),
    out_path: Path = OUT_OPTION,
    baseline: Optional[float] = BASELINE_OPTION,
    sigma: Optional[float] = SIGMA_OPTION,
    force: bool = FORCE_OPTION,
):
    """Each target's 1-sigma mid-time uncertainty over the years against its stale threshold."""
    from vigil.export.sigma_chart import sigma_chart

    setup_logging()
    with user_errors():
        overrides = api.constraint_overrides(constraint_options(baseline=baseline, sigma=sigma))
        OutputTransaction([out_path], force=force)  # the output checks; the write itself is atomic
        targets = api.read_targets(targets_file)
        save_png(sigma_chart(targets, resolve_constraints({}, overrides), as_time(start, "--start"), years), out_path)
    out.print(f"wrote {out_path}")
