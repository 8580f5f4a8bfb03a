"""The windows table as an RFC 5545 iCalendar, written with the `icalendar` library.

Each observable window is one VEVENT spanning its observable stretch (UTC); the padded window
and the transit's times are in the description, the safety note once in the calendar's own
description (RFC 7986 DESCRIPTION, and X-WR-CALDESC which many programs read). Windows with
nothing observable (coverage none) are never exported. Transits of planets of one host whose
windows overlap at a site (the `shared_with` column) are one pointing and one VEVENT naming
every planet, spanning their observable stretches.

The UID is derived from target, site, epoch and event kind, so importing a newer calendar
updates events instead of duplicating them. When the file being replaced is an earlier vigil
calendar, each event keeps its SEQUENCE and LAST-MODIFIED unless its times changed (the
observable stretch, ingress, mid or egress), in which case SEQUENCE grows by one and
LAST-MODIFIED is this run (RFC 5545 3.8.7.4: SEQUENCE increases on each significant revision).
A change of the padding alone (the description's padded window) is not a new revision.
DTSTAMP is the moment of the run, or SOURCE_DATE_EPOCH (the reproducible-builds convention) when set.
"""

from __future__ import annotations

import hashlib
import logging
import os
import uuid
from contextlib import ExitStack, contextmanager
from datetime import datetime, timezone
from pathlib import Path
from typing import Callable, Iterator

import icalendar
import numpy as np
import pandas as pd

from vigil.errors import InputError
from vigil.export.files import atomic_stream
from vigil.export.table import iso_utc
from vigil.export.windows_csv import jd_view
from vigil.hosts import overlap_groups
from vigil.time_units import MINUTES_PER_DAY

log = logging.getLogger("vigil")
_UID_NAMESPACE = uuid.UUID("5f1c2b9e-3d4a-4e8f-9b6c-7a1d2e3f4b5c")
SAFETY_NOTE = ("Plan only within the observatory's own rules for night work and Sun avoidance; "
               "times are predictions, not a substitute for them.")
_CALENDAR_END = b"END:VCALENDAR\r\n"
TIMES_KEY = "X-VIGIL-TIMES"  # digest of the event's times, to tell a revision from a rerun
_TIME_COLUMNS = ("observable_start_jd_utc", "observable_end_jd_utc", "ingress_jd_utc", "mid_jd_utc", "egress_jd_utc")
_WINDOW_COLUMNS = ("window_start_jd_utc", "window_end_jd_utc", "meridian_jd_utc")  # in the description only
_ISO_PREFIX = "iso_"


def event_uid(target: str, site: str, epoch, kind: str = "transit") -> str:
    """Stable identifier of one transit (or occultation) at one site; for a shared pointing,
    target is "b + c" and epoch "12+7" (each planet's epoch).

    Derived from the exact names (no case, space or Unicode folding); a `|` or backslash in a
    name is escaped, so two different (target, site) pairs never share a key.

    Examples
    --------
    >>> event_uid("a|b", "c", 1) != event_uid("a", "b|c", 1)
    True
    """
    key = (f"{_uid_field(target)}|{_uid_field(site)}|{epoch if isinstance(epoch, str) else int(epoch)}"
           + ("" if kind == "transit" else f"|{kind}"))
    return f"{uuid.uuid5(_UID_NAMESPACE, key)}@vigil"


_LAST_EPOCH_S = 253402300799  # 9999-12-31T23:59:59Z, the last instant a calendar date-time can hold


def _uid_field(name: str) -> str:
    return name.replace("\\", "\\\\").replace("|", "\\|")


def run_stamp() -> datetime:
    """DTSTAMP for this run: SOURCE_DATE_EPOCH when set, else now (UTC).

    The variable must hold whole seconds since 1970-01-01 UTC in ASCII digits, as `date +%s`
    prints them (reproducible-builds.org specification); anything else is an InputError
    rather than silently "now".

    Examples
    --------
    >>> os.environ["SOURCE_DATE_EPOCH"] = "1800000000"
    >>> run_stamp().isoformat()
    '2027-01-15T08:00:00+00:00'
    >>> del os.environ["SOURCE_DATE_EPOCH"]
    """
    fixed = os.environ.get("SOURCE_DATE_EPOCH")
    if fixed is None or fixed == "":
        return datetime.now(timezone.utc).replace(microsecond=0)
    if not (fixed.isascii() and fixed.isdigit()) or int(fixed) > _LAST_EPOCH_S:
        raise InputError(f"environment variable SOURCE_DATE_EPOCH: expected whole seconds since 1970-01-01 UTC in "
                         f"digits 0-9 (e.g. 1800000000, at most {_LAST_EPOCH_S}), got {fixed!r}; unset it to stamp "
                         "the calendar with the time of the run")
    return datetime.fromtimestamp(int(fixed), tz=timezone.utc)


def _iso(w, column: str) -> str:
    """The row's time `column` (JD UTC) as ISO 8601 UTC text to the second, as in the CSV
    (computed for the whole piece by `_observable_rows`)."""
    return getattr(w, _ISO_PREFIX + column)


def _times_digest(rows) -> str:
    times = "|".join(_iso(w, c) for w in rows for c in _TIME_COLUMNS)
    return hashlib.sha256(times.encode()).hexdigest()[:16]


def _conditions(w) -> str:
    """Conditions at mid-event; a space site has no altitude or airmass."""
    moon = f"Moon {w.moon_sep_deg:.0f}° away" if w.moon_sep_deg == w.moon_sep_deg else "Moon not computed"
    if getattr(w, "moon_alt_mid_deg", 0.0) < 0.0:  # NaN (space, older tables) compares False
        moon += " (below the horizon)"
    if w.alt_mid_deg != w.alt_mid_deg:  # NaN
        return f"At mid: {moon}"
    return f"At mid: altitude {w.alt_mid_deg:.1f}°, airmass {w.airmass_mid:.2f}, {moon}"


def _meridian(w) -> list[str]:
    meridian = getattr(w, _ISO_PREFIX + "meridian_jd_utc", "")
    if not meridian:
        return []
    inside = " (inside the transit: a German equatorial mount flips during it)" if w.meridian_in_transit else ""
    return [f"Meridian crossing {meridian}{inside}"]


def _event_lines(w, kind: str) -> list[str]:
    return [
        f"Observable {_iso(w, 'observable_start_jd_utc')} to {_iso(w, 'observable_end_jd_utc')}: coverage {w.coverage}, "
        f"{100 * w.observable_fraction:.0f}% of the {kind} observable",
        f"Mid-{kind} {_iso(w, 'mid_jd_utc')} ± {w.mid_sigma_d * MINUTES_PER_DAY:.1f} min (1σ); BJD_TDB {w.mid_bjd_tdb:.5f}",
        f"Ingress {_iso(w, 'ingress_jd_utc')}, egress {_iso(w, 'egress_jd_utc')}",
        f"Padded window (baseline and timing) {_iso(w, 'window_start_jd_utc')} to {_iso(w, 'window_end_jd_utc')}",
        *_meridian(w),
        _conditions(w),
        *(["Stale ephemeris: the timing padding exceeds the limit; refresh it (vigil refit)"] if w.stale else []),
    ]


def _describe(rows, kind: str, timezone_name: str | None = None) -> str:
    """The description of one event: one window, or each planet's window of a shared pointing."""
    lines = _event_lines(rows[0], kind) if len(rows) == 1 else [
        line for w in rows for line in (f"{w.target}:", *(f"  {text}" for text in _event_lines(w, kind)))]
    lines += [f"Times are UTC; the site's time zone is {timezone_name}"] if timezone_name else []
    return "\n".join(lines)


def _shared(w) -> bool:
    """Does the window row share its pointing with planets of its host (`shared_with`)?"""
    shared = getattr(w, "shared_with", "")
    return isinstance(shared, str) and bool(shared)


def _pointing_key(w) -> str:
    """Rows with one key whose windows overlap are one pointing (hosts.overlap_groups)."""
    if not _shared(w):
        return f"{w.site}|{w.target}|{w.epoch}"
    return f"{w.site}|" + "; ".join(sorted({w.target, *w.shared_with.split("; ")}))


def _pointings(rows: list) -> list[list[int]]:
    """Positions of the window rows (namedtuples, table order) grouped by pointing, each group
    in row order and the groups in the order of their first rows: alone, or with the planets of
    its host it is shared with."""
    if not rows:
        return []
    groups = overlap_groups([_pointing_key(w) for w in rows], [w.window_start_jd_utc for w in rows],
                            [w.window_end_jd_utc for w in rows])
    order = np.argsort(groups, kind="stable")
    return np.split(order, np.flatnonzero(np.diff(groups[order])) + 1)


def _observable_rows(windows: pd.DataFrame) -> list:
    """The rows of the windows table that become events (some time observable), as namedtuples
    with each time also as ISO text (`_iso`)."""
    windows = jd_view(windows)
    observable = windows[(windows["coverage"].astype(str) != "none") & windows["observable_start_jd_utc"].notna()]
    times = [c for c in (*_TIME_COLUMNS, *_WINDOW_COLUMNS) if c in observable.columns]
    texts = iso_utc(observable[times].to_numpy(dtype=float).ravel()).reshape(len(observable), len(times))
    return list(observable.assign(**{_ISO_PREFIX + c: texts[:, i] for i, c in enumerate(times)}).itertuples(index=False))


class _PointingQueue:
    """Observable rows arriving piece by piece (table order), handed out as pointings once
    complete: a pointing led by one piece may take rows of the next non-empty piece (windows
    overlapping across the cut, as `hosts.mark_shared` finds them), so each piece's rows wait
    for the next rows to come."""

    def __init__(self):
        self._waiting: list = []

    def push(self, rows: list) -> list[list]:
        """The pointings led by the waiting rows, now that the next `rows` are known (none: later)."""
        if not rows:
            return []
        shared = [i for i, w in enumerate(rows) if _shared(w)]
        table = self._waiting + [rows[i] for i in shared]
        done, taken = [], set()
        for group in _pointings(table):
            if group[0] < len(self._waiting):
                done.append([table[i] for i in group])
                taken.update(shared[i - len(self._waiting)] for i in group if i >= len(self._waiting))
        self._waiting = [w for i, w in enumerate(rows) if i not in taken]
        return done

    def flush(self) -> list[list]:
        """The pointings of the rows still waiting (after the last piece)."""
        table, self._waiting = self._waiting, []
        return [[table[i] for i in group] for group in _pointings(table)]


def _previous_revisions(path: Path | None) -> dict:
    """UID -> (times digest, SEQUENCE, LAST-MODIFIED) from the vigil calendar being replaced."""
    if path is None or not Path(path).is_file():
        return {}
    try:
        old = icalendar.Calendar.from_ical(Path(path).read_bytes())
    except ValueError:
        log.info(f"{path}: not a readable calendar; event SEQUENCE numbers start again at 0")
        return {}
    return {str(e["UID"]): (str(e.get(TIMES_KEY, "")), int(e.get("SEQUENCE", 0)), e.decoded("LAST-MODIFIED", None))
            for e in old.walk("VEVENT")}


def _calendar_head() -> icalendar.Calendar:
    """The calendar's own properties, without events."""
    calendar = icalendar.Calendar()
    calendar.add("prodid", "-//vigil//transit windows//EN")
    calendar.add("version", "2.0")
    calendar.add("calscale", "GREGORIAN")
    calendar.add("name", "vigil observing windows")
    calendar.add("description", SAFETY_NOTE)
    calendar.add("x-wr-caldesc", SAFETY_NOTE)
    return calendar


def _event(rows: list, timezones: dict, previous: dict, stamp: datetime) -> icalendar.Event:
    """The VEVENT of one pointing (its window rows)."""
    w = rows[0]
    kind = str(getattr(w, "event", "transit"))
    names = " + ".join(r.target for r in rows)
    uid = event_uid(names, w.site, "+".join(str(int(r.epoch)) for r in rows), kind)
    digest = _times_digest(rows)
    old_digest, sequence, modified = previous.get(uid, (digest, 0, None))
    if old_digest != digest:
        sequence, modified = sequence + 1, None
    event = icalendar.Event()
    event.add("uid", uid)
    event.add("dtstamp", stamp)
    event.add("sequence", sequence)
    event.add("last-modified", modified or stamp)
    # Rounded to the second exactly as in the CSV, so both files show the same times.
    event.add("dtstart", datetime.fromisoformat(_iso(min(rows, key=lambda r: r.observable_start_jd_utc),
                                                     "observable_start_jd_utc")))
    event.add("dtend", datetime.fromisoformat(_iso(max(rows, key=lambda r: r.observable_end_jd_utc),
                                                   "observable_end_jd_utc")))
    coverage = ", ".join(f"{r.coverage} {100 * r.observable_fraction:.0f}%" for r in rows)
    stale = any(bool(r.stale) for r in rows)
    event.add("summary", f"{names} {kind}{'s' if len(rows) > 1 else ''}, {coverage} ({w.site})"
                         + (" STALE ephemeris" if stale else ""))
    event.add("location", str(w.site))
    event.add("description", _describe(rows, kind, timezones.get(w.site)))
    event.add("categories", [kind, *dict.fromkeys(str(r.coverage) for r in rows)] + (["stale"] if stale else []))
    event.add("transp", "TRANSPARENT")
    event.add(TIMES_KEY, digest)
    return event


def windows_calendar(windows: pd.DataFrame, timezones: dict | None = None, previous: dict | None = None
                     ) -> icalendar.Calendar:
    """One VEVENT per observable pointing of the windows table; `timezones` (site -> IANA zone)
    are named in the descriptions; `previous` (from the calendar being replaced) carries
    SEQUENCE forward.

    Example: ``windows_calendar(windows, {"mirador_sur": "America/Santiago"}).to_ical()``.
    """
    calendar, stamp, queue = _calendar_head(), run_stamp(), _PointingQueue()
    for rows in [*queue.push(_observable_rows(windows)), *queue.flush()]:
        calendar.add_component(_event(rows, timezones or {}, previous or {}, stamp))
    return calendar


def write_windows_ics(windows: pd.DataFrame, path, timezones: dict | None = None) -> None:
    """Write the windows calendar atomically (CRLF line ends, folded lines, escaped text); an
    earlier vigil calendar at `path` carries each unchanged event's SEQUENCE forward."""
    with windows_ics_writer(path, timezones) as add:
        add(windows)


@contextmanager
def windows_ics_writer(path, timezones: dict | None = None) -> Iterator[Callable[[pd.DataFrame], None]]:
    """A function that appends consecutive pieces of the windows table (vigil.sweep.iter_windows)
    to the calendar at `path` as `write_windows_ics` writes it whole, holding about two pieces
    at a time; the file appears only when the block ends without an error.

    Examples
    --------
    >>> with windows_ics_writer("windows.ics") as add:  # doctest: +SKIP
    ...     for piece in iter_windows(targets, sites, {}, start, end):
    ...         add(piece)
    """
    with ExitStack() as opened:
        calendar = _CalendarStream(lambda: opened.enter_context(atomic_stream(path)), path, timezones or {})
        yield calendar.add
        calendar.close()


class _CalendarStream:
    """The calendar written event by event as pointings complete. The file is opened, and the
    calendar being replaced read, when the first piece comes (after any error in the input has
    been reported, and after the outputs opened before it)."""

    def __init__(self, open_stream: Callable, path, timezones: dict):
        self._open, self._path, self._timezones = open_stream, path, timezones
        self._stamp, self._queue, self._stream, self._previous = run_stamp(), _PointingQueue(), None, {}

    def add(self, piece: pd.DataFrame) -> None:
        self._write(self._queue.push(_observable_rows(piece)))

    def close(self) -> None:
        self._write(self._queue.flush())
        self._stream.write(_CALENDAR_END)

    def _write(self, pointings: list[list]) -> None:
        if self._stream is None:
            self._stream, self._previous = self._open(), _previous_revisions(self._path)
            self._stream.write(_calendar_head().to_ical()[:-len(_CALENDAR_END)])
        for rows in pointings:
            self._stream.write(_event(rows, self._timezones, self._previous, self._stamp).to_ical())
