"""Names and user strings are printed and written as given (no console markup), calendar UIDs
come from the exact names, every CSV text cell is spreadsheet-safe, SOURCE_DATE_EPOCH is checked.

References: RFC 5545 section 3.8.4.7 (UID: globally unique per event) with the icalendar
library as the parser; the reproducible-builds.org SOURCE_DATE_EPOCH specification (an ASCII
integer of seconds since the epoch; a malformed value should stop the build with an error);
OWASP "CSV Injection" (from memory: cells starting with = + - @ tab CR run as formulas).
"""

import csv
import io
import unicodedata
from pathlib import Path

import icalendar
import pytest
from typer.testing import CliRunner

from vigil.cli import app
from vigil.export.calendar import event_uid

from test_cli import _restore_vigil_logger  # noqa: F401  (autouse: leave the 'vigil' logger as found)
from test_corpus import _assert_one_error_line

GOOD = Path(__file__).resolve().parent / "corpus" / "good"
DATES = ("--start", "2027-03-01", "--end", "2027-04-01")
MARKUP_NAMES = ["Tamsin-7 [b]", "[/bold] Quillon-2 b", "[link=https://example.invalid]x[/link]", ":smile: c"]


def _run(*args, env=None):
    return CliRunner().invoke(app, [str(a) for a in args], env=env)


def _targets_named(tmp_path: Path, names) -> Path:
    """The first good target under each name, each on its own star (RA shifted by 0.5 h per row)."""
    lines = (GOOD / "targets.csv").read_text().splitlines()
    ra_deg, rest = lines[1].split(",", 2)[1:]
    path = tmp_path / "targets.csv"
    body = [f'"{name}",{float(ra_deg) + 7.5 * i:.2f},{rest}' for i, name in enumerate(names)]
    path.write_text("\n".join([lines[0], *body]) + "\n", encoding="utf-8")
    return path


def test_names_with_console_markup_are_printed_literally(tmp_path):
    targets = _targets_named(tmp_path, MARKUP_NAMES)
    result = _run("windows", targets, "--sites", GOOD / "sites.toml", *DATES, env={"COLUMNS": "200"})
    assert result.exit_code == 0, result.output
    for name in MARKUP_NAMES:
        assert name in result.output, name
    assert "\x1b]8;" not in result.output  # no terminal hyperlink escape


def test_refit_prints_and_writes_markup_names_literally(tmp_path):
    names = MARKUP_NAMES[:2]
    targets = _targets_named(tmp_path, names)
    timings = tmp_path / "timings.csv"
    rows = (GOOD / "timings.csv").read_text().splitlines()
    timings.write_text("\n".join([rows[0]] + [f'"{n}",{r.split(",", 1)[1]}' for n in names for r in rows[1:]
                                              if r.startswith("Brisa-4 b")]) + "\n")
    result = _run("refit", timings, "--targets", targets, "--out", tmp_path / "refit.csv", env={"COLUMNS": "200"})
    assert result.exit_code == 0, result.output
    for name in names:
        assert f"\n{name}: " in "\n" + result.output


def test_calendar_uids_differ_for_names_differing_by_case_punctuation_or_normalisation():
    # Names that some foldings would merge; each must keep its own UID.
    composed = unicodedata.normalize("NFC", "Orla-é b")
    decomposed = unicodedata.normalize("NFD", "Orla-é b")
    groups = [("Tamsin-7 b", "tamsin-7 b", "TAMSIN-7 B"), ("Tamsin-7 b", "Tamsin-7b", "Tamsin 7 b", "Tamsin-7 b."),
              (composed, decomposed), ("a|b", "a\\|b")]
    for names in groups:
        uids = {event_uid(name, "alto_verde", 4) for name in names}
        assert len(uids) == len(names), names
    assert event_uid("a|b", "c", 1) != event_uid("a", "b|c", 1)


def test_calendar_of_near_twin_names_has_unique_uids(tmp_path):
    names = ["Tamsin-7 b", "tamsin-7 b", "Tamsin-7b", "Tamsin|7 b"]
    targets = _targets_named(tmp_path, names)
    ics = tmp_path / "w.ics"
    assert _run("windows", targets, "--sites", GOOD / "sites.toml", *DATES, "--ics", ics).exit_code == 0
    events = icalendar.Calendar.from_ical(ics.read_bytes()).walk("VEVENT")
    uids = [str(e["UID"]) for e in events]
    assert len(events) >= len(names) and len(set(uids)) == len(uids)
    assert {str(e["SUMMARY"]).split(" transit")[0] for e in events} == set(names)


@pytest.mark.parametrize("value", ["abc", "-1", "1.8e9", "\u0661\u0662", "9" * 40, " 1800000000"])
def test_malformed_source_date_epoch_is_one_line(tmp_path, value):
    result = _run("windows", GOOD / "targets.csv", "--sites", GOOD / "sites.toml", *DATES, "--ics",
                  tmp_path / "w.ics", env={"SOURCE_DATE_EPOCH": value})
    line = _assert_one_error_line(result, None, ("SOURCE_DATE_EPOCH", "whole seconds"))
    assert repr(value) in line
    assert list(tmp_path.iterdir()) == []


def test_source_date_epoch_sets_dtstamp(tmp_path):
    ics = tmp_path / "w.ics"
    result = _run("windows", GOOD / "targets.csv", "--sites", GOOD / "sites.toml", *DATES, "--ics", ics,
                  env={"SOURCE_DATE_EPOCH": "1800000000"})
    assert result.exit_code == 0, result.output
    assert b"DTSTAMP:20270115T080000Z" in ics.read_bytes()  # 1800000000 s after 1970-01-01 (date -u -d @1800000000)


def test_refit_output_text_columns_are_neutralised(tmp_path):
    timings = tmp_path / "timings.csv"
    rows = (GOOD / "timings.csv").read_text().splitlines()
    timings.write_text("\n".join([rows[0]] + [r.replace(",invented", ",=cmd|' /C calc'!A0") for r in rows[1:]]) + "\n")
    targets = _targets_named(tmp_path, ["Brisa-4 b"])
    text = targets.read_text().replace("V\n", "V\n").splitlines()
    targets.write_text("\n".join([text[0] + ",remark", text[1] + ",@SUM(A1)"]) + "\n")
    out = tmp_path / "refit.csv"
    assert _run("refit", timings, "--targets", targets, "--out", out).exit_code == 0
    for path in (out, tmp_path / "refit_o_minus_c.csv"):
        for row in csv.reader(io.StringIO(path.read_text())):
            formula = [cell for cell in row if cell[:1] in ("=", "+", "@", "\t", "\r")]
            assert not formula, (path.name, formula)


@pytest.mark.parametrize("option, value, words", [
    ("--target", "Tamsin-7 b\u200f", ("field target", "U+200F", "RIGHT-TO-LEFT MARK")),
    ("--site", "\u202e", ("field site", "U+202E")),
    ("--target", "   ", ("field target", "expected a name", "nothing")),
    ("--start", "1899-12-31T22:00:00Z", ("field start_utc", "1950-01-01", "2300-12-31", "1899-12-31")),
])
def test_journal_refuses_invisible_names_and_dates_outside_the_span(tmp_path, option, value, words):
    visit = {"--target": "Tamsin-7 b", "--site": "alto_verde", "--epoch": "4", "--start": "2027-03-04T22:15:00Z",
             "--end": "2027-03-05T02:15:00Z", "--outcome": "clear", option: value}
    journal = tmp_path / "j.db"
    result = _run("journal", "add", journal, *(x for pair in visit.items() for x in pair))
    _assert_one_error_line(result, None, words)
    assert not journal.exists()


def test_names_are_one_form_whatever_the_unicode_spelling(tmp_path):
    composed, decomposed = (unicodedata.normalize(form, "Orla-\u00e9 b") for form in ("NFC", "NFD"))
    targets = _targets_named(tmp_path, [decomposed])
    ics = tmp_path / "w.ics"
    assert _run("windows", targets, "--sites", GOOD / "sites.toml", *DATES, "--ics", ics).exit_code == 0
    summaries = [str(e["SUMMARY"]) for e in icalendar.Calendar.from_ical(ics.read_bytes()).walk("VEVENT")]
    assert summaries and all(s.startswith(composed + " ") for s in summaries)


def test_an_apostrophe_typed_by_the_user_is_kept(tmp_path):
    # Only the apostrophe vigil's export adds (before = + - @ tab CR or another apostrophe) is removed.
    targets = _targets_named(tmp_path, ["'Oumuamua b", "'=odd"])
    out = tmp_path / "refit_in.csv"
    result = _run("windows", targets, "--sites", GOOD / "sites.toml", *DATES, "--csv", out, env={"COLUMNS": "200"})
    assert result.exit_code == 0, result.output
    assert "'Oumuamua b" in result.output and "''Oumuamua" not in result.output
    names = {row[0] for row in csv.reader(io.StringIO(out.read_text()))}
    assert "''Oumuamua b" in names and "'=odd" in names  # the exported forms, which read back as given
