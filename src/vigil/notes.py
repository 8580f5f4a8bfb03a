"""Notes for the user that come with a result: what a computation found worth saying.

Engines return their notes with their results (no module-level state), so notes survive
worker processes; the command line reports each note once, however many chunks or processes
found it (`merged`). A note covers a span of dates; notes with the same key are one note whose
span covers all of theirs.
"""

from __future__ import annotations

import logging
import threading
import warnings
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable, Iterator

import pandas as pd
from astropy.time import Time

log = logging.getLogger("vigil")
ATTR = "notes"  # the key of a table's attrs that holds its notes


@dataclass(frozen=True)
class Note:
    """One note: `template` with "{start}" and "{end}" for the first and last dates (UTC) of the
    span [start_jd_utc, end_jd_utc] it concerns; notes with equal `key` are merged.

    Examples
    --------
    >>> Note(("x",), "nothing from {start} to {end}", 2461041.5, 2461406.5).text()
    'nothing from 2026-01-01 to 2027-01-01'
    """

    key: tuple
    template: str
    start_jd_utc: float
    end_jd_utc: float

    def text(self) -> str:
        """The note as the user reads it."""
        return self.template.format(start=_date(self.start_jd_utc), end=_date(self.end_jd_utc))


def _date(jd_utc: float) -> str:
    return Time(jd_utc, format="jd", scale="utc").iso[:10]


def merged(*groups: Iterable[Note]) -> tuple[Note, ...]:
    """One note per key, in order of first appearance, each spanning all the spans of its key."""
    by_key: dict[tuple, Note] = {}
    for group in groups:
        for note in group:
            seen = by_key.get(note.key)
            if seen is not None:
                note = Note(note.key, seen.template, min(seen.start_jd_utc, note.start_jd_utc),
                            max(seen.end_jd_utc, note.end_jd_utc))
            by_key[note.key] = note
    return tuple(by_key.values())


def of(table: pd.DataFrame) -> tuple[Note, ...]:
    """The notes a table carries (in its attrs)."""
    return tuple(table.attrs.get(ATTR, ()))


def attach(table: pd.DataFrame, notes: Iterable[Note]) -> pd.DataFrame:
    """The table, carrying `notes` (merged) in its attrs; returned for chaining."""
    table.attrs[ATTR] = merged(notes)
    return table


def report(notes: Iterable[Note]) -> None:
    """Log each note once on the "vigil" logger (level INFO)."""
    for note in merged(notes):
        log.info("%s", note.text())


def no_darkness(site_name: str, twilight: str, sun_altitude_deg: float, start_jd_utc: float,
                end_jd_utc: float) -> Note:
    """The Sun never gets low enough at a site over a span: no window there is observable."""
    return Note(("no darkness", site_name, twilight),
                f"{site_name}: the Sun's centre stays above {sun_altitude_deg:g} deg from {{start}} to {{end}}: "
                f"no {twilight} darkness, so no transit there is observable", start_jd_utc, end_jd_utc)


def beyond_earth_orientation(table_end_jd_utc: float, last_ut1_minus_utc_s: float, end_jd_utc: float) -> Note:
    """Dates beyond the bundled Earth-orientation predictions, and what is done there."""
    return Note(("earth orientation",),
                f"dates after {_date(table_end_jd_utc)} (to {{end}}) lie beyond the Earth-orientation predictions "
                f"bundled with astropy: there astropy holds UT1-UTC at its last tabulated value "
                f"({last_ut1_minus_utc_s:+.3f} s; it is not extrapolated) and takes polar motion from its 50-year "
                "mean, and the fast engine takes UT1 = UTC throughout; the unforeseeable drift of UT1 (under a "
                "second a year) moves rising, setting and twilight by about as much, and mid-times by far less",
                table_end_jd_utc, end_jd_utc)


def outside_earth_series(start_jd_utc: float, end_jd_utc: float) -> Note:
    """Dates outside 1900-2100, where the Earth's position series was not fitted."""
    return Note(("earth series",),
                "dates from {start} to {end} lie outside 1900-2100, the years the Earth's position series (ERFA "
                "epv00) was fitted to: BJD_TDB to UTC conversions there are less precise than within them",
                start_jd_utc, end_jd_utc)


def warning_text(message, category: type, filename: str | None) -> str:
    """A library's warning (numpy, ERFA, matplotlib, astropy) in one line naming its kind and
    the library's module folder, never its raw two-line form with a source path.

    Examples
    --------
    >>> warning_text("invalid value   encountered", RuntimeWarning, "/x/numpy/core/fromnumeric.py")
    'invalid value encountered (RuntimeWarning, from core)'
    """
    text = " ".join(str(message).split())
    source = Path(filename or "?").parent.name or Path(filename or "?").name
    return f"{text} ({category.__name__}, from {source})"


def library_warning(message, category: type, filename: str | None, start_jd_utc: float, end_jd_utc: float) -> Note:
    """A library's warning given while planning the span [start, end] (JD UTC), as a note that
    travels with the results (from worker processes too) and is said once."""
    text = warning_text(message, category, filename)
    return Note(("library warning", text), text.replace("{", "{{").replace("}", "}}"), start_jd_utc, end_jd_utc)


_collecting = threading.local()  # per thread: (notes list, start, end) while warnings_as_notes runs


@contextmanager
def warnings_as_notes(start_jd_utc: float, end_jd_utc: float) -> Iterator[list[Note]]:
    """Within the block, warnings this thread shows become notes (`library_warning`) in the list
    yielded instead of lines on stderr; other threads are untouched (unlike
    warnings.catch_warnings, which swaps process-wide state).

    Examples
    --------
    >>> with warnings_as_notes(2461041.5, 2461406.5) as found:
    ...     warnings.warn("odd value", RuntimeWarning)
    >>> found[0].key[0]
    'library warning'
    """
    _route_warnings()
    outer = getattr(_collecting, "active", None)
    found: list[Note] = []
    _collecting.active = (found, start_jd_utc, end_jd_utc)
    try:
        yield found
    finally:
        _collecting.active = outer


def _route_warnings() -> None:
    """Put a hook in front of warnings.showwarning that hands a warning to the collecting
    thread's list, and to the hook it replaced otherwise (once; again if it was replaced since)."""
    shown = warnings.showwarning
    if getattr(shown, "routes_to_notes", False):
        return

    def route(message, category, filename, lineno, file=None, line=None):
        active = getattr(_collecting, "active", None)
        if active is None:
            return shown(message, category, filename, lineno, file, line)
        found, start, end = active
        found.append(library_warning(message, category, filename, start, end))

    route.routes_to_notes = True
    warnings.showwarning = route
