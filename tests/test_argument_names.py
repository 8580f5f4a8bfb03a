"""A message about an argument names it as the caller knows it: the keyword from Python, the
option from the command line (vigil.errors.ArgumentError, rendered by cli_support.user_errors).
Reference: the keyword and option names of vigil's own documented interfaces (README, --help)."""

from pathlib import Path

import pytest
from typer.testing import CliRunner

import vigil
from vigil.cli import app
from vigil.errors import ArgumentError

from conftest import DEMO_DIR
from test_cli import _restore_vigil_logger  # noqa: F401  (autouse: leave the 'vigil' logger as found)

CORPUS = Path(__file__).parent / "corpus"
SPAN = ["--start", "2027-01-01", "--end", "2027-01-08"]
# A visit on 2027-01-03 02:00-05:30 UTC and a mid-time a day later, outside it (invented).
VISIT = {"target": "Tamsin-7 b", "site": "mirador_sur", "epoch": 580, "start_utc": "2027-01-03T02:00:00Z",
         "end_utc": "2027-01-03T05:30:00Z", "status": "executed", "outcome": "clear", "mid_bjd_tdb": 2461409.6,
         "mid_err_d": 0.0004}


def _cli_error(*args: str) -> str:
    result = CliRunner().invoke(app, list(args))
    assert result.exit_code == 2, result.output
    return " ".join(result.output.split())


def _api_error(call) -> ArgumentError:
    with pytest.raises(ArgumentError) as caught:
        call()
    return caught.value


def test_table_format():
    api = _api_error(lambda: vigil.read_targets(DEMO_DIR / "targets.csv", format="xls"))
    assert str(api).startswith("format: expected one of csv, ecsv, votable, ipac, got 'xls'")
    cli = _cli_error("windows", str(DEMO_DIR / "targets.csv"), "--sites", str(DEMO_DIR / "sites.toml"), *SPAN,
                     "--format", "xls")
    assert "--format: expected one of csv, ecsv, votable, ipac, got 'xls'" in cli


def test_unreadable_table_hint():
    broken = CORPUS / "targets" / "broken.xml"
    api = _api_error(lambda: vigil.read_targets(broken))
    assert str(api).startswith(f"{broken}: not a readable VOTable table") and "give its format (format)" in str(api)
    cli = _cli_error("windows", str(broken), "--sites", str(DEMO_DIR / "sites.toml"), *SPAN)
    assert "give its format (--format)" in cli and "(format)" not in cli


def test_scheduler():
    api = _api_error(lambda: vigil.plan_windows(DEMO_DIR / "targets.csv", DEMO_DIR / "sites.toml", "2027-01-01",
                                                "2027-01-08", scheduler="udp://127.0.0.1:1"))
    assert str(api) == "scheduler: expected 'local' or tcp://HOST:PORT, got 'udp://127.0.0.1:1'"
    cli = _cli_error("windows", str(DEMO_DIR / "targets.csv"), "--sites", str(DEMO_DIR / "sites.toml"), *SPAN,
                     "--scheduler", "udp://127.0.0.1:1")
    assert "--scheduler: expected 'local' or tcp://HOST:PORT" in cli


def test_refit_without_a_catalogue(tmp_path):
    timing = {"target": "Tamsin-7 b", "mid_bjd_tdb": 2461408.6, "mid_err_d": 4e-4}
    api = _api_error(lambda: vigil.refit([timing]))
    assert "pass the catalogue as targets to update its ephemeris" in str(api) and "--" not in str(api)
    timings = tmp_path / "timings.csv"
    timings.write_text("target,mid_bjd_tdb,mid_err_d\nTamsin-7 b,2461408.6,0.0004\n", encoding="utf-8")
    cli = _cli_error("refit", str(timings), "--out", str(tmp_path / "out.csv"))
    assert "pass the catalogue as --targets TARGETS.csv to update its ephemeris" in cli


def test_journal_timing_outside_its_visit(tmp_path):
    with vigil.open_journal(tmp_path / "j.db") as journal:
        api = _api_error(lambda: journal.add(VISIT))
        journal.add(VISIT, force=True)  # the keyword the message names records it, marked
        assert journal.entries()["notes"][0] == "[timing forced]"  # the mark the refit reads (timing_checks)
    assert "refused (force records it anyway" in str(api) and "--" not in str(api)
    cli = _cli_error("journal", "add", str(tmp_path / "k.db"), "--target", VISIT["target"], "--site", VISIT["site"],
                     "--epoch", "580", "--start", VISIT["start_utc"], "--end", VISIT["end_utc"], "--outcome", "clear",
                     "--mid-bjd-tdb", str(VISIT["mid_bjd_tdb"]), "--mid-err-d", "0.0004")
    assert "refused (--force records it anyway" in cli
