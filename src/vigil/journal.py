"""Campaign journal: the visits planned and carried out, kept in one SQLite file.

One row per visit:
  target, site      names (text)
  epoch             transit number as the campaign counts it (whole number)
  start_utc,        start and end of the visit, ISO 8601 UTC with a trailing Z
  end_utc           (e.g. 2027-03-04T22:15:00Z), stored to the whole second
  status            planned or executed
  outcome           clear, partial, weather or technical; empty while planned
  mid_bjd_tdb,      measured mid-transit time (BJD_TDB, days) and its 1-sigma (days), both or
  mid_err_d         neither; only an executed clear or partial visit yields one
  in_transit_h,     hours collected inside the transit and out of it (optional, >= 0; together
  baseline_h        no longer than the visit)
  notes             free text (optional; line breaks stored as LF)
A visit is planned at most once and executed at most once: (target, site, epoch, status) is
unique. The file's schema version, checks and migrations: vigil.journal_file.

Every write is one SQLite transaction: a rejected entry, or a crash part way through an
import, leaves the journal exactly as it was.

CSV form: the columns above in that order, one visit per line. Text cells follow the
spreadsheet-safety rule of vigil.export.table: export adds a leading apostrophe to text a
spreadsheet would run as a formula or that starts with an apostrophe; import removes exactly
that apostrophe; so export followed by import gives the same entries.
"""

from __future__ import annotations

import csv
import io
import math
import sqlite3
from pathlib import Path
from typing import Iterable, Mapping

import numpy as np
import pandas as pd
from astropy.time import Time

from vigil import journal_file
from vigil.timescales import MIN_PLAUSIBLE_JD, check_plan_date
from vigil.ephemeris.timing_checks import FORCED_MARK, is_forced, outside_visit
from vigil.errors import ArgumentError, InputError
from vigil.names import clean_name
from vigil.export.table import iso_utc, restore_cell, utc_from_iso, write_csv

COLUMNS = ("target", "site", "epoch", "start_utc", "end_utc", "status", "outcome",
           "mid_bjd_tdb", "mid_err_d", "in_transit_h", "baseline_h", "notes")
REQUIRED_COLUMNS = ("target", "site", "epoch", "start_utc", "end_utc", "status")
TEXT_COLUMNS = ("target", "site", "notes")
FLOAT_COLUMNS = ("mid_bjd_tdb", "mid_err_d", "in_transit_h", "baseline_h")
STATUSES = ("planned", "executed")
OUTCOMES = ("clear", "partial", "weather", "technical")
DATA_OUTCOMES = ("clear", "partial")  # the outcomes that collect light curves
VISIT_COLUMNS = ("target", "site", "epoch", "start_jd_utc", "end_jd_utc", "in_transit_h", "baseline_h")
# Start and end are stored to the second; allow that rounding when hours are checked against the span.
_SPAN_TOLERANCE_H = 2.0 / 3600.0
_UTC_EXAMPLE = "2027-03-04T22:15:00Z"


def _sql_list(values) -> str:
    return ", ".join(f"'{v}'" for v in values)


_SCHEMA = f"""
CREATE TABLE visit (
    target TEXT NOT NULL,
    site TEXT NOT NULL,
    epoch INTEGER NOT NULL,
    start_utc TEXT NOT NULL,
    end_utc TEXT NOT NULL,
    status TEXT NOT NULL CHECK (status IN ({_sql_list(STATUSES)})),
    outcome TEXT CHECK (outcome IN ({_sql_list(OUTCOMES)})),
    mid_bjd_tdb REAL,
    mid_err_d REAL CHECK (mid_err_d > 0),
    in_transit_h REAL CHECK (in_transit_h >= 0),
    baseline_h REAL CHECK (baseline_h >= 0),
    notes TEXT,
    UNIQUE (target, site, epoch, status),
    CHECK ((status = 'planned') = (outcome IS NULL)),
    CHECK ((mid_bjd_tdb IS NULL) = (mid_err_d IS NULL))
)
"""


def open_journal(path: str | Path, write: bool = True) -> "Journal":
    """Open the journal at `path` for writing (created when missing) or only for reading.

    The file is checked first (vigil.journal_file): schema version, damage, foreign files; a
    read never creates or migrates it. Any SQLite error while it is open becomes one InputError
    line naming the file.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with open_journal(pathlib.Path(tempfile.mkdtemp()) / "j.db") as journal:
    ...     len(journal.entries())
    0
    """
    path = Path(path)
    created = not path.exists()
    return Journal(journal_file.connect(path, _SCHEMA, COLUMNS, write), path, created)


class Journal:
    """An open campaign journal (see the module docstring); get one from `open_journal`."""

    def __init__(self, db: sqlite3.Connection, path: Path, created: bool = False):
        self._db = db
        self.path = path
        self._created = created  # a journal this open created is removed if its first use fails

    def __enter__(self) -> "Journal":
        return self

    def __exit__(self, kind, error, trace) -> None:
        self.close()
        if error is not None and self._created:
            journal_file.remove_new(self.path)
        if isinstance(error, sqlite3.Error):
            raise InputError(journal_file.describe_error(self.path, error)) from None

    def close(self) -> None:
        self._db.close()

    def add(self, entry: Mapping, force: bool = False) -> None:
        """Record one visit, given as a mapping of the journal's columns (module docstring).

        With `force`, a measured mid-time that fails its checks (outside the visit) is recorded,
        its notes marked as forced (vigil.ephemeris.timing_checks.FORCED_MARK).

        Examples
        --------
        >>> journal.add({"target": "Marrow b", "site": "ridge", "epoch": 12, "status": "planned",
        ...              "start_utc": "2027-03-04T22:15:00Z", "end_utc": "2027-03-05T02:45:00Z"})  # doctest: +SKIP
        """
        if force:
            entry = {**entry, "notes": f"{FORCED_MARK} {entry.get('notes') or ''}".strip()}
        self._add_all([("journal entry", entry)])

    def add_planned_visits(self, visits: pd.DataFrame) -> int:
        """Record a campaign's visits table (vigil.campaign) as planned visits; return how many.

        Uses target, site, epoch, start_jd_utc, end_jd_utc (JD UTC), in_transit_h, baseline_h.
        """
        missing = [c for c in VISIT_COLUMNS if c not in visits.columns]
        if missing:
            raise InputError(f"visits table: missing column(s) {', '.join(missing)}; expected {', '.join(VISIT_COLUMNS)}")
        starts, ends = iso_utc(visits["start_jd_utc"]), iso_utc(visits["end_jd_utc"])
        rows = visits[list(VISIT_COLUMNS)].to_dict("records")
        entries = (
            (f"visits table row {i}", {
                "target": row["target"], "site": row["site"], "epoch": row["epoch"],
                "start_utc": start, "end_utc": end, "status": "planned",
                "in_transit_h": row["in_transit_h"], "baseline_h": row["baseline_h"],
            })
            for i, (row, start, end) in enumerate(zip(rows, starts, ends))
        )
        return self._add_all(entries)

    def import_csv(self, path: str | Path) -> int:
        """Add every visit in a journal CSV (module docstring); all or none. Return how many."""
        path = Path(path)
        return self._add_all((f"{path}: line {line}", entry) for line, entry in _csv_entries(path))

    def _add_all(self, entries: Iterable[tuple[str, Mapping]]) -> int:
        count = 0
        with journal_file.transaction(self._db):
            for where, entry in entries:
                _insert(self._db, validated_entry(entry, where), where)
                count += 1
        return count

    def entries(self, target: str | None = None, status: str | None = None) -> pd.DataFrame:
        """Visits in time order, optionally of one target and/or one status.

        Parameters
        ----------
        target : str, optional
        status : {"planned", "executed"}, optional

        Returns
        -------
        pandas.DataFrame
            The columns of COLUMNS (module docstring); start_utc and end_utc as timezone-aware
            UTC datetimes (datetime64[s, UTC], like the windows table; a leap second shows as
            23:59:59, `export_csv` keeps it), mid_bjd_tdb as float days; missing numbers NaN,
            missing text (outcome, notes) None.

        Examples
        --------
        >>> journal.entries(status="executed")["start_utc"].dt.year  # doctest: +SKIP
        """
        table = self._stored(target, status)
        for column in ("start_utc", "end_utc"):
            table[column] = utc_from_iso(table[column]).set_axis(table.index)
        return table

    def _stored(self, target: str | None = None, status: str | None = None) -> pd.DataFrame:
        """The visits as stored: times as ISO 8601 text with a trailing Z."""
        clauses, values = [], []
        if target is not None:
            clauses.append("target = ?")
            values.append(target)
        if status is not None:
            if status not in STATUSES:
                raise ArgumentError("status", f"expected {' or '.join(STATUSES)}, got {status!r}")
            clauses.append("status = ?")
            values.append(status)
        where = f"WHERE {' AND '.join(clauses)}" if clauses else ""
        rows = self._db.execute(f"SELECT {', '.join(COLUMNS)} FROM visit {where} "
                                "ORDER BY start_utc, target, site, status", values).fetchall()
        table = pd.DataFrame(rows, columns=list(COLUMNS))
        table["epoch"] = table["epoch"].astype(np.int64)
        for column in FLOAT_COLUMNS:
            table[column] = table[column].astype(float)
        return table.astype({c: object for c in TEXT_COLUMNS + ("outcome",)})

    def export_csv(self, path: str | Path) -> Path:
        """Write every visit to a CSV file (atomically, spreadsheet-safe; module docstring)."""
        write_csv(self._stored(), path)
        return Path(path)

    def executed_hours(self) -> pd.DataFrame:
        """Per target, over executed clear or partial visits: visits, in_transit_h, baseline_h (hours)."""
        rows = self._db.execute(
            "SELECT target, COUNT(*), TOTAL(in_transit_h), TOTAL(baseline_h) FROM visit "
            f"WHERE status = 'executed' AND outcome IN ({_sql_list(DATA_OUTCOMES)}) GROUP BY target ORDER BY target"
        ).fetchall()
        return pd.DataFrame(rows, columns=["target", "visits", "in_transit_h", "baseline_h"])

    def timings(self) -> pd.DataFrame:
        """Measured mid-times as vigil.ephemeris.refit.refit_targets reads them: target, mid_bjd_tdb,
        mid_err_d, note, plus the visit's epoch and whether the timing was forced past its checks.

        The note names the site and epoch, then the visit's notes if any.
        """
        rows = self._db.execute(
            "SELECT target, mid_bjd_tdb, mid_err_d, site, epoch, notes FROM visit "
            "WHERE status = 'executed' AND mid_bjd_tdb IS NOT NULL ORDER BY target, mid_bjd_tdb"
        ).fetchall()
        return pd.DataFrame(
            [(t, mid, err, f"{site} epoch {epoch}" + (f"; {notes}" if notes else ""), epoch, is_forced(notes))
             for t, mid, err, site, epoch, notes in rows],
            columns=["target", "mid_bjd_tdb", "mid_err_d", "note", "epoch", "forced"],
        ).astype({"epoch": np.int64, "forced": bool})


def _insert(db: sqlite3.Connection, row: dict, where: str) -> None:
    try:
        db.execute(f"INSERT INTO visit ({', '.join(COLUMNS)}) VALUES ({', '.join('?' * len(COLUMNS))})",
                   [row[c] for c in COLUMNS])
    except sqlite3.IntegrityError as exc:
        if "UNIQUE" not in str(exc):
            raise
        raise InputError(f"{where}: the {row['status']} visit of target {row['target']!r} at site {row['site']!r}, "
                         f"epoch {row['epoch']}, is already in the journal") from None


def _csv_entries(path: Path):
    """Yield (line number, {column: cell}) for each non-blank row of a journal CSV."""
    try:
        with open(path, newline="", encoding="utf-8-sig") as handle:
            text = handle.read()
    except OSError as exc:
        raise InputError(f"{path}: cannot read file ({exc.strerror})") from None
    except UnicodeDecodeError as exc:
        raise InputError(f"{path}: not UTF-8 text (bad byte at offset {exc.start})") from None
    reader = csv.reader(io.StringIO(text))
    header = [name.strip() for name in next(reader, [])]
    _check_header(path, header)
    while True:
        line = reader.line_num + 1  # first physical line of the next record
        try:
            cells = next(reader)
        except StopIteration:
            return
        except csv.Error as exc:
            raise InputError(f"{path}: line {line}: not valid CSV ({exc})") from None
        if not any(cell.strip() for cell in cells):
            continue
        if len(cells) != len(header):
            raise InputError(f"{path}: line {line}: expected {len(header)} fields as in the header, got {len(cells)}")
        yield line, {name: _unescaped(name, cell) for name, cell in zip(header, cells)}


def _check_header(path: Path, header: list[str]) -> None:
    if not header:
        raise InputError(f"{path}: file is empty; expected a header line with {', '.join(COLUMNS)}")
    missing = [c for c in REQUIRED_COLUMNS if c not in header]
    unknown = [c for c in header if c not in COLUMNS]
    repeated = sorted({c for c in header if header.count(c) > 1})
    if missing or unknown or repeated:
        problem = (f"missing column(s) {', '.join(missing)}" if missing else
                   f"unknown column(s) {', '.join(unknown)}" if unknown else f"repeated column(s) {', '.join(repeated)}")
        raise InputError(f"{path}: line 1: {problem}; expected {', '.join(COLUMNS)}")


def _unescaped(column: str, cell: str) -> str:
    return restore_cell(cell) if column in TEXT_COLUMNS else cell


def validated_entry(entry: Mapping, where: str) -> dict:
    """The entry as stored: every field checked, times normalised; InputError names the field."""
    unknown = [k for k in entry if k not in COLUMNS]
    if unknown:
        raise InputError(f"{where}: unknown field(s) {', '.join(map(str, unknown))}; expected {', '.join(COLUMNS)}")
    value = {c: _blank_to_none(entry.get(c)) for c in COLUMNS}
    row = {
        "target": _name(where, "target", value["target"]),
        "site": _name(where, "site", value["site"]),
        "epoch": _epoch(where, value["epoch"]),
        "start_utc": _utc(where, "start_utc", value["start_utc"]),
        "end_utc": _utc(where, "end_utc", value["end_utc"]),
        "status": _choice(where, "status", value["status"], STATUSES),
        "outcome": None if value["outcome"] is None else _choice(where, "outcome", value["outcome"], OUTCOMES),
        "mid_bjd_tdb": _number(where, "mid_bjd_tdb", value["mid_bjd_tdb"],
                               f"a full Julian date in BJD_TDB (>= {MIN_PLAUSIBLE_JD:.0f})", lambda x: x >= MIN_PLAUSIBLE_JD),
        "mid_err_d": _number(where, "mid_err_d", value["mid_err_d"], "a positive uncertainty in days", lambda x: x > 0),
        "in_transit_h": _number(where, "in_transit_h", value["in_transit_h"], "hours >= 0", lambda x: x >= 0),
        "baseline_h": _number(where, "baseline_h", value["baseline_h"], "hours >= 0", lambda x: x >= 0),
        "notes": None if value["notes"] is None else _line_breaks(str(value["notes"])),
    }
    _check_consistency(where, row)
    return row


def _check_consistency(where: str, row: dict) -> None:
    if row["status"] == "executed" and row["outcome"] is None:
        raise InputError(f"{where}, field outcome: expected one of {', '.join(OUTCOMES)} for an executed visit, got nothing")
    if row["status"] == "planned" and row["outcome"] is not None:
        raise InputError(f"{where}, field outcome: expected nothing for a planned visit, got {row['outcome']!r}")
    if (row["mid_bjd_tdb"] is None) != (row["mid_err_d"] is None):
        given, absent = ("mid_bjd_tdb", "mid_err_d") if row["mid_err_d"] is None else ("mid_err_d", "mid_bjd_tdb")
        raise InputError(f"{where}, field {absent}: expected with {given} (both or neither), got nothing")
    if row["mid_bjd_tdb"] is not None and row["outcome"] not in DATA_OUTCOMES:
        raise InputError(f"{where}, field mid_bjd_tdb: a measured mid-time needs an executed clear or partial visit, "
                         f"got status {row['status']} and outcome {row['outcome']}")
    start, end = (Time(row[c][:-1], format="isot", scale="utc") for c in ("start_utc", "end_utc"))
    span_h = (end - start).to_value("hour")
    if row["mid_bjd_tdb"] is not None and not is_forced(row["notes"]):
        problem = outside_visit(row["mid_bjd_tdb"], start.jd, end.jd)
        if problem:
            raise ArgumentError("force", "", f"{where}, field mid_bjd_tdb: {problem} (BJD_TDB {row['mid_bjd_tdb']}); "
                                             "refused ({argument} records it anyway, marked, if it is right)")
    if span_h <= 0:
        raise InputError(f"{where}, field end_utc: expected a time after start_utc {row['start_utc']}, got {row['end_utc']}")
    hours = (row["in_transit_h"] or 0.0) + (row["baseline_h"] or 0.0)
    if hours > span_h + _SPAN_TOLERANCE_H:
        raise InputError(f"{where}, fields in_transit_h and baseline_h: expected together at most the visit's "
                         f"{span_h:.3f} h, got {hours:.3f} h")


def _blank_to_none(value):
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return None
    if isinstance(value, str) and not value.strip():
        return None
    return value


def _line_breaks(text: str) -> str:
    """Text with every line break as LF (CR LF and lone CR are what other systems write)."""
    return text.replace("\r\n", "\n").replace("\r", "\n")


def _problem(where: str, field: str, expected: str, value) -> InputError:
    got = "nothing" if value is None else repr(value)
    return InputError(f"{where}, field {field}: expected {expected}, got {got}")


def _name(where: str, field: str, value) -> str:
    if not isinstance(value, str):
        raise _problem(where, field, "a name", value)
    return clean_name(value, f"{where}, field {field}")


def _as_float(value) -> float:
    """The value as a finite float, or NaN when it is not a number (booleans are not)."""
    if isinstance(value, bool):
        return math.nan
    try:
        number = float(value.strip()) if isinstance(value, str) else float(value)
    except (TypeError, ValueError):
        return math.nan
    return number if math.isfinite(number) else math.nan


def _epoch(where: str, value) -> int:
    number = _as_float(value)
    if math.isnan(number) or number != round(number):
        raise _problem(where, "epoch", "a whole transit number", value)
    return int(number)


def _utc(where: str, field: str, value) -> str:
    expected = f"an ISO 8601 UTC time ending in Z, like {_UTC_EXAMPLE}"
    if not isinstance(value, str) or not value.strip().endswith("Z"):
        raise _problem(where, field, expected, value)
    try:
        time = Time(value.strip()[:-1], format="isot", scale="utc", precision=0)
    except ValueError:
        raise _problem(where, field, expected, value) from None
    check_plan_date(time, f"{where}, field {field}")
    return time.isot + "Z"


def _choice(where: str, field: str, value, choices) -> str:
    text = value.strip() if isinstance(value, str) else value
    if text not in choices:
        raise _problem(where, field, f"one of {', '.join(choices)}", value)
    return text


def _number(where: str, field: str, value, expected: str, acceptable) -> float | None:
    if value is None:
        return None
    number = _as_float(value)
    if math.isnan(number) or not acceptable(number):
        raise _problem(where, field, expected, value)
    return number
