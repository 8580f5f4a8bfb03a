"""CSV and iCalendar export checked against ISO 8601, RFC 5545 and an independent parse-back."""

import csv
import os
import re
import stat
from datetime import datetime, timezone

import icalendar
import numpy as np
import pandas as pd
import pytest
from astropy.time import Time

from authorities import calendars
from vigil import windows
from vigil.catalog import read_targets
from vigil.export.calendar import windows_calendar, write_windows_ics
from vigil.export.windows_csv import COLUMNS, TIME_COLUMNS, write_windows_csv

from conftest import DEMO_DIR

ISO_UTC = re.compile(r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}Z$")  # ISO 8601 extended, Z = UTC
TRICKY_NAME = "Ravel-3 b\nDTSTART:19700101T000000Z;X=1,BEGIN:VEVENT"


@pytest.fixture(scope="module")
def planned(demo_sites):
    """Real windows (observable or not) of the demo targets at one site over three days."""
    targets = read_targets(DEMO_DIR / "targets.csv")
    site = demo_sites["mirador_sur"]
    table = windows.plan_windows(targets, {site.name: site}, {}, Time("2027-03-01", scale="utc"),
                                 Time("2027-03-12", scale="utc"), engine="reference", include_unobservable=True)
    assert len(table) >= 5 and (table["coverage"] == "none").any() and (table["coverage"] != "none").sum() >= 2
    return table


def _read_csv_rows(path) -> list[dict]:
    with open(path, newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


def _ics_lines(path) -> list[bytes]:
    raw = path.read_bytes()
    assert raw.endswith(calendars.LINE_END)
    return raw[:-2].split(calendars.LINE_END)


def _unfolded(lines: list[bytes]) -> list[str]:
    """RFC 5545 §3.1 unfolding: a line starting with a space or tab continues the one before."""
    out: list[bytes] = []
    for line in lines:
        if line[:1] in (b" ", b"\t"):
            out[-1] += line[1:]
        else:
            out.append(line)
    return [line.decode("utf-8") for line in out]


def test_csv_columns_and_iso_8601_utc_times(planned, tmp_path):
    path = tmp_path / "windows.csv"
    write_windows_csv(planned, path)
    rows = _read_csv_rows(path)
    assert list(rows[0]) == COLUMNS
    assert len(rows) == len(planned)
    for row, (_, source) in zip(rows, planned.iterrows()):
        for column, jd_column in TIME_COLUMNS.items():
            if pd.isna(source[jd_column]):
                assert row[column] == ""
                continue
            assert ISO_UTC.match(row[column]), row[column]
            # Reference: astropy reads the ISO string back; rounding to the second allows 0.5 s.
            back = Time(row[column].rstrip("Z"), format="isot", scale="utc")
            assert abs(back.jd - source[jd_column]) * 86400.0 <= 0.5 + 1e-3


def test_csv_neutralises_formula_like_names(planned, tmp_path):
    # OWASP "CSV Injection" guidance (from memory): cells starting with = + - @ are run as
    # formulas by spreadsheets; text cells get a leading apostrophe, numbers stay numbers.
    table = planned.head(4).copy()
    table["target"] = ["=HYPERLINK(\"http://x\")", "+1", "@SUM(A1)", "-2+3"]
    path = tmp_path / "windows.csv"
    write_windows_csv(table, path)
    rows = _read_csv_rows(path)
    assert [r["target"] for r in rows] == ["'" + name for name in table["target"]]
    assert [float(r["sun_alt_mid_deg"]) for r in rows] == pytest.approx(table["sun_alt_mid_deg"].round(2).tolist())


def test_ics_parses_back_with_one_complete_event_per_row(planned, tmp_path):
    path = tmp_path / "windows.ics"
    write_windows_ics(planned, path)
    write_windows_csv(planned, tmp_path / "windows.csv")
    calendar = icalendar.Calendar.from_ical(path.read_bytes())
    events = list(calendar.walk("VEVENT"))
    observable = [row for row in _read_csv_rows(tmp_path / "windows.csv") if row["coverage"] != "none"]
    assert len(events) == len(observable) < len(planned)  # unobservable windows are never exported
    for event, row in zip(events, observable):
        # RFC 5545 §3.6.1: UID and DTSTAMP are required in every VEVENT (authorities.calendars).
        for prop in (*calendars.REQUIRED_VEVENT_PROPERTIES, "DTSTART", "DTEND", "SUMMARY", "SEQUENCE", "LAST-MODIFIED"):
            assert prop in event, prop
        # The event is the observable stretch, as in the CSV, to the second; the padded window is described.
        assert event.decoded("DTSTART") == datetime.fromisoformat(row["observable_start_utc"])
        assert event.decoded("DTEND") == datetime.fromisoformat(row["observable_end_utc"])
        assert row["window_start_utc"] in str(event["DESCRIPTION"])
        assert row["window_end_utc"] in str(event["DESCRIPTION"])
        assert "observatory's own rules" not in str(event["DESCRIPTION"])
    # RFC 7986 §5.2: the safety note once, as the calendar's own description.
    assert "observatory's own rules" in str(calendar["DESCRIPTION"])


def test_ics_lines_end_with_crlf_and_fit_75_octets(planned, tmp_path):
    # RFC 5545 §3.1: content lines are delimited by CRLF and folded so that no line is longer
    # than 75 octets, excluding the line break (authorities.calendars).
    path = tmp_path / "windows.ics"
    write_windows_ics(planned, path)
    lines = _ics_lines(path)
    assert not any(b"\n" in line or b"\r" in line for line in lines)
    longest = max(len(line) for line in lines)
    assert longest <= calendars.MAX_LINE_OCTETS, longest


def test_ics_text_with_newline_semicolon_and_comma_stays_one_value(planned, tmp_path):
    # RFC 5545 §3.3.11: TEXT escapes backslash, ';', ',' and newlines, so a name cannot start
    # new properties or events. Checked on the raw lines (own unfolding) and by parse-back.
    table = planned[planned["coverage"] != "none"].head(2).copy()
    table["target"] = TRICKY_NAME
    path = tmp_path / "windows.ics"
    write_windows_ics(table, path)
    lines = _unfolded(_ics_lines(path))
    assert sum(line == "BEGIN:VEVENT" for line in lines) == 2
    assert sum(line.startswith("DTSTART") for line in lines) == 2
    assert not any(line.startswith("X=") for line in lines)
    summaries = [str(e["SUMMARY"]) for e in icalendar.Calendar.from_ical(path.read_bytes()).walk("VEVENT")]
    assert all(s.startswith(TRICKY_NAME + " transit") for s in summaries)


def test_uids_are_stable_across_runs_and_unique(planned):
    first = [str(e["UID"]) for e in windows_calendar(planned).walk("VEVENT")]
    second = [str(e["UID"]) for e in windows_calendar(planned.copy()).walk("VEVENT")]
    assert first == second
    assert len(set(first)) == len(first)


def test_source_date_epoch_makes_the_calendar_byte_identical(planned, tmp_path, monkeypatch):
    # Reproducible-builds SOURCE_DATE_EPOCH specification: the variable fixes the timestamp.
    epoch = 1798761600  # 2027-01-01T00:00:00Z
    monkeypatch.setenv("SOURCE_DATE_EPOCH", str(epoch))
    write_windows_ics(planned, tmp_path / "a.ics")
    write_windows_ics(planned, tmp_path / "b.ics")
    assert (tmp_path / "a.ics").read_bytes() == (tmp_path / "b.ics").read_bytes()
    stamps = {e.decoded("DTSTAMP") for e in icalendar.Calendar.from_ical((tmp_path / "a.ics").read_bytes()).walk("VEVENT")}
    assert stamps == {datetime(2027, 1, 1, tzinfo=timezone.utc)}


def test_empty_windows_table_exports_header_and_empty_calendar(make_targets, demo_sites, tmp_path):
    # A range with no transit at all still writes a valid CSV header and an empty calendar.
    targets = make_targets({"name": "Corvane-3 b", "ra_deg": 287.5, "dec_deg": 5.4, "t0_bjd_tdb": 2461400.5,
                            "period_d": 24.881})
    site = demo_sites["cumbre_alta"]
    empty = windows.plan_windows(targets, {site.name: site}, {}, Time("2027-01-01", scale="utc"),
                                 Time("2027-01-03", scale="utc"))
    assert empty.empty
    write_windows_csv(empty, tmp_path / "w.csv")
    write_windows_ics(empty, tmp_path / "w.ics")
    assert (tmp_path / "w.csv").read_text().strip() == ",".join(COLUMNS)
    assert list(icalendar.Calendar.from_ical((tmp_path / "w.ics").read_bytes()).walk("VEVENT")) == []


def test_output_files_get_the_usual_permissions(planned, tmp_path):
    # POSIX open(2): a new file gets mode 0666 less the umask (common practice, no source);
    # the atomic writer must not leave its private temporary-file mode behind.
    mask = os.umask(0o022)
    try:
        write_windows_csv(planned, tmp_path / "w.csv")
    finally:
        os.umask(mask)
    assert stat.S_IMODE((tmp_path / "w.csv").stat().st_mode) == 0o644


def test_local_time_columns_agree_with_pytz():
    # Independent zone database client: pytz (Olson tz database) against the standard-library zoneinfo.
    import pytz
    from vigil.export.windows_csv import local_times

    from vigil.export.windows_csv import utc_datetimes

    jd = np.array([2461407.6259, 2461590.1])  # 2027-01-02 (southern summer) and 2027-07-04 (winter)
    table = pd.DataFrame({"site": ["s", "s"], "mid_utc": utc_datetimes(jd), "window_start_utc": utc_datetimes(jd - 0.1),
                          "window_end_utc": utc_datetimes(jd + 0.1)})
    local = local_times(table, {"s": "America/Santiago"})
    for text, value in zip(local["mid_local"], jd):
        utc = Time(value, format="jd", scale="utc").to_datetime(timezone=timezone.utc)
        expected = utc.astimezone(pytz.timezone("America/Santiago"))
        got = datetime.fromisoformat(text)
        assert abs((got - expected).total_seconds()) <= 0.5
        assert got.utcoffset() == expected.utcoffset()


def test_events_say_when_the_moon_is_below_the_horizon(planned):
    # The windows' Moon altitude at mid (fast engine, checked against astropy AltAz in
    # test_fast_engine) decides the wording: a Moon that is down is said to be so.
    observable = planned[(planned["coverage"] != "none") & planned["observable_start_jd_utc"].notna()]
    events = list(windows_calendar(planned).walk("VEVENT"))
    said_down = sum("Moon" in str(e["DESCRIPTION"]) and "(below the horizon)" in str(e["DESCRIPTION"]) for e in events)
    assert len(events) == len(observable)
    assert said_down == int((observable["moon_alt_mid_deg"] < 0).sum()) > 0
