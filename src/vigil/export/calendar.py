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
from datetime import datetime, timezone
from pathlib import Path

import icalendar
import numpy as np
import pandas as pd

from vigil.errors import InputError
from vigil.export.files import write_atomic
from vigil.export.table import iso_utc
from vigil.export.windows_csv import jd_view
from vigil.hosts import overlap_groups
from vigil.time_units import MINUTES_PER_DAY

log = logging.getLogger("vigil")
_UID_NAMESPACE = uuid.UUID("5f1c2b9e-3d4a-4e8f-9b6c-7a1d2e3f4b5c")
SAFETY_NOTE = ("Plan only within the observatory's own rules for night work and Sun avoidance; "
               "times are predictions, not a substitute for them.")
TIMES_KEY = "X-VIGIL-TIMES"  # digest of the event's times, to tell a revision from a rerun
_TIME_COLUMNS = ("observable_start_jd_utc", "observable_end_jd_utc", "ingress_jd_utc", "mid_jd_utc", "egress_jd_utc")


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


def _iso(jd_utc) -> str:
    return iso_utc([jd_utc])[0]


def _utc(jd_utc: float) -> datetime:
    # Rounded to the second exactly as in the CSV, so both files show the same times.
    return datetime.fromisoformat(_iso(jd_utc))


def _times_digest(rows) -> str:
    times = "|".join(_iso(getattr(w, c)) for w in rows for c in _TIME_COLUMNS)
    return hashlib.sha256(times.encode()).hexdigest()[:16]


def _conditions(w) -> str:
    """Conditions at mid-event; a space site has no altitude or airmass."""
    moon = f"Moon {w.moon_sep_deg:.0f}° away" if w.moon_sep_deg == w.moon_sep_deg else "Moon not computed"
    if w.alt_mid_deg != w.alt_mid_deg:  # NaN
        return f"At mid: {moon}"
    return f"At mid: altitude {w.alt_mid_deg:.1f}°, airmass {w.airmass_mid:.2f}, {moon}"


def _meridian(w) -> list[str]:
    meridian = getattr(w, "meridian_jd_utc", float("nan"))
    if meridian != meridian:
        return []
    inside = " (inside the transit: a German equatorial mount flips during it)" if w.meridian_in_transit else ""
    return [f"Meridian crossing {_iso(meridian)}{inside}"]


def _event_lines(w, kind: str) -> list[str]:
    return [
        f"Observable {_iso(w.observable_start_jd_utc)} to {_iso(w.observable_end_jd_utc)}: coverage {w.coverage}, "
        f"{100 * w.observable_fraction:.0f}% of the {kind} observable",
        f"Mid-{kind} {_iso(w.mid_jd_utc)} ± {w.mid_sigma_d * MINUTES_PER_DAY:.1f} min (1σ); BJD_TDB {w.mid_bjd_tdb:.5f}",
        f"Ingress {_iso(w.ingress_jd_utc)}, egress {_iso(w.egress_jd_utc)}",
        f"Padded window (baseline and timing) {_iso(w.window_start_jd_utc)} to {_iso(w.window_end_jd_utc)}",
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


def _pointing_key(w) -> str:
    """Rows with one key whose windows overlap are one pointing (hosts.overlap_groups)."""
    shared = getattr(w, "shared_with", "")
    if not (isinstance(shared, str) and shared):
        return f"{w.site}|{w.target}|{w.epoch}"
    return f"{w.site}|" + "; ".join(sorted({w.target, *shared.split("; ")}))


def _pointings(windows: pd.DataFrame) -> list[list]:
    """Window rows grouped by pointing: alone, or with the planets of its host it is shared with."""
    rows = list(windows.itertuples(index=False))
    if not rows:
        return []
    groups = overlap_groups([_pointing_key(w) for w in rows], windows["window_start_jd_utc"],
                            windows["window_end_jd_utc"])
    return [[rows[i] for i in np.flatnonzero(groups == g)] for g in range(int(groups.max()) + 1)]


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


def windows_calendar(windows: pd.DataFrame, timezones: dict | None = None, previous: dict | None = None
                     ) -> icalendar.Calendar:
    """One VEVENT per observable window row; `timezones` (site -> IANA zone) are named in the
    descriptions; `previous` (from the calendar being replaced) carries SEQUENCE forward.

    Example: ``windows_calendar(windows, {"mirador_sur": "America/Santiago"}).to_ical()``.
    """
    calendar = icalendar.Calendar()
    calendar.add("prodid", "-//vigil//transit windows//EN")
    calendar.add("version", "2.0")
    calendar.add("calscale", "GREGORIAN")
    calendar.add("name", "vigil observing windows")
    calendar.add("description", SAFETY_NOTE)
    calendar.add("x-wr-caldesc", SAFETY_NOTE)
    stamp = run_stamp()
    windows = jd_view(windows)
    observable = windows[(windows["coverage"].astype(str) != "none") & windows["observable_start_jd_utc"].notna()]
    for rows in _pointings(observable.reset_index(drop=True)):
        w = rows[0]
        kind = str(getattr(w, "event", "transit"))
        names = " + ".join(r.target for r in rows)
        uid = event_uid(names, w.site, "+".join(str(int(r.epoch)) for r in rows), kind)
        digest = _times_digest(rows)
        old_digest, sequence, modified = (previous or {}).get(uid, (digest, 0, None))
        if old_digest != digest:
            sequence, modified = sequence + 1, None
        event = icalendar.Event()
        event.add("uid", uid)
        event.add("dtstamp", stamp)
        event.add("sequence", sequence)
        event.add("last-modified", modified or stamp)
        event.add("dtstart", _utc(min(r.observable_start_jd_utc for r in rows)))
        event.add("dtend", _utc(max(r.observable_end_jd_utc for r in rows)))
        coverage = ", ".join(f"{r.coverage} {100 * r.observable_fraction:.0f}%" for r in rows)
        stale = any(bool(r.stale) for r in rows)
        event.add("summary", f"{names} {kind}{'s' if len(rows) > 1 else ''}, {coverage} ({w.site})"
                             + (" STALE ephemeris" if stale else ""))
        event.add("location", str(w.site))
        event.add("description", _describe(rows, kind, (timezones or {}).get(w.site)))
        event.add("categories", [kind, *dict.fromkeys(str(r.coverage) for r in rows)] + (["stale"] if stale else []))
        event.add("transp", "TRANSPARENT")
        event.add(TIMES_KEY, digest)
        calendar.add_component(event)
    return calendar


def write_windows_ics(windows: pd.DataFrame, path, timezones: dict | None = None) -> None:
    """Write the windows calendar atomically (CRLF line ends, folded lines, escaped text); an
    earlier vigil calendar at `path` carries each unchanged event's SEQUENCE forward."""
    calendar = windows_calendar(windows, timezones, _previous_revisions(path))
    write_atomic(path, calendar.to_ical())
