"""One self-contained HTML plan: tables, charts embedded as data URIs, a small inline script to
sort tables. Nothing is fetched: a Content-Security-Policy forbids every request that would leave
the file, so it reads the same from a USB stick without a network.

The page carries the run stamp (SOURCE_DATE_EPOCH when set, as the calendar does), so reruns of
the same inputs give byte-identical files.
"""

from __future__ import annotations

import base64
import html
import math

import numpy as np
import pandas as pd

from vigil.constraints import resolve_constraints
from vigil.export import palette
from vigil.export.calendar import SAFETY_NOTE, run_stamp
from vigil.export.files import write_atomic
from vigil.export.night_chart import night_chart
from vigil.export.plots import hours_figure, resolution_figure
from vigil.export.table import iso_utc
from vigil.export.timeline_chart import timeline_chart
from vigil.export.windows_csv import jd_view
from vigil.sites import Site
from vigil.time_units import MINUTES_PER_DAY

TABLE_ROWS = 400
SEMESTER_D = 182.5
CSP = "default-src 'none'; img-src data:; style-src 'unsafe-inline'; script-src 'unsafe-inline'"
STYLE = """
body { font-family: system-ui, sans-serif; margin: 1.5em auto; max-width: 72em; color: #111; padding: 0 1em; }
h1 { font-size: 1.5em; } h2 { font-size: 1.2em; margin-top: 1.6em; border-bottom: 1px solid #ccc; }
table { border-collapse: collapse; font-size: 0.85em; margin: 0.5em 0; }
th, td { padding: 0.2em 0.6em; border-bottom: 1px solid #ddd; text-align: left; white-space: nowrap; }
th { background: #f2f2f2; cursor: pointer; user-select: none; } th.sorted-up::after { content: " ▲"; }
th.sorted-down::after { content: " ▼"; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
.note { background: #fff4d6; border-left: 4px solid #E69F00; padding: 0.5em 1em; }
img { max-width: 100%; height: auto; display: block; margin: 0.5em 0; }
.swatch { display: inline-block; width: 0.8em; height: 0.8em; margin-right: 0.3em; vertical-align: -0.05em; }
"""
# Sort a table by the clicked header: numbers numerically (from data-sort when given), text alphabetically.
SCRIPT = """
document.querySelectorAll("table.sortable th").forEach(function (header, column) {
  header.addEventListener("click", function () {
    var table = header.closest("table"), body = table.tBodies[0];
    var up = !header.classList.contains("sorted-up");
    table.querySelectorAll("th").forEach(function (h) { h.classList.remove("sorted-up", "sorted-down"); });
    header.classList.add(up ? "sorted-up" : "sorted-down");
    var key = function (row) {
      var cell = row.cells[column], text = cell.getAttribute("data-sort") || cell.textContent;
      var number = parseFloat(text);
      return isNaN(number) || !/^[-+0-9.]/.test(text) ? text.toLowerCase() : number;
    };
    var rows = Array.prototype.slice.call(body.rows);
    rows.sort(function (a, b) {
      var x = key(a), y = key(b);
      if (typeof x !== typeof y) { x = String(x); y = String(y); }
      return (x < y ? -1 : x > y ? 1 : 0) * (up ? 1 : -1);
    });
    rows.forEach(function (row) { body.appendChild(row); });
  });
});
"""


def _image(figure, alt: str) -> str:
    data = base64.b64encode(palette.png_bytes(figure, dpi=90)).decode("ascii")
    return f'<img alt="{html.escape(alt)}" src="data:image/png;base64,{data}">'


def _cell(value) -> str:
    if isinstance(value, (bool, np.bool_)):
        return f"<td>{'yes' if value else ''}</td>"
    if isinstance(value, (int, float, np.integer, np.floating)):
        number = float(value)
        text = "" if not math.isfinite(number) else f"{number:.6f}" if abs(number) > 1e5 else f"{number:.4g}"
        return f'<td class="num" data-sort="{number if math.isfinite(number) else 1e300}">{text}</td>'
    text = "" if value is None else str(value)
    swatch = palette.COVERAGE.get(text)
    mark = f'<span class="swatch" style="background:{swatch}"></span>' if swatch else ""
    return f"<td>{mark}{html.escape(text)}</td>"


def html_table(table: pd.DataFrame, rows: int = TABLE_ROWS) -> str:
    """A sortable HTML table of the first `rows` rows (click a header to sort).

    Example: ``html_table(pd.DataFrame({"target": ["a"], "hours": [1.5]}))``.
    """
    shown = table.head(rows)
    head = "".join(f"<th>{html.escape(str(c))}</th>" for c in shown.columns)
    body = "\n".join("<tr>" + "".join(_cell(v) for v in values) + "</tr>"
                     for values in shown.itertuples(index=False, name=None))
    more = f"<p>First {rows} of {len(table)} rows; the CSV holds them all.</p>" if len(table) > rows else ""
    return f'<table class="sortable"><thead><tr>{head}</tr></thead><tbody>\n{body}\n</tbody></table>{more}'


def html_page(title: str, sections: list[tuple[str, str]]) -> str:
    """The whole page: title, run stamp, safety note, then each (heading, HTML) section that has content.

    Example: ``html_page("Plan", windows_sections(windows, sites))``.
    """
    stamp = run_stamp().strftime("%Y-%m-%d %H:%M UTC")
    parts = [f"<h2>{html.escape(heading)}</h2>\n{content}" for heading, content in sections if content]
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\n"
            f'<meta http-equiv="Content-Security-Policy" content="{CSP}">\n'
            f"<title>{html.escape(title)}</title><style>{STYLE}</style></head>\n<body>\n"
            f"<h1>{html.escape(title)}</h1>\n<p>vigil plan made {stamp}. Times are UTC unless marked.</p>\n"
            f'<p class="note">{html.escape(SAFETY_NOTE)}</p>\n' + "\n".join(parts)
            + f"\n<script>{SCRIPT}</script>\n</body></html>\n")


def _window_rows(windows: pd.DataFrame) -> pd.DataFrame:
    return pd.DataFrame({
        "mid (UTC)": [t[:16].replace("T", " ") for t in iso_utc(windows["mid_jd_utc"].to_numpy())],
        "target": windows["target"].astype(str), "site": windows["site"].astype(str),
        "coverage": windows["coverage"].astype(str), "observable %": (100 * windows["observable_fraction"]).round(0),
        "stretch start": [t[11:16] for t in iso_utc(windows["observable_start_jd_utc"].to_numpy())],
        "stretch end": [t[11:16] for t in iso_utc(windows["observable_end_jd_utc"].to_numpy())],
        "altitude at mid (deg)": windows["alt_mid_deg"].round(1), "σ mid (min)": (windows["mid_sigma_d"] * MINUTES_PER_DAY).round(1),
        "stale": windows["stale"].astype(bool)})


def _timeline(bars: pd.DataFrame, start_jd: float, title: str) -> str:
    end_jd = start_jd + SEMESTER_D
    inside = bars[(bars["end_jd_utc"] > start_jd) & (bars["start_jd_utc"] < end_jd)]
    return _image(timeline_chart(inside, start_jd, end_jd, title), title) if len(inside) else ""


def windows_sections(windows: pd.DataFrame, sites: dict[str, Site], overrides: dict | None = None) -> list:
    """The sections of a windows run's plan: timeline of the first semester, the night chart of
    the first full window, and the windows table.

    Example: ``write_html("plan.html", html_page("Windows 2027", windows_sections(windows, sites)))``.
    """
    if windows.empty:
        return [("Windows", "<p>No observable transits in the span.</p>")]
    windows = jd_view(windows)
    bars = windows.rename(columns={"window_start_jd_utc": "start_jd_utc", "window_end_jd_utc": "end_jd_utc"})
    start_jd = float(np.floor(windows["window_start_jd_utc"].min() - 0.5) + 0.5)
    ground = windows["site"].map(lambda s: sites[s].kind == "ground").astype(bool)
    first_full = windows[(windows["coverage"] == "full") & ground]
    night = ""
    if len(first_full):
        constraints = {n: resolve_constraints(s.defaults, overrides or {}) for n, s in sites.items()}
        night = _image(night_chart(first_full.head(1), sites, constraints), "night chart of the first full window")
    return [
        ("Timeline (first semester)", _timeline(bars, start_jd, "Windows by site (bars: padded windows)")),
        ("First full window", night),
        ("Windows", html_table(_window_rows(windows))),
    ]


def _verdicts(summary: pd.DataFrame) -> pd.DataFrame:
    def years(value) -> str:
        return "never" if not math.isfinite(value) else f"{value:.1f}"
    return pd.DataFrame({
        "target": summary["target"], "transits / yr": summary["transits_per_year"],
        "in-transit h / yr": summary["in_transit_hours_per_year"],
        "years to goal p10 / p50 / p90": [" / ".join(years(v) for v in trio) for trio in
                                          zip(summary["years_to_goal_p10"], summary["years_to_goal_p50"],
                                              summary["years_to_goal_p90"])],
        "verdict": ["reachable" if ok else f"not reached: {why}" for ok, why in
                    zip(summary["reachable"], summary["limited_by"])]})


def campaign_sections(result, spec) -> list:
    """The sections of a campaign's plan: verdict per target, budget (when the result has one),
    the forecast charts, the first semester's scheduled visits as a timeline and a table.

    Example: ``write_html("campaign.html", html_page("Campaign", campaign_sections(result, spec)))``.
    """
    start_jd = spec.start.utc.jd
    ledger = result.ledger
    first = ledger[ledger["start_jd_utc"] < start_jd + SEMESTER_D]
    visits = pd.DataFrame({
        "start (UTC)": [t[:16].replace("T", " ") for t in iso_utc(first["start_jd_utc"].to_numpy())],
        "target": first["target"], "site": first["site"], "coverage": first["coverage"].astype(str),
        "in-transit h": first["in_transit_h"].round(2), "telescope h": first["telescope_h"].round(2),
        "clear in % of trials": (100 * first["clear_share"]).round(0)})
    budget = getattr(result, "budget", None)
    return [
        ("Verdict per target", html_table(_verdicts(result.summary))),
        ("Budget", html_table(budget) if isinstance(budget, pd.DataFrame) and len(budget) else ""),
        ("Forecast", _image(resolution_figure(result.yearly, spec.goal_resolution, spec.start.utc.decimalyear,
                                              spec.horizon_years, result.summary), "resolution forecast")
         + _image(hours_figure(result.yearly, result.summary), "hours per year")),
        ("Timeline of scheduled visits (first semester)",
         _timeline(ledger, start_jd, "Scheduled visits by site (first semester, one simulated campaign)")),
        ("Upcoming visits (first semester)", html_table(visits)),
    ]


def write_html(path, page: str) -> None:
    """Write the page as UTF-8, atomically."""
    write_atomic(path, page.encode("utf-8"))
