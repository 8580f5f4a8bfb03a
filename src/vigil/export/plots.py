"""PNG plots of a campaign forecast (matplotlib, Agg canvas: no display needed)."""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from vigil.export.files import write_atomic


def _labelled(figure: Figure, axes, xlabel: str, ylabel: str, title: str) -> Figure:
    """Label, add legend and grid; the figure, for saving or showing."""
    axes.set_xlabel(xlabel)
    axes.set_ylabel(ylabel)
    axes.set_title(title)
    axes.legend(fontsize=7, ncol=2)
    axes.grid(alpha=0.3)
    return figure


def save_png(figure: Figure, path) -> None:
    """Write the figure as PNG, atomically and without timestamp metadata (reproducible bytes)."""
    FigureCanvasAgg(figure)
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=110, metadata={"Software": None})
    write_atomic(path, buffer.getvalue())


def resolution_plot(yearly: pd.DataFrame, goal_resolution: float, start_year: float, horizon_years: float, path) -> None:
    """`resolution_figure` written as PNG."""
    save_png(resolution_figure(yearly, goal_resolution, start_year, horizon_years), path)


def resolution_figure(yearly: pd.DataFrame, goal_resolution: float, start_year: float, horizon_years: float) -> Figure:
    """Achievable resolution at the goal SNR at the end of each campaign year (decimal year from
    the start's `start_year`), median with the 10-90 % band of trials, goal and horizon marked.

    Examples
    --------
    >>> resolution_figure(result.forecast, 100, 2027.0, 30).savefig("resolution.png")  # doctest: +SKIP
    """
    figure = Figure(figsize=(8, 5))
    axes = figure.add_subplot()
    for target, table in yearly.groupby("target", sort=False):
        year_end = start_year + table["campaign_year"]
        line, = axes.plot(year_end, table["resolution_at_goal_snr_p50"], label=target)
        axes.fill_between(year_end, table["resolution_at_goal_snr_p10"],
                          table["resolution_at_goal_snr_p90"], color=line.get_color(), alpha=0.15, linewidth=0)
    axes.axhline(goal_resolution, color="black", linestyle="--", linewidth=1, label=f"goal R = {goal_resolution:g}")
    axes.axvline(start_year + horizon_years, color="grey", linestyle=":", linewidth=1, label="horizon")
    axes.set_yscale("symlog", linthresh=1.0)  # logarithmic, but 0 (goal out of reach) stays on the plot
    axes.set_ylim(bottom=0.0)
    return _labelled(figure, axes, "year (end of each campaign year)", "achievable resolution λ/Δλ at the goal SNR",
                     "Stacked transmission spectrum: resolution reached (median, 10–90 % of trials)")


def hours_plot(yearly: pd.DataFrame, path) -> None:
    """`hours_figure` written as PNG."""
    save_png(hours_figure(yearly), path)


def hours_figure(yearly: pd.DataFrame) -> Figure:
    """In-transit hours collected in each campaign year (median over trials), one line per target.

    Examples
    --------
    >>> hours_figure(result.forecast).savefig("hours.png")  # doctest: +SKIP
    """
    figure = Figure(figsize=(8, 5))
    axes = figure.add_subplot()
    for target, table in yearly.groupby("target", sort=False):
        per_year = table["in_transit_hours_p50"].diff().fillna(table["in_transit_hours_p50"])
        axes.step(table["calendar_year"], per_year, where="mid", label=target)
    return _labelled(figure, axes, "calendar year", "in-transit hours stacked that year (median)",
                     "In-transit hours per year")


def budget_figure(budget: pd.DataFrame) -> Figure:
    """Share of each noise term in the stacked variance of each target's deciding bin (median
    visit, stacked as often as the median trial observes it), one stacked bar per target.

    Examples
    --------
    >>> budget_figure(outcome.budget).savefig("budget.png")  # doctest: +SKIP
    """
    figure = Figure(figsize=(8, 5))
    axes = figure.add_subplot()
    shares = budget.pivot(index="target", columns="term", values="share_of_variance")
    shares = shares.loc[budget["target"].unique(), budget["term"].unique()]
    left = np.zeros(len(shares))
    for term in shares.columns:
        axes.barh(shares.index, shares[term], left=left, label=term)
        left += shares[term].to_numpy()
    axes.invert_yaxis()
    axes.set_xlim(0.0, 1.0)
    return _labelled(figure, axes, "share of the stacked variance in the deciding bin", "",
                     "Noise budget at the goal resolution (median visit)")
