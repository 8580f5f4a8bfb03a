"""The timeline of a month or semester at each site: one row per target, each window a bar
coloured by its coverage class, and clashes (windows of different targets overlapping at one
site, where one telescope must choose) outlined in vermillion and marked above the bar."""

from __future__ import annotations

import matplotlib.dates as mdates
import numpy as np
import pandas as pd
from matplotlib.figure import Figure
from matplotlib.patches import Patch

from vigil.errors import InputError
from vigil.export import palette
from vigil.export.night_chart import UNIX_EPOCH_JD

ROW_HEIGHT_IN = 0.32
MIN_BAR_FRACTION = 1.0 / 700.0  # of the span, so that a 3-hour window stays visible on a semester


def clashes(bars: pd.DataFrame) -> np.ndarray:
    """True for each bar (columns target, site, start_jd_utc, end_jd_utc) that overlaps a bar of
    another target at the same site.

    Example: ``clashes(pd.DataFrame({"target": ["a", "b"], "site": ["s", "s"], "start_jd_utc": [0, 1],
    "end_jd_utc": [2, 3]}))`` is ``[True, True]``.
    """
    flagged = np.zeros(len(bars), dtype=bool)
    start, end = bars["start_jd_utc"].to_numpy(float), bars["end_jd_utc"].to_numpy(float)
    target = bars["target"].to_numpy()
    for site in pd.unique(bars["site"]):
        rows = np.flatnonzero((bars["site"] == site).to_numpy())
        rows = rows[np.argsort(start[rows], kind="stable")]
        reach = np.maximum.accumulate(end[rows])  # latest end among the bars begun so far
        for k in range(1, rows.size):
            earlier = rows[:k][end[rows[:k]] > start[rows[k]]] if reach[k - 1] > start[rows[k]] else rows[:0]
            others = earlier[target[earlier] != target[rows[k]]]
            if others.size:
                flagged[rows[k]] = True
                flagged[others] = True
    return flagged


def timeline_chart(bars: pd.DataFrame, start_jd_utc: float, end_jd_utc: float, title: str) -> Figure:
    """One panel per site over [start, end] (JD UTC): rows are targets, bars their windows.

    `bars` needs target, site, coverage, start_jd_utc, end_jd_utc (a padded window or a visit).
    Example: ``timeline_chart(bars, Time("2027-01-01").jd, Time("2027-07-01").jd, "first semester")``.
    """
    shown = bars[(bars["end_jd_utc"] > start_jd_utc) & (bars["start_jd_utc"] < end_jd_utc)].reset_index(drop=True)
    if shown.empty:
        raise InputError("no windows in the timeline's span: nothing to draw")
    flagged = clashes(shown)
    sites = sorted(pd.unique(shown["site"]))
    targets = sorted(pd.unique(shown["target"]))
    figure = Figure(figsize=(11.0, 1.4 + sum(0.9 + ROW_HEIGHT_IN * len(targets) for _ in sites)))
    least = (end_jd_utc - start_jd_utc) * MIN_BAR_FRACTION
    for panel, site in enumerate(sites):
        axes = figure.add_subplot(len(sites), 1, panel + 1)
        mine = (shown["site"] == site).to_numpy()
        for row, target in enumerate(targets):
            pick = np.flatnonzero(mine & (shown["target"] == target).to_numpy())
            for i in pick:
                lo = float(shown.at[i, "start_jd_utc"]) - UNIX_EPOCH_JD
                width = max(float(shown.at[i, "end_jd_utc"] - shown.at[i, "start_jd_utc"]), least)
                axes.broken_barh([(lo, width)], (row - 0.35, 0.7), facecolor=palette.COVERAGE[str(shown.at[i, "coverage"])],
                                 edgecolor=palette.VERMILLION if flagged[i] else "none", linewidth=1.2)
                if flagged[i]:
                    axes.plot(lo + width / 2, row - 0.45, marker="v", markersize=4, color=palette.VERMILLION)
        axes.set_yticks(range(len(targets)), targets, fontsize=8)
        axes.set_ylim(len(targets) - 0.5, -0.7)
        axes.set_xlim(start_jd_utc - UNIX_EPOCH_JD, end_jd_utc - UNIX_EPOCH_JD)
        locator = mdates.AutoDateLocator(maxticks=14)
        axes.xaxis.set_major_locator(locator)
        axes.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
        axes.grid(axis="x", alpha=0.3)
        axes.set_title(f"{site}: {int(flagged[mine].sum())} windows in clashes", fontsize=9, loc="left")
        axes.set_xlabel("date (UTC)")
    legend = [Patch(facecolor=color, label=f"coverage {name}") for name, color in palette.COVERAGE.items()
              if name in set(shown["coverage"].astype(str))]
    legend.append(Patch(facecolor="white", edgecolor=palette.VERMILLION, label="clash at the site (▼)"))
    figure.legend(handles=legend, loc="upper right", fontsize=7, ncol=len(legend), frameon=False)
    figure.suptitle(title, fontsize=10, x=0.01, ha="left")
    figure.tight_layout(rect=(0, 0, 1, 0.97))
    return figure
