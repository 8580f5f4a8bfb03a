"""The windows table as an RFC 5545 iCalendar, written with the `icalendar` library.

Each listed window is one VEVENT from window start to window end (UTC). The UID is derived
from target, site and epoch, so importing a newer calendar updates events instead of
duplicating them. Transits of planets of one host whose windows overlap at a site (the
`shared_with` column) are one pointing and one VEVENT naming every planet. DTSTAMP is the moment of the run, or the instant given by the
SOURCE_DATE_EPOCH environment variable (the reproducible-builds convention) when set.
"""

from __future__ import annotations

import os
import uuid
from datetime import datetime, timezone

import icalendar
import numpy as np
import pandas as pd

from vigil.export.files import write_atomic
from vigil.export.windows_csv import windows_table
from vigil.hosts import overlap_groups

_UID_NAMESPACE = uuid.UUID("5f1c2b9e-3d4a-4e8f-9b6c-7a1d2e3f4b5c")
SAFETY_NOTE = ("Plan only within the observatory's own rules for night work and Sun avoidance; "
               "times are predictions, not a substitute for them.")


def event_uid(target: str, site: str, epoch, kind: str = "transit") -> str:
    """Stable identifier of one transit (or occultation) at one site; for a shared pointing,
    target is "b + c" and epoch "12+7" (each planet's epoch)."""
    key = f"{target}|{site}|{epoch if isinstance(epoch, str) else int(epoch)}" + ("" if kind == "transit" else f"|{kind}")
    return f"{uuid.uuid5(_UID_NAMESPACE, key)}@vigil"


def run_stamp() -> datetime:
    """DTSTAMP for this run: SOURCE_DATE_EPOCH when set, else now (UTC)."""
    fixed = os.environ.get("SOURCE_DATE_EPOCH")
    if fixed and fixed.strip().isdigit():
        return datetime.fromtimestamp(int(fixed), tz=timezone.utc)
    return datetime.now(timezone.utc).replace(microsecond=0)


def _iso(when) -> str:
    return when.strftime("%Y-%m-%dT%H:%M:%SZ")


def _conditions(w) -> str:
    """Conditions at mid-transit; a space site has no altitude or airmass."""
    moon = f"Moon {w.moon_sep_deg:.0f}° away" if w.moon_sep_deg == w.moon_sep_deg else "Moon not computed"
    if w.alt_mid_deg != w.alt_mid_deg:  # NaN
        return f"At mid: {moon}"
    return f"At mid: altitude {w.alt_mid_deg:.1f}°, airmass {w.airmass_mid:.2f}, {moon}"


def _transit_lines(w) -> list[str]:
    return [
        f"Mid-transit {_iso(w.mid_utc)} ± {w.mid_sigma_min:.1f} min (1σ); BJD_TDB {w.mid_bjd_tdb:.5f}",
        f"Ingress {_iso(w.ingress_utc)}, egress {_iso(w.egress_utc)}",
        f"Coverage {w.coverage}, {100 * w.observable_fraction:.0f}% of the transit observable",
        _conditions(w),
    ]


def _describe(rows, timezone_name: str | None = None) -> str:
    """The description of one event: one window, or each planet's window of a shared pointing."""
    lines = _transit_lines(rows[0]) if len(rows) == 1 else [
        line for w in rows for line in (f"{w.target}:", *(f"  {text}" for text in _transit_lines(w)))]
    lines += [f"Times are UTC; the site's time zone is {timezone_name}"] if timezone_name else []
    return "\n".join([*lines, SAFETY_NOTE])


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
    groups = overlap_groups([_pointing_key(w) for w in rows], _ns(windows["window_start_utc"]),
                            _ns(windows["window_end_utc"]))
    return [[rows[i] for i in np.flatnonzero(groups == g)] for g in range(int(groups.max()) + 1)]


def _ns(times: pd.Series) -> np.ndarray:
    return times.to_numpy(dtype="datetime64[ns]").astype(np.int64)


def windows_calendar(windows: pd.DataFrame, timezones: dict | None = None) -> icalendar.Calendar:
    """One VEVENT per window row; `timezones` (site -> IANA zone) are named in the descriptions.

    `windows` is the table `vigil.plan_windows` returns (times as UTC datetimes, already
    rounded to the second like the CSV, so both files show the same times).
    """
    windows = windows_table(windows)
    calendar = icalendar.Calendar()
    calendar.add("prodid", "-//vigil//transit windows//EN")
    calendar.add("version", "2.0")
    calendar.add("calscale", "GREGORIAN")
    stamp = run_stamp()
    for rows in _pointings(windows):
        w = rows[0]
        event = icalendar.Event()
        kind = getattr(w, "event", "transit")
        names = " + ".join(r.target for r in rows)
        event.add("uid", event_uid(names, w.site, "+".join(str(int(r.epoch)) for r in rows), kind))
        event.add("dtstamp", stamp)
        event.add("dtstart", min(r.window_start_utc for r in rows).to_pydatetime())
        event.add("dtend", max(r.window_end_utc for r in rows).to_pydatetime())
        coverage = ", ".join(str(r.coverage) for r in rows)
        event.add("summary", f"{names} {kind}{'s' if len(rows) > 1 else ''}, {coverage} ({w.site})")
        event.add("location", str(w.site))
        event.add("description", _describe(rows, (timezones or {}).get(w.site)))
        event.add("categories", [kind, *dict.fromkeys(str(r.coverage) for r in rows)])
        event.add("transp", "TRANSPARENT")
        calendar.add_component(event)
    return calendar


def write_windows_ics(windows: pd.DataFrame, path, timezones: dict | None = None) -> None:
    """Write the windows calendar atomically (CRLF line ends, folded lines, escaped text)."""
    write_atomic(path, windows_calendar(windows, timezones).to_ical())
