"""What the terminal and the files list: coverage and fraction filters in every output, tables
that fit 80 columns without splitting a value, an inclusive --end date, the journal as a table."""

import csv
import re

import icalendar
from typer.testing import CliRunner

from conftest import DEMO_DIR
from vigil.cli import app

COMMON = [str(DEMO_DIR / "targets.csv"), "--sites", str(DEMO_DIR / "sites.toml")]


def _windows(*extra, env=None):
    return CliRunner().invoke(app, ["windows", *COMMON, *extra], env=env)


def _rows(path) -> list[dict]:
    with open(path, newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


def test_coverage_and_fraction_filters_apply_to_csv_and_calendar(tmp_path):
    span = ["--start", "2027-03-01", "--end", "2027-03-31"]
    everything = _windows(*span, "--csv", str(tmp_path / "all.csv"))
    assert everything.exit_code == 0
    picked = _windows(*span, "--coverage", "full,egress", "--min-fraction", "0.9", "--csv", str(tmp_path / "f.csv"),
                      "--ics", str(tmp_path / "f.ics"))
    assert picked.exit_code == 0, picked.output
    all_rows, rows = _rows(tmp_path / "all.csv"), _rows(tmp_path / "f.csv")
    expected = [r for r in all_rows if r["coverage"] in ("full", "egress") and float(r["observable_fraction"]) >= 0.9]
    assert rows == expected and 0 < len(rows) < len(all_rows)
    events = list(icalendar.Calendar.from_ical((tmp_path / "f.ics").read_bytes()).walk("VEVENT"))
    assert len(events) == len(rows)


def test_bad_coverage_is_one_line_naming_the_option(tmp_path):
    result = _windows("--start", "2027-03-01", "--end", "2027-03-02", "--coverage", "full,most")
    assert result.exit_code == 2
    assert result.output.count("\n") == 1 and "--coverage" in result.output and "most" in result.output
    result = _windows("--start", "2027-03-01", "--end", "2027-03-02", "--min-fraction", "1.5")
    assert result.exit_code == 2 and "--min-fraction" in result.output


def test_upcoming_windows_table_fits_80_columns_without_split_values():
    result = _windows("--start", "2027-03-01", "--end", "2027-03-31", env={"COLUMNS": "80"})
    assert result.exit_code == 0
    lines = result.output.splitlines()
    assert max(len(line) for line in lines) <= 80
    table = lines[next(i for i, line in enumerate(lines) if line.startswith("Upcoming windows")):]
    rows = [line for line in table if re.match(r"\d{4}-\d{2}-\d{2} ", line)]
    assert len(rows) >= 10
    # Every row holds a whole mid-time, a whole local stretch hh:mm-hh:mm and a percentage.
    assert all(re.match(r"\d{4}-\d{2}-\d{2} \d{2}:\d{2} ", r) for r in rows)
    assert all(re.search(r" \d{1,3}% +(\d{2}:\d{2}-\d{2}:\d{2}\*?|-) ", r) for r in rows)


def test_end_date_is_included_whole(tmp_path):
    result = _windows("--start", "2027-03-01", "--end", "2027-03-10", "--csv", str(tmp_path / "w.csv"))
    assert result.exit_code == 0
    days = {row["mid_utc"][:10] for row in _rows(tmp_path / "w.csv")}
    assert "2027-03-10" in days and max(days) == "2027-03-10"
    # A date with a time is an exact end.
    result = _windows("--start", "2027-03-01", "--end", "2027-03-10T00:00", "--csv", str(tmp_path / "x.csv"),
                      "--force")
    assert max(row["mid_utc"] for row in _rows(tmp_path / "x.csv")) < "2027-03-10T00:00"


def test_journal_list_is_a_table_without_nan_or_none(tmp_path):
    runner = CliRunner()
    db = tmp_path / "j.db"
    added = runner.invoke(app, ["journal", "add", str(db), "--target", "Tamsin-7 b", "--site", "mirador_sur",
                                "--epoch", "580", "--start", "2027-01-03T02:00:00Z", "--end", "2027-01-03T05:00:00Z",
                                "--status", "planned"])
    assert added.exit_code == 0, added.output
    listed = runner.invoke(app, ["journal", "list", str(db)])
    assert listed.exit_code == 0
    assert "Tamsin-7 b" in listed.output and "planned" in listed.output
    assert "NaN" not in listed.output and "None" not in listed.output
    assert max(len(line) for line in listed.output.splitlines()) <= 80


def test_campaign_table_keeps_names_and_numbers_whole_in_80_columns(tmp_path):
    result = CliRunner().invoke(app, ["campaign", str(DEMO_DIR / "campaign.toml"), "--out", str(tmp_path / "out")],
                                env={"COLUMNS": "80"})
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    table = lines[next(i for i, line in enumerate(lines) if line.startswith("Campaign ")):]
    assert max(len(line) for line in table) <= 80
    names = [row["target"] for row in _rows(tmp_path / "out" / "summary.csv")]
    years = re.compile(r"^(never|\d+\.\d)/(never|\d+\.\d)/(never|\d+\.\d)$")
    for name in names:  # each target's row starts with its whole name and holds whole p10/p50/p90 years
        row = next(line for line in table if line.startswith(name + " "))
        assert any(years.match(cell) for cell in row.split()), row
    assert "…" not in "\n".join(table)
