"""Tables for the terminal (rich): upcoming windows and journal visits, sized for 80 columns.

Cells never wrap in the middle of a value: long names are shortened with an ellipsis instead.
"""

from __future__ import annotations

from zoneinfo import ZoneInfo

import pandas as pd
from rich import box
from rich.table import Table

from vigil.export.table import iso_utc
from vigil.export.windows_csv import jd_view
from vigil.time_units import MINUTES_PER_DAY

UPCOMING_ROWS = 25


def _clock(jd_utc, zones: list) -> list[str]:
    """h:min of each JD UTC in its zone (None: UTC); '-' where the JD is NaN."""
    moments = pd.to_datetime(iso_utc(jd_utc), utc=True, errors="coerce")
    return ["-" if pd.isna(t) else (t.tz_convert(ZoneInfo(z)) if z else t).strftime("%H:%M") for t, z in zip(moments, zones)]


def compact_table(title: str, columns: list[tuple[str, str]]) -> Table:
    """A rich table with one space between columns, no borders and no wrapping inside a cell:
    `columns` are (heading, justify) pairs.

    Example: ``compact_table("Counts", [("target", "left"), ("full", "right")])``.
    """
    table = Table(title=title, title_justify="left", box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False,
                  padding=(0, 0))
    for name, justify in columns:
        table.add_column(name, justify=justify, no_wrap=True, overflow="ellipsis")
    return table


def windows_table(windows: pd.DataFrame, timezones: dict, total: int | None = None, rows: int = UPCOMING_ROWS) -> Table:
    """The first `rows` windows (in time order) of `total` listed as a table: mid-time (UTC), target, site,
    coverage and observable share of the transit, observable stretch in the site's local time
    (UTC where the site has no zone), apparent altitude at mid and a stale marker.

    Example: ``Console().print(windows_table(windows, {"mirador_sur": "America/Santiago"}))``.
    """
    shown = jd_view(windows.head(rows))
    table = compact_table(f"Upcoming windows, first {len(shown)} of {total or len(windows)} (stretch: site local time; "
                          "* UTC)",
                   [("mid UTC", "left"), ("target", "left"), ("site", "left"), ("coverage", "left"), ("obs", "right"),
                    ("stretch", "left"), ("alt°", "right"), ("stale", "left")])
    zones = [timezones.get(site) for site in shown["site"]]
    starts = _clock(shown["observable_start_jd_utc"].to_numpy(), zones)
    ends = _clock(shown["observable_end_jd_utc"].to_numpy(), zones)
    mids = iso_utc(shown["mid_jd_utc"].to_numpy())
    for w, mid, start, end, zone in zip(shown.itertuples(index=False), mids, starts, ends, zones):
        stretch = "-" if start == "-" else f"{start}-{end}" + ("" if zone else "*")
        altitude = "" if pd.isna(w.alt_mid_deg) else f"{w.alt_mid_deg:.0f}"
        table.add_row(mid[:16].replace("T", " "), str(w.target), str(w.site), str(w.coverage),
                      f"{100 * w.observable_fraction:.0f}%", stretch, altitude, "stale" if w.stale else "")
    return table


def _blank(value, form: str) -> str:
    return "" if value is None or value != value else format(value, form)


def journal_table(entries: pd.DataFrame) -> Table:
    """Journal visits (columns of vigil.journal.COLUMNS) as a table: start (UTC), outcome (or
    planned), the measured mid-time's 1-sigma error in minutes, hours collected (in transit +
    baseline), notes; empty cells where nothing was recorded (`vigil journal export` has all).

    Example: ``Console().print(journal_table(journal.entries()))``.
    """
    table = compact_table(f"Journal: {len(entries)} visits (start UTC; timing: measured mid-time's 1σ; "
                          "hours: in transit + baseline)",
                          [("target", "left"), ("site", "left"), ("epoch", "right"), ("start UTC", "left"),
                           ("outcome", "left"), ("timing", "right"), ("hours", "right"), ("notes", "left")])
    for v in entries.itertuples(index=False):
        timing = "" if v.mid_bjd_tdb != v.mid_bjd_tdb else f"±{_blank(v.mid_err_d * MINUTES_PER_DAY, '.1f')}m"
        hours = "" if v.in_transit_h != v.in_transit_h else f"{v.in_transit_h:.1f}+{_blank(v.baseline_h, '.1f')}"
        table.add_row(str(v.target), str(v.site), str(v.epoch), str(v.start_utc)[:16].replace("T", " "),
                      v.outcome or v.status, timing, hours, v.notes or "")
    return table
