"""`vigil journal ...`: record planned and executed visits in a campaign journal (SQLite)."""

from __future__ import annotations

from pathlib import Path
from typing import Optional

import typer

from vigil.cli_support import out, setup_logging, user_errors
from vigil.catalog import read_targets
from vigil.ephemeris.models import target_ephemerides
from vigil.ephemeris.timing_checks import far_from_prediction
from vigil.errors import InputError
from vigil.export.files import OutputTransaction
from vigil.export.terminal_tables import journal_table
from vigil.journal import open_journal
from vigil.names import clean_name
from vigil.textfile import did_you_mean

journal_app = typer.Typer(help="Keep a campaign journal (one SQLite file): planned and executed visits, their "
                               "outcome, measured mid-times (BJD_TDB, days) and hours collected.",
                          no_args_is_help=True, rich_markup_mode=None)
JOURNAL_ARG = typer.Argument(..., metavar="JOURNAL.db", help="Journal file (created when missing).")


@journal_app.command("add")
def add(
    context: typer.Context,
    journal_file: Path = JOURNAL_ARG,
    target: str = typer.Option(..., "--target", metavar="NAME", help="Target name."),
    site: str = typer.Option(..., "--site", metavar="NAME", help="Site name."),
    epoch: int = typer.Option(..., "--epoch", metavar="N", help="Transit number counted from the targets file's t0."),
    start: str = typer.Option(..., "--start", metavar="UTC", help="Visit start, ISO 8601 UTC ending in Z."),
    end: str = typer.Option(..., "--end", metavar="UTC", help="Visit end, ISO 8601 UTC ending in Z."),
    status: str = typer.Option("executed", "--status", metavar="KIND", help="planned or executed [default executed]."),
    outcome: Optional[str] = typer.Option(None, "--outcome", metavar="KIND",
                                          help="clear, partial, weather or technical (executed visits only)."),
    mid_bjd_tdb: Optional[float] = typer.Option(None, "--mid-bjd-tdb", metavar="JD", help="Measured mid-transit time, BJD_TDB."),
    mid_err_d: Optional[float] = typer.Option(None, "--mid-err-d", metavar="DAYS", help="1-sigma error of that time, days."),
    in_transit_h: Optional[float] = typer.Option(None, "--in-transit-h", metavar="HOURS", help="In-transit hours collected."),
    baseline_h: Optional[float] = typer.Option(None, "--baseline-h", metavar="HOURS", help="Out-of-transit hours collected."),
    notes: str = typer.Option("", "--notes", metavar="TEXT", help="Free text."),
    targets_file: Optional[Path] = typer.Option(None, "--targets", metavar="TARGETS.csv",
                                                help="Check the mid-time against this catalogue's prediction (5 sigma)."),
    force: bool = typer.Option(False, "--force", help="Record a mid-time that fails its checks (marked in the notes)."),
):
    """Add one visit to the journal.

    A measured mid-time outside the visit's start and end, or (with --targets) more than 5
    combined sigma from the prediction for its epoch, is refused unless --force.
    """
    setup_logging()
    entry = {"target": target, "site": site, "epoch": epoch, "start_utc": start, "end_utc": end, "status": status,
             "outcome": outcome, "mid_bjd_tdb": mid_bjd_tdb, "mid_err_d": mid_err_d, "in_transit_h": in_transit_h,
             "baseline_h": baseline_h, "notes": notes}
    with user_errors(context):
        if targets_file is not None and mid_bjd_tdb is not None and mid_err_d is not None and not force:
            _check_against_catalogue(targets_file, target, epoch, mid_bjd_tdb, mid_err_d)
        with open_journal(journal_file) as journal:
            journal.add(entry, force=force)
    typer.echo(f"added {status} visit of {target} at {site}, epoch {epoch}" + (" (timing forced)" if force else ""))


def _check_against_catalogue(targets_file: Path, target: str, epoch: int, mid_bjd_tdb: float, mid_err_d: float):
    targets = read_targets(targets_file)
    row = targets[targets["name"] == clean_name(target, "--target")]
    if row.empty:
        raise InputError(f"{targets_file}: no target {target!r}{did_you_mean(target, targets['name'])}")
    problem = far_from_prediction(target_ephemerides(row)[0], epoch, mid_bjd_tdb, mid_err_d)
    if problem:
        raise InputError(f"--mid-bjd-tdb: {problem} in {targets_file}; refused, add it with --force if it is right")


def _check_recorded(journal_file: Path, target: str, recorded) -> None:
    """Refuse a --target the journal has no visit of while it has others', naming the closest."""
    if len(recorded) and target not in set(recorded):
        raise InputError(f"{journal_file}: --target: no visits of {target!r}{did_you_mean(target, recorded)} "
                         f"(targets in the journal: {', '.join(sorted(recorded))})")


@journal_app.command("list")
def list_entries(
    journal_file: Path = JOURNAL_ARG,
    target: Optional[str] = typer.Option(None, "--target", metavar="NAME", help="Only this target."),
    status: Optional[str] = typer.Option(None, "--status", metavar="KIND", help="Only planned or executed visits."),
):
    """Print the journal's visits (times UTC)."""
    setup_logging()
    with user_errors(), open_journal(journal_file, write=False) as journal:
        table = journal.entries(target=None if target is None else clean_name(target, "--target"), status=status)
        if target is not None and table.empty:
            _check_recorded(journal_file, clean_name(target, "--target"), journal.entries()["target"].unique())
    if len(table):
        out.print(journal_table(table))
    else:
        typer.echo("no visits recorded")


@journal_app.command("import")
def import_csv(journal_file: Path = JOURNAL_ARG,
               csv_file: Path = typer.Argument(..., metavar="VISITS.csv", help="CSV with the journal's columns.")):
    """Add every row of a CSV, all or none: a bad row leaves the journal as it was."""
    setup_logging()
    with user_errors(), open_journal(journal_file) as journal:
        count = journal.import_csv(csv_file)
    typer.echo(f"imported {count} visits")


@journal_app.command("export")
def export_csv(journal_file: Path = JOURNAL_ARG,
               csv_file: Path = typer.Argument(..., metavar="VISITS.csv", help="Where to write the CSV."),
               force: bool = typer.Option(False, "--force", help="Replace an existing CSV (otherwise vigil refuses).")):
    """Write the whole journal as CSV (spreadsheet-safe text)."""
    setup_logging()
    with user_errors(), OutputTransaction([csv_file], [journal_file], force).committing():
        with open_journal(journal_file, write=False) as journal:
            journal.export_csv(csv_file)
    typer.echo(f"wrote {csv_file}")
