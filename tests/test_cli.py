"""`vigil windows` and `vigil demo` as a user runs them: outputs, exit codes, messages, help."""

import csv
import logging
import re
from pathlib import Path

import icalendar
import pytest
from typer.testing import CliRunner

from vigil.cli import app

from conftest import DEMO_DIR

README = Path(__file__).resolve().parents[1] / "README.md"
TARGET_LINES = (DEMO_DIR / "targets.csv").read_text(encoding="utf-8").splitlines()


def _documented_csv_columns() -> list[str]:
    """The windows CSV columns as README.md documents them (the line after its heading)."""
    text = README.read_text(encoding="utf-8")
    block = text.split("### Output columns (windows CSV)", 1)[1]
    return [c.strip() for c in re.search(r"`([^`]+)`", block).group(1).split(",")]


@pytest.fixture(autouse=True)
def _restore_vigil_logger():
    """The CLI attaches its own handler to the 'vigil' logger; leave the logger as found."""
    logger = logging.getLogger("vigil")
    saved = (list(logger.handlers), logger.level, logger.propagate)
    yield
    logger.handlers[:], logger.level, logger.propagate = saved


def _run(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


def _windows_args(targets, *extra):
    return ("windows", targets, "--sites", DEMO_DIR / "sites.toml", "--site", "mirador_sur",
            "--start", "2027-01-01", "--end", "2027-01-15", *extra)


def _small_targets(tmp_path, *replace) -> Path:
    """The demo's first two targets; `replace` = (old, new) edits applied to the second row."""
    header, first, second = TARGET_LINES[:3]
    for old, new in replace:
        second = second.replace(old, new)
    path = tmp_path / "targets.csv"
    path.write_text("\n".join([header, first, second]) + "\n", encoding="utf-8")
    return path


def test_windows_writes_csv_and_ics(tmp_path):
    csv_path, ics_path = tmp_path / "out" / "w.csv", tmp_path / "out" / "w.ics"
    csv_path.parent.mkdir()
    result = _run(*_windows_args(_small_targets(tmp_path), "--csv", csv_path, "--ics", ics_path))
    assert result.exit_code == 0, result.output
    with open(csv_path, newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    assert rows and list(rows[0]) == _documented_csv_columns()
    # RFC 5545 calendar read back by an iCalendar parser: one event per CSV row.
    events = list(icalendar.Calendar.from_ical(ics_path.read_bytes()).walk("VEVENT"))
    assert len(events) == len(rows)


def test_broken_targets_csv_exits_2_with_one_line_and_writes_nothing(tmp_path):
    targets = _small_targets(tmp_path, ("3.9185200", "four days"))
    csv_path = tmp_path / "w.csv"
    result = _run(*_windows_args(targets, "--csv", csv_path))
    assert result.exit_code == 2
    message = result.stderr.strip()
    assert "\n" not in message and "Traceback" not in message
    assert "line 3" in message and "period_d" in message and str(targets) in message
    assert not csv_path.exists()


def test_existing_output_is_kept_without_force(tmp_path):
    csv_path = tmp_path / "w.csv"
    csv_path.write_text("keep me\n", encoding="utf-8")
    targets = _small_targets(tmp_path)
    result = _run(*_windows_args(targets, "--csv", csv_path))
    assert result.exit_code == 2
    assert "--force" in result.stderr
    assert csv_path.read_text(encoding="utf-8") == "keep me\n"
    assert _run(*_windows_args(targets, "--csv", csv_path, "--force")).exit_code == 0
    assert csv_path.read_text(encoding="utf-8").startswith("target,site,")


def test_windows_help_states_units():
    result = _run("windows", "--help")
    assert result.exit_code == 0
    assert "degrees" in result.output and "hours" in result.output


def test_top_level_help_states_units():
    result = _run("--help")
    assert result.exit_code == 0
    assert "degrees" in result.output and "hours" in result.output


def test_windows_help_shows_built_in_defaults():
    assert "default 30" in _run("windows", "--help").output


def test_site_error_names_the_toml_key(tmp_path):
    sites = tmp_path / "sites.toml"
    sites.write_text("[sites.loma_fria]\nlatitude_deg = 95.0\nlongitude_deg = -70.81\nelevation_m = 2450\n")
    result = _run("windows", _small_targets(tmp_path), "--sites", sites, "--start", "2027-01-01", "--end", "2027-01-02")
    assert result.exit_code == 2
    assert "sites.loma_fria" in result.stderr


def test_demo_runs_offline_and_writes_both_files(no_network, tmp_path, monkeypatch):
    # The README's quick start: `vigil demo` writes vigil-demo/windows.csv and windows.ics,
    # with nothing downloaded (socket guard).
    monkeypatch.chdir(tmp_path)
    result = _run("demo")
    assert result.exit_code == 0, result.output
    csv_path, ics_path = tmp_path / "vigil-demo" / "windows.csv", tmp_path / "vigil-demo" / "windows.ics"
    with open(csv_path, newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    assert len(rows) > 100 and list(rows[0]) == _documented_csv_columns()
    assert {r["coverage"] for r in rows} <= {"full", "ingress", "egress", "partial"}
    assert ics_path.read_bytes().count(b"BEGIN:VEVENT") == len(rows)
