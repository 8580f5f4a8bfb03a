"""PNG charts of a campaign forecast, one small panel per target so no line hides another
(matplotlib, Agg canvas: no display needed). Targets that never reach the goal say so, and why,
in their own panel."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from vigil.export import palette

COLUMNS = 4


def _panels(count: int, title: str):
    rows = math.ceil(count / COLUMNS)
    figure = Figure(figsize=(11.0, 2.3 * rows + 0.8))
    axes = figure.subplots(rows, COLUMNS, sharex=True, squeeze=False).ravel()
    for spare in axes[count:]:
        spare.set_visible(False)
    figure.suptitle(title, fontsize=10)
    return figure, axes


def _verdict(summary: pd.DataFrame | None, target: str) -> str:
    if summary is None:
        return ""
    row = summary[summary["target"] == target]
    if row.empty:
        return ""
    row = row.iloc[0]
    if row["reachable"]:
        return f"goal after {row['years_to_goal_p50']:.1f} yr (median)"
    return f"never within the horizon: {row['limited_by']}"


def _label_outer(axes, count: int, xlabel: str, ylabel: str) -> None:
    for index, panel in enumerate(axes[:count]):
        if index % COLUMNS == 0:
            panel.set_ylabel(ylabel, fontsize=8)
        if index + COLUMNS >= count:
            panel.set_xlabel(xlabel, fontsize=8)
            panel.tick_params(labelbottom=True)


def resolution_figure(yearly: pd.DataFrame, goal_resolution: float, start_year: float, horizon_years: float,
                      summary: pd.DataFrame | None = None) -> Figure:
    """Achievable resolution at the goal SNR at the end of each campaign year, one panel per
    target: median with the 10-90 % band of trials, the goal, and the verdict from `summary`.

    Example: ``resolution_figure(result.yearly, 50, 2027.0, 30, result.summary)``.
    """
    targets = list(pd.unique(yearly["target"]))
    figure, axes = _panels(len(targets), f"Resolution λ/Δλ reached at the goal SNR (median, 10–90 % of trials); "
                                         f"dashed: goal R = {goal_resolution:g}")
    for panel, target in zip(axes, targets):
        table = yearly[yearly["target"] == target]
        year_end = start_year + table["campaign_year"].to_numpy()
        median = table["resolution_at_goal_snr_p50"].to_numpy()
        panel.fill_between(year_end, table["resolution_at_goal_snr_p10"], table["resolution_at_goal_snr_p90"],
                           color=palette.SKY_BLUE, alpha=0.5, linewidth=0)
        panel.plot(year_end, median, color=palette.BLUE, linewidth=1.8)
        panel.axhline(goal_resolution, color=palette.VERMILLION, linestyle="--", linewidth=1.1)
        panel.set_xlim(start_year, start_year + horizon_years)
        panel.set_ylim(0.0, 1.3 * max(goal_resolution, float(np.nanmax(table["resolution_at_goal_snr_p90"]))))
        verdict = _verdict(summary, target)
        panel.set_title(f"{target}\n{verdict}", fontsize=8)
        if not np.any(median > 0):
            panel.text(0.5, 0.5, "R = 0 all along\n(" + (verdict.split(": ", 1)[-1] or "goal out of reach") + ")",
                       transform=panel.transAxes, ha="center", va="center", fontsize=8, color=palette.VERMILLION)
        panel.grid(alpha=0.3)
        panel.tick_params(labelsize=7)
    _label_outer(axes, len(targets), "year (end of campaign year)", "resolution λ/Δλ")
    figure.tight_layout()
    return figure


def hours_figure(yearly: pd.DataFrame, summary: pd.DataFrame | None = None) -> Figure:
    """In-transit hours collected in each calendar year (median over trials), one bar panel per target.

    Example: ``hours_figure(result.yearly, result.summary)``.
    """
    targets = list(pd.unique(yearly["target"]))
    figure, axes = _panels(len(targets), "In-transit hours stacked each year (median over weather trials)")
    top = 0.0
    for panel, target in zip(axes, targets):
        table = yearly[yearly["target"] == target]
        stacked = table["in_transit_hours_p50"]
        per_year = stacked.diff().fillna(stacked).to_numpy()
        panel.bar(table["calendar_year"], per_year, width=0.8, color=palette.BLUE)
        top = max(top, float(np.nanmax(per_year)) if per_year.size else 0.0)
        panel.set_title(f"{target}\n{_verdict(summary, target)}", fontsize=8)
        if not np.any(per_year > 0):
            panel.text(0.5, 0.5, "no hours collected", transform=panel.transAxes, ha="center", va="center",
                       fontsize=8, color=palette.VERMILLION)
        panel.grid(axis="y", alpha=0.3)
        panel.tick_params(labelsize=7)
    for panel in axes[:len(targets)]:
        panel.set_ylim(0.0, 1.1 * top or 1.0)  # one scale for all, so panels compare
    _label_outer(axes, len(targets), "calendar year", "in-transit h")
    figure.tight_layout()
    return figure


def resolution_plot(yearly: pd.DataFrame, goal_resolution: float, start_year: float, horizon_years: float, path,
                    summary: pd.DataFrame | None = None) -> None:
    """Write `resolution_figure` as PNG to `path` (atomic, byte-identical on rerun)."""
    palette.save_png(resolution_figure(yearly, goal_resolution, start_year, horizon_years, summary), path)


def hours_plot(yearly: pd.DataFrame, path, summary: pd.DataFrame | None = None) -> None:
    """Write `hours_figure` as PNG to `path` (atomic, byte-identical on rerun)."""
    palette.save_png(hours_figure(yearly, summary), path)


def budget_figure(budget: pd.DataFrame) -> Figure:
    """Share of each noise term in the stacked variance of each target's deciding bin (median
    visit, stacked as often as the median trial observes it), one stacked bar per target.

    Example: ``budget_figure(outcome.budget)``.
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
    axes.set_xlabel("share of the stacked variance in the deciding bin")
    axes.set_title("Noise budget at the goal resolution (median visit)")
    axes.legend(fontsize=7, ncol=2)
    figure.tight_layout()
    return figure
