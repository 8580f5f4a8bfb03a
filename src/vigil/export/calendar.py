"""The windows table as an RFC 5545 iCalendar, written with the `icalendar` library.

Each listed window is one VEVENT from window start to window end (UTC). The UID is derived
from target, site and epoch, so importing a newer calendar updates events instead of
duplicating them. DTSTAMP is the moment of the run, or the instant given by the
SOURCE_DATE_EPOCH environment variable (the reproducible-builds convention) when set.
"""

from __future__ import annotations

import os
import uuid
from datetime import datetime, timezone

import icalendar
import pandas as pd

from vigil.export.files import write_atomic
from vigil.export.windows_csv import windows_table

_UID_NAMESPACE = uuid.UUID("5f1c2b9e-3d4a-4e8f-9b6c-7a1d2e3f4b5c")
SAFETY_NOTE = ("Plan only within the observatory's own rules for night work and Sun avoidance; "
               "times are predictions, not a substitute for them.")


def event_uid(target: str, site: str, epoch: int, kind: str = "transit") -> str:
    """Stable identifier of one transit (or occultation) at one site."""
    key = f"{target}|{site}|{int(epoch)}" + ("" if kind == "transit" else f"|{kind}")
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


def _describe(w, timezone_name: str | None = None) -> str:
    lines = [
        f"Mid-transit {_iso(w.mid_utc)} ± {w.mid_sigma_min:.1f} min (1σ); BJD_TDB {w.mid_bjd_tdb:.5f}",
        f"Ingress {_iso(w.ingress_utc)}, egress {_iso(w.egress_utc)}",
        f"Coverage {w.coverage}, {100 * w.observable_fraction:.0f}% of the transit observable",
        _conditions(w),
        *([f"Times are UTC; the site's time zone is {timezone_name}"] if timezone_name else []),
        SAFETY_NOTE,
    ]
    return "\n".join(lines)


def windows_calendar(windows: pd.DataFrame, timezones: dict | None = None) -> icalendar.Calendar:
    """One VEVENT per window row; `timezones` (site -> IANA zone) are named in the descriptions.

    `windows` is the table `vigil.plan_windows` returns (times as UTC datetimes, already
    rounded to the second like the CSV, so both files show the same times).
    """
    calendar = icalendar.Calendar()
    calendar.add("prodid", "-//vigil//transit windows//EN")
    calendar.add("version", "2.0")
    calendar.add("calscale", "GREGORIAN")
    stamp = run_stamp()
    for w in windows_table(windows).itertuples(index=False):
        event = icalendar.Event()
        kind = getattr(w, "event", "transit")
        event.add("uid", event_uid(w.target, w.site, w.epoch, kind))
        event.add("dtstamp", stamp)
        event.add("dtstart", w.window_start_utc.to_pydatetime())
        event.add("dtend", w.window_end_utc.to_pydatetime())
        event.add("summary", f"{w.target} {kind}, {w.coverage} ({w.site})")
        event.add("location", str(w.site))
        event.add("description", _describe(w, (timezones or {}).get(w.site)))
        event.add("categories", [kind, str(w.coverage)])
        event.add("transp", "TRANSPARENT")
        calendar.add_component(event)
    return calendar


def write_windows_ics(windows: pd.DataFrame, path, timezones: dict | None = None) -> None:
    """Write the windows calendar atomically (CRLF line ends, folded lines, escaped text)."""
    write_atomic(path, windows_calendar(windows, timezones).to_ical())
