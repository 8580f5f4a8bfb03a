"""vigil's command line: thin wrappers that parse options, call the stages and print."""

from __future__ import annotations

import math
import sys
from contextlib import ExitStack
from importlib import resources
from pathlib import Path
from typing import NamedTuple, Optional

import astropy.units as u
import pandas as pd
import typer
from rich.text import Text
from typer.core import TyperCommand

from vigil import __version__, api, notes
from vigil.campaign.outcome import CampaignOutcome
from vigil.cli_support import LazyProgress, log, out, setup_logging, user_errors
from vigil.errors import InputError
from vigil.inputs import as_time
from vigil.export.calendar import SAFETY_NOTE, run_stamp, windows_ics_writer
from vigil.export.files import OutputTransaction
from vigil.export.table import iso_utc, write_csv
from vigil.export.night_chart import with_coordinates
from vigil.export.html_report import campaign_sections, html_page, windows_sections, write_html
from vigil.export.terminal_tables import UPCOMING_ROWS, compact_table, windows_table
from vigil.export.windows_csv import windows_csv_writer
from vigil.chart_cli import chart_app
from vigil.target_source import CatalogueOptions
from vigil.journal_cli import journal_app
from vigil.names import clean_name
from vigil.refit_cli import run_refit
from vigil.timescales import FIRST_PLAN_YEAR, LAST_PLAN_YEAR
from vigil.tally import add_tallies, coverage_tally
from vigil.window_filter import filter_windows, parse_coverage

app = typer.Typer(help="Plan transit observations: which transits you can observe from your sites, "
                       "how uncertain their times are, what a multi-year campaign collects and when the stacked "
                       "spectrum reaches your goal. Angles are in degrees, durations in hours, dates and times in "
                       "UTC (mid-times also in BJD_TDB); site longitudes are east positive.",
                  no_args_is_help=True, add_completion=False, rich_markup_mode=None)
class _Command(TyperCommand):
    """Usage lines show arguments as TARGETS.csv, not {TARGETS.csv}."""

    def collect_usage_pieces(self, ctx) -> list[str]:
        return [p[1:-1] if p.startswith("{") and p.endswith("}") else p for p in super().collect_usage_pieces(ctx)]


def _version(value: bool) -> None:
    if value:
        out.print(f"vigil {__version__}", highlight=False)
        raise typer.Exit()


@app.callback()
def _main(version: bool = typer.Option(False, "--version", callback=_version, is_eager=True,
                                       help="Print vigil's version and exit.")):
    """Plan transit observations (see `vigil COMMAND --help`)."""


COUNTED = ("full", "ingress", "egress", "partial")


def _print_summary(tally, title: str) -> None:
    """Print a coverage tally (vigil.tally) as a table."""
    if tally.empty:
        out.print(f"{title}: no observable transits.")
        return
    table = compact_table(title, [("target", "left"), ("site", "left"), *((c, "right") for c in COUNTED),
                                  ("next full window, UTC", "left")])
    for row in tally.itertuples(index=False):
        first = "-" if pd.isna(row.first_full_utc) else row.first_full_utc.strftime("%Y-%m-%d %H:%M")
        table.add_row(row.target, row.site, *(str(getattr(row, c)) for c in COUNTED),
                      first)
    out.print(table)
    out.print(Text(SAFETY_NOTE, style="dim"))


HTML_HELP = "Also write a self-contained HTML plan here (one file, no network: charts embedded)."
COVERAGE_HELP = ("List only these coverage classes, comma-separated (full, ingress, egress, partial, none), in "
                 "every output [default all].")
MIN_FRACTION_HELP = "List only windows with at least this fraction (0-1) of the transit observable, in every output."
JOBS_HELP = ("Worker processes for the windows computation (the targets and the span are split into chunks); "
             "with --scheduler local, the cluster's workers; at least 1 [default 1].")
SCHEDULER_HELP = ("Run the windows computation on a dask cluster (optional extra vigil[dask]): 'local' starts "
                  "one on this machine, tcp://HOST:PORT joins a running scheduler and its workers.")
CHUNK_DIR_HELP = ("With --scheduler: folder where workers leave their results as Parquet files; workers on "
                  "other machines must see it too [default: a temporary folder here].")
EXACT_HELP = ("Use the exact astropy engine (samples every 5 min; about 100x slower) instead of the fast "
              "analytic one (edges within about a minute of it).")


FORMAT_OPTION = typer.Option(None, "--format", metavar="FORMAT", help="Targets file format: csv, ecsv, votable or "
                             "ipac [default by extension: .csv, .ecsv, .xml/.vot, .tbl]; any case.")
COLUMNS_OPTION = typer.Option(None, "--columns", metavar="MAP.toml", help="Column mapping: which column of your "
                              "catalogue holds each vigil field, in which unit (see examples/).")
STRICT_OPTION = typer.Option(False, "--strict", help="Refuse a targets file with a row that lacks a required value "
                             "(otherwise such rows are left out with a warning).")


def _run_windows(targets_file: Path, sites_file: Path, site_names, start: str, end: str, constraints: dict,
                 include_all: bool, csv_path: Path | None, ics_path: Path | None, exact: bool = False,
                 event: str = "transit", local_time: bool = False, jobs: int = 1, scheduler: str | None = None,
                 chunk_dir: Path | None = None, catalogue: CatalogueOptions = CatalogueOptions(),
                 ephemeris_table: Path | None = None, extrapolate_table: bool = False, coverage: str | None = None,
                 min_fraction: float | None = None, keep_all: bool = False) -> "WindowsRun":
    """Plan through vigil.iter_windows, write the CSV and the calendar piece by piece; return
    the coverage tally, the sites and the windows kept: all of them with `keep_all`, else the
    first UPCOMING_ROWS."""
    api.constraint_overrides(constraints)  # option errors before any file is read
    chosen = parse_coverage(coverage)
    targets = api.read_targets(targets_file, format=catalogue.format, columns=catalogue.columns,
                               strict=catalogue.strict, ephemeris_table=ephemeris_table,
                               extrapolate_table=extrapolate_table)
    sites = api.read_sites(sites_file, [clean_name(n, "--site") for n in site_names] if site_names else None)
    _warn_ground_only_options(sites, constraints)
    tallies, kept, listed, found = [], [], [], []

    def noted(pieces):
        for piece in pieces:
            found.append(notes.of(piece))
            yield piece

    def tallied(pieces):
        for piece in pieces:
            piece = filter_windows(piece, chosen, min_fraction)
            tallies.append(coverage_tally(piece))
            listed.append(len(piece))
            if keep_all or sum(map(len, kept)) < UPCOMING_ROWS:
                kept.append(piece if keep_all else piece.head(UPCOMING_ROWS))
            yield piece

    timezones = {n: s.timezone for n, s in sites.items()}
    with LazyProgress("windows (chunks)") as progress, ExitStack() as files:
        writers = []  # finished in reverse order: the CSV, then the calendar (opened at its first piece)
        if ics_path is not None:
            writers.append(files.enter_context(windows_ics_writer(ics_path, timezones)))
        if csv_path is not None:
            writers.append(files.enter_context(windows_csv_writer(csv_path, timezones if local_time else None)))
        for piece in tallied(noted(api.iter_windows(targets, sites, start, _inclusive_end(end),
                                                    include_unobservable=include_all, event=event, exact=exact,
                                                    jobs=jobs, scheduler=scheduler, chunk_dir=chunk_dir,
                                                    on_progress=progress.advance, **constraints))):
            for add in writers:
                add(piece)
    notes.report(notes.merged(*found))
    return WindowsRun(add_tallies(tallies), pd.concat(kept, ignore_index=True), sites, sum(listed), targets)


class WindowsRun(NamedTuple):
    """What a windows run hands back: the coverage tally, the windows kept, the sites used, and
    how many windows were listed in all, the targets read."""

    tally: pd.DataFrame
    windows: pd.DataFrame
    sites: dict
    listed: int
    targets: pd.DataFrame


def _inclusive_end(text: str) -> str:
    """--end: a date alone is included whole (the span ends at 24:00 UTC of it); a time is exact."""
    if len(text.strip()) != 10:
        return text
    try:
        return (as_time(text, "--end") + 1 * u.day).utc.isot
    except InputError:
        return text  # api names the bad date


@app.command(cls=_Command)
def windows(
    context: typer.Context,
    targets_file: Path = typer.Argument(..., metavar="TARGETS.csv", help="Targets (CSV, ECSV, VOTable or IPAC): name, ra_deg, dec_deg (or ra/dec sexagesimal), "
                                        "t0_bjd_tdb, t0_err_d, period_d, period_err_d, duration_h."),
    sites_file: Path = typer.Option(..., "--sites", metavar="SITES.toml", help="Sites TOML with [sites.NAME] tables."),
    site: Optional[list[str]] = typer.Option(None, "--site", metavar="NAME", help="Site name to use (repeatable); default every site in the file."),
    start: str = typer.Option(..., "--start", metavar="DATE", help="First date, UTC (e.g. 2027-01-01)."),
    end: str = typer.Option(..., "--end", metavar="DATE", help="Last date, UTC, included whole (e.g. 2027-12-31); "
                            "a date with a time (2027-12-31T06:00) ends there."),
    csv_path: Optional[Path] = typer.Option(None, "--csv", metavar="FILE", help="Write the windows table here (CSV, times in UTC)."),
    ics_path: Optional[Path] = typer.Option(None, "--ics", metavar="FILE", help="Write the windows as an iCalendar file here."),
    min_altitude: Optional[float] = typer.Option(None, "--min-altitude", metavar="DEG", help="Lowest target altitude, degrees [default 30]."),
    twilight: Optional[str] = typer.Option(None, "--twilight", metavar="KIND", help="Darkness needed: civil, nautical or astronomical "
                                           "(Sun's centre below -6, -12 or -18 degrees) [default astronomical]."),
    baseline: Optional[float] = typer.Option(None, "--baseline", metavar="HOURS", help="Out-of-transit time wanted before ingress and after egress, hours [default 1]."),
    sigma: Optional[float] = typer.Option(None, "--sigma", metavar="K", help="Pad each side by K times the 1-sigma mid-time uncertainty; 0 disables [default 1]."),
    moon_sep: Optional[float] = typer.Option(None, "--moon-sep", metavar="DEG", help="Least Moon-target separation, degrees; 0 disables [default 0]."),
    coverage: Optional[str] = typer.Option(None, "--coverage", metavar="LIST", help=COVERAGE_HELP),
    min_fraction: Optional[float] = typer.Option(None, "--min-fraction", metavar="F", help=MIN_FRACTION_HELP),
    html_path: Optional[Path] = typer.Option(None, "--html", metavar="FILE", help=HTML_HELP),
    include_all: bool = typer.Option(False, "--all", help="List unobservable transits too (coverage 'none')."),
    force: bool = typer.Option(False, "--force", help="Replace existing --csv/--ics files (otherwise vigil refuses)."),
    exact: bool = typer.Option(False, "--exact", help=EXACT_HELP),
    event: str = typer.Option("transit", "--event", metavar="KIND", show_default=False,
                              help="transit, or occultation (secondary eclipse; uses the optional target columns "
                                   "eccentricity, omega_deg, inclination_deg) [default transit]."),
    local_time: bool = typer.Option(False, "--local-time", help="Add local civil times (each site's IANA timezone, "
                                    "with UTC offset) to the CSV."),
    jobs: int = typer.Option(1, "--jobs", metavar="N", show_default=False, help=JOBS_HELP),
    scheduler: Optional[str] = typer.Option(None, "--scheduler", metavar="ADDRESS", help=SCHEDULER_HELP),
    chunk_dir: Optional[Path] = typer.Option(None, "--chunk-dir", metavar="DIR", help=CHUNK_DIR_HELP),
    fmt: Optional[str] = FORMAT_OPTION,
    columns: Optional[Path] = COLUMNS_OPTION,
    strict: bool = STRICT_OPTION,
    ephemeris_table: Optional[Path] = typer.Option(None, "--ephemeris-table", metavar="TABLE.csv",
                                                   help="Predicted mid-times per epoch (target, epoch, mid_bjd_tdb, "
                                                        "mid_err_d) replacing the named targets' ephemerides."),
    extrapolate_table: bool = typer.Option(False, "--extrapolate-table", help="Beyond a table's span, continue it "
                                           "linearly (otherwise dates outside it are refused)."),
):
    """List the transits observable from your sites, with their windows, coverage and conditions.

    Site defaults in the TOML apply where an option is not given. Times are UTC; mid-times
    also in BJD_TDB. Longitudes in the sites file are east positive.
    """
    setup_logging()
    constraints = {"min_altitude": min_altitude, "twilight": twilight, "baseline": baseline, "sigma": sigma,
                   "moon_sep": moon_sep}
    with user_errors(context), ExitStack() as stack:
        if ics_path is not None:
            run_stamp()  # a malformed SOURCE_DATE_EPOCH is refused before any work
        outputs = OutputTransaction((csv_path, ics_path, html_path),
                                    (targets_file, sites_file, columns, ephemeris_table), force)
        stack.enter_context(outputs.committing())
        run = _run_windows(targets_file, sites_file, site, start, end, constraints, include_all, csv_path, ics_path,
                           exact, event.lower(), local_time, jobs, scheduler, chunk_dir,
                           CatalogueOptions(fmt, columns, strict), ephemeris_table, extrapolate_table, coverage,
                           min_fraction, keep_all=html_path is not None)
        if html_path is not None:
            write_html(html_path, html_page(f"Transit windows {start} to {end}",
                                            windows_sections(with_coordinates(run.windows, run.targets), run.sites,
                                                             api.constraint_overrides(constraints))))
    _print_summary(run.tally, f"Transit windows {start} to {end}")
    if csv_path is None and ics_path is None and html_path is None and len(run.windows):
        out.print(windows_table(run.windows, {n: s.timezone for n, s in run.sites.items()}, run.listed))
    for path in (csv_path, ics_path, html_path):
        if path is not None:
            out.print(f"wrote {path}")


def demo_file(name: str) -> Path:
    """Path of a file of the embedded demo scenario."""
    return Path(str(resources.files("vigil") / "data" / "demo" / name))


@app.command()
def demo(
    out_dir: Path = typer.Option(Path("vigil-demo"), "--out", metavar="DIR", help="Folder for the demo's outputs (vigil's own; files in it are replaced)."),
):
    """Run vigil on its embedded invented scenario: windows for 2027 at three sites, then a 30-year campaign."""
    setup_logging()
    files = [out_dir / "windows.csv", out_dir / "windows.ics", *(out_dir / name for name in CAMPAIGN_FILES),
             out_dir / "plan.html"]
    with user_errors(), OutputTransaction(files, force=True, create_folder=out_dir).committing():
        run = _run_windows(demo_file("targets.csv"), demo_file("sites.toml"), None, "2027-01-01", "2027-12-31", {},
                           False, out_dir / "windows.csv", out_dir / "windows.ics", keep_all=True)
        _print_summary(run.tally, "Demo: transit windows in 2027")
        spec, campaign_result, paths = _run_campaign(demo_file("campaign.toml"), None, out_dir)
        write_html(out_dir / "plan.html", html_page("vigil demo: windows of 2027 and a 30-year campaign",
                                                    [*windows_sections(with_coordinates(run.windows, run.targets), run.sites),
                                                     *campaign_sections(campaign_result.simulation, spec)]))
    _print_campaign(campaign_result, spec)
    names = ", ".join(p.name for p in [out_dir / "windows.csv", out_dir / "windows.ics", *paths, out_dir / "plan.html"])
    out.print(f"wrote into {out_dir}/: {names}")


CAMPAIGN_FILES = ("summary.csv", "scenarios.csv", "forecast.csv", "ledger.csv", "budget.csv", "resolution.png",
                  "hours.png", "budget.png")


def _years(value: float) -> str:
    return f"{value:.1f}" if math.isfinite(value) else "never"


def _print_campaign(result: CampaignOutcome, spec) -> None:
    table = compact_table(f"Campaign {spec.start.utc.iso[:10]} + {spec.horizon_years:g} yr: goal R = "
                          f"{spec.goal_resolution:g} at SNR {spec.goal_snr:g} per bin ({spec.trials} trials)",
                          [("target", "left"), ("transits/yr", "right"), ("h/yr", "right"),
                           ("years to goal p10/50/90", "right"), ("verdict", "left")])
    rows = [(row.target, f"{row.transits_per_year:.1f}", f"{row.in_transit_hours_per_year:.1f}",
             "/".join(_years(v) for v in (row.years_to_goal_p10, row.years_to_goal_p50, row.years_to_goal_p90)),
             Text("reachable", style="green") if row.reachable else Text.assemble(("no", "red"), f": {row.limited_by}"))
            for row in result.summary.itertuples(index=False)]
    for column, cells in zip(table.columns[:4], zip(*rows)):  # names and numbers whole; the verdict wraps instead
        column.min_width = max(len(str(c)) for c in (column.header, *cells))
    table.columns[4].no_wrap, table.columns[4].overflow = False, "fold"
    for cells in rows:
        table.add_row(*cells)
    out.print(table)


def _verdict(row, spec) -> str:
    if row.reachable:
        return (f"{row.target}: worth pursuing: R = {spec.goal_resolution:g} at SNR {spec.goal_snr:g} is reached after "
                f"{_years(row.years_to_goal_p50)} years (median; 10-90 % of trials: {_years(row.years_to_goal_p10)}"
                f" to {_years(row.years_to_goal_p90)}), collecting {row.in_transit_hours_per_year:.1f} in-transit h/yr.")
    reason, _, term = row.limited_by.partition(" (")
    why = {"noise floor": f"the noise floor caps the SNR per bin at {row.snr_cap:.2f}",
           "weather": "enough windows are scheduled, but weather loses too many in most trials",
           "allocation": "the allocation caps and clashes with other targets leave too few visits",
           "ephemeris too stale": "the growing timing uncertainty widens the windows until they no longer fit a night",
           "too few windows": f"its observable windows give {row.in_transit_hours_per_year:.1f} in-transit h/yr, "
                              f"against {row.hours_needed:.0f} h needed"}[reason]
    largest = f"; the largest noise term is {term.rstrip(')')}" if term else ""
    others = f" (reachable under: {row.reachable_scenarios})" if row.reachable_scenarios else ""
    return f"{row.target}: not within {spec.horizon_years:g} years in scenario {row.scenario}: {why}{largest}{others}."


def _run_campaign(campaign_file: Path, target: str | None, out_dir: Path | None, exact: bool = False, jobs: int = 1,
                  scheduler: str | None = None, chunk_dir: Path | None = None, strict: bool = False,
                  outputs: OutputTransaction | None = None):
    """Run vigil.run_campaign with a progress bar and write its files into `out_dir` (none when it is None)."""
    spec = api.read_campaign(campaign_file)
    if outputs is not None:
        outputs.check_inputs((spec.targets_file, spec.sites_file, spec.journal_file, spec.ephemeris_table))
    done = [0]

    def trials_done(count: int) -> None:
        done[0] += count
        progress.advance(done[0], spec.trials)

    with LazyProgress("weather trials") as progress:
        outcome = api.run_campaign(spec, target=target, strict=strict, exact=exact, jobs=jobs, scheduler=scheduler,
                                   chunk_dir=chunk_dir, on_progress=trials_done)
    return spec, outcome, ([] if out_dir is None else outcome.write(out_dir))


@app.command("campaign", cls=_Command)
def campaign_command(
    context: typer.Context,
    campaign_file: Path = typer.Argument(..., metavar="CAMPAIGN.toml", help="Campaign TOML: start, horizon (years), targets and sites files, "
                                         "weather, allocation, instrument, spectral goal, trials, seed."),
    target: Optional[str] = typer.Option(None, "--target", metavar="NAME", help="Answer for this one target only."),
    out_dir: Optional[Path] = typer.Option(None, "--out", metavar="DIR", show_default=False,
                                           help="Output folder for CSVs and PNG plots [default: vigil-campaign; with "
                                                "--target, no files unless --out is given]."),
    force: bool = typer.Option(False, "--force", help="Replace existing outputs in --out (otherwise vigil refuses)."),
    exact: bool = typer.Option(False, "--exact", help=EXACT_HELP),
    jobs: int = typer.Option(1, "--jobs", metavar="N", show_default=False, help=JOBS_HELP),
    scheduler: Optional[str] = typer.Option(None, "--scheduler", metavar="ADDRESS", help=SCHEDULER_HELP),
    chunk_dir: Optional[Path] = typer.Option(None, "--chunk-dir", metavar="DIR", help=CHUNK_DIR_HELP),
    strict: bool = STRICT_OPTION,
    html_path: Optional[Path] = typer.Option(None, "--html", metavar="FILE", help=HTML_HELP),
):
    """Simulate a multi-year campaign and forecast when each stacked spectrum reaches the goal.

    Writes summary.csv, scenarios.csv (verdict per atmosphere scenario), forecast.csv (per target
    and campaign year), ledger.csv (visits of one simulated campaign with their weather),
    budget.csv (noise terms of the median visit), resolution.png, hours.png and budget.png.
    """
    setup_logging()
    if out_dir is None and target is None:
        out_dir = Path("vigil-campaign")
    with user_errors(context):
        files = [] if out_dir is None else [out_dir / name for name in CAMPAIGN_FILES]
        outputs = OutputTransaction(files + [html_path], [campaign_file], force, create_folder=out_dir)
        with outputs.committing():
            spec, result, paths = _run_campaign(campaign_file, target, out_dir, exact, jobs, scheduler, chunk_dir,
                                                strict, outputs)
            if html_path is not None:
                write_html(html_path, html_page(f"Campaign {campaign_file.name}",
                                                campaign_sections(result.simulation, spec)))
                paths.append(html_path)
    if target is not None:
        out.print(_verdict(next(result.summary.itertuples(index=False)), spec))
        out.print("(computed for this target alone: clashes with the campaign's other targets are left out, so its "
                  "hours and years can differ from the full table's)")
    else:
        _print_campaign(result, spec)
    out.print(f"wrote {', '.join(str(p) for p in paths)}" if paths else "no files written (give --out DIR to write them)")


@app.command()
def refit(
    timings_file: Path = typer.Argument(..., metavar="TIMINGS.csv", help="Measured mid-times: target, mid_bjd_tdb, "
                                        "mid_err_d (days), optional note."),
    out_path: Path = typer.Option(..., "--out", metavar="FILE", help="Refitted targets CSV (readable by every vigil command)."),
    targets_file: Optional[Path] = typer.Option(None, "--targets", metavar="TARGETS.csv",
                                                help="Catalogue: its ephemerides number the epochs and are the prior "
                                                     "of the fit; coordinates and durations carry over."),
    no_prior: bool = typer.Option(False, "--no-prior", help="Fit the timings alone (the catalogue only numbers epochs)."),
    sigma_k: float = typer.Option(1.0, "--sigma", metavar="K", min=0.1, max=10.0,
                                  help="Timing padding K for the stale threshold [default 1]."),
    force: bool = typer.Option(False, "--force", help="Replace existing outputs (otherwise vigil refuses)."),
    fmt: Optional[str] = FORMAT_OPTION,
    columns: Optional[Path] = COLUMNS_OPTION,
    strict: bool = STRICT_OPTION,
):
    """Update each target's ephemeris with measured transit times (weighted least squares).

    The catalogue ephemeris is the prior unless --no-prior; outliers are removed one at a time
    when more than 5 sigma from the prediction of all the other timings; linear and quadratic
    models are compared by BIC. Epochs keep the catalogue's numbering. Also writes the O-C table
    (FILE stem + _o_minus_c.csv, minutes) and its picture (.png).
    """
    run_refit(timings_file, out_path, targets_file, CatalogueOptions(fmt, columns, strict), not no_prior, sigma_k,
              force)


def _warn_ground_only_options(sites: dict, constraints: dict) -> None:
    """Say which constraint options a space site ignores (the same keys in the TOML warn too)."""
    space = [name for name, site in sites.items() if site.kind == "space"]
    for option in ("min_altitude", "twilight", "moon_sep"):
        if space and constraints.get(option) is not None:
            log.warning("--%s ignored at space site(s) %s: it constrains ground sites only",
                        option.replace("_", "-"), ", ".join(space))


def _joined(spans_jd: list[tuple[float, float]]) -> list[tuple[float, float]]:
    """Time-ordered (start, end) spans with those that touch at a year boundary made one."""
    joined: list[tuple[float, float]] = []
    for start, end in sorted(spans_jd):
        if joined and start <= joined[-1][1] + 1e-6:
            joined[-1] = (joined[-1][0], max(joined[-1][1], end))
        else:
            joined.append((start, end))
    return joined


@app.command("space-seasons")
def space_seasons(
    targets_file: Path = typer.Argument(..., metavar="TARGETS.csv", help="Targets CSV (coordinates are what matter here)."),
    sites_file: Path = typer.Option(..., "--sites", metavar="SITES.toml", help="Sites TOML holding the space site."),
    site_name: str = typer.Option(..., "--site", metavar="NAME", help="A site of kind = \"space\"."),
    year: int = typer.Option(..., "--year", metavar="YEAR", min=FIRST_PLAN_YEAR, max=LAST_PLAN_YEAR,
                             help="First calendar year (UTC)."),
    years: int = typer.Option(1, "--years", metavar="N", min=1, max=50, help="Number of calendar years [default 1]."),
    csv_path: Optional[Path] = typer.Option(None, "--csv", metavar="FILE", help="Write the date ranges here (CSV, UTC)."),
    plot_path: Optional[Path] = typer.Option(None, "--plot", metavar="FILE", help="Write the chart here (PNG)."),
    force: bool = typer.Option(False, "--force", help="Replace existing outputs (otherwise vigil refuses)."),
    fmt: Optional[str] = FORMAT_OPTION,
    columns: Optional[Path] = COLUMNS_OPTION,
    strict: bool = STRICT_OPTION,
):
    """Date ranges in each year when a space observatory's Sun-angle band admits each target.

    Only the field of regard counts here (interruptions and blackouts are applied by
    `vigil windows`). Columns: target, site, window_start_utc, window_end_utc, length_d.
    """
    import pandas as pd

    from vigil.export.space_plots import annual_visibility_plot
    from vigil.engines.space import annual_windows

    setup_logging()
    with user_errors(), OutputTransaction((csv_path, plot_path), (targets_file, sites_file, columns),
                                          force).committing():
        targets = api.read_targets(targets_file, format=fmt, columns=columns, strict=strict)
        site_name = clean_name(site_name, "--site")
        site = api.read_sites(sites_file, site_name)[site_name]
        if year + years - 1 > LAST_PLAN_YEAR:
            raise InputError(f"--years: {years} years from {year} end after {LAST_PLAN_YEAR}, the last year vigil plans for")
        if site.kind != "space":
            raise InputError(f"{sites_file}: [sites.{site_name}] is a ground site; space-seasons needs kind = \"space\"")
        rows = [{"target": t.name, "site": site_name, "start_jd": lo, "end_jd": hi}
                for t in targets.itertuples(index=False)
                for lo, hi in _joined([(lo.utc.jd, hi.utc.jd) for y in range(year, year + years)
                                       for lo, hi in annual_windows(t.ra_deg, t.dec_deg, site, y)])]
        table = pd.DataFrame(rows, columns=["target", "site", "start_jd", "end_jd"])
        seasons = pd.DataFrame({"target": table["target"], "site": table["site"],
                                "window_start_utc": iso_utc(table["start_jd"].to_numpy()),
                                "window_end_utc": iso_utc(table["end_jd"].to_numpy()),
                                "length_d": (table["end_jd"] - table["start_jd"]).round(2)})
        if csv_path is not None:
            write_csv(seasons, csv_path)
        if plot_path is not None:
            annual_visibility_plot(targets, site, list(range(year, year + years)), plot_path)
    for target, group in seasons.groupby("target", sort=False):
        spans = "; ".join(f"{a[:10]} to {b[:10]} ({d:.0f} d)" for a, b, d in
                          zip(group["window_start_utc"], group["window_end_utc"], group["length_d"]))
        out.print(f"{target}: {spans or 'never inside the field of regard'}")
    for path in (csv_path, plot_path):
        if path is not None:
            out.print(f"wrote {path}")


app.add_typer(journal_app, name="journal")
app.add_typer(chart_app, name="chart")


def main() -> None:  # pragma: no cover - console entry point
    app()


if __name__ == "__main__":  # pragma: no cover
    sys.exit(app())
