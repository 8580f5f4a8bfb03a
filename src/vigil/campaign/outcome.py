"""A campaign's result as the Python API hands it out: tables with NaN for "never" and UTC
datetimes, figures on request, and the files the command line writes."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from vigil.campaign.result import CampaignResult
from vigil.campaign.spec import CampaignSpec
from vigil.export.campaign_csv import write_campaign_csvs
from vigil.export.palette import save_png
from vigil.export.plots import budget_figure, hours_figure, resolution_figure
from vigil.export.windows_csv import utc_datetimes

PLOT_FILES = ("resolution.png", "hours.png", "budget.png")
# Summary columns where the runner writes inf for "never" (blank cells in summary.csv).
NEVER_COLUMNS = ("years_to_goal_p10", "years_to_goal_p50", "years_to_goal_p90", "hours_needed")


@dataclass(frozen=True)
class CampaignOutcome:
    """The outcome of `vigil.run_campaign`.

    summary: one row per target (years to the goal NaN where it is not reached in that share of
    trials; limited_by NaN when reachable). forecast: per target and campaign year. ledger: the
    visits of trial 0 with mid_utc, start_utc, end_utc as UTC datetimes. years_to_goal: per
    target, the years each trial needed (inf if never). simulation: the tables as the runner
    made them (JD UTC times), which `write` turns into the command line's files.

    Examples
    --------
    >>> outcome = vigil.run_campaign("campaign.toml")  # doctest: +SKIP
    >>> outcome.plot_resolution()  # doctest: +SKIP
    """

    spec: CampaignSpec
    simulation: CampaignResult

    @property
    def summary(self) -> pd.DataFrame:
        """Per target: rates, years to the goal (p10/p50/p90; NaN = not reached), verdict."""
        out = self.simulation.summary.copy()
        for column in NEVER_COLUMNS:
            out[column] = out[column].where(np.isfinite(out[column]))
        out["limited_by"] = out["limited_by"].where(out["limited_by"] != "")
        return out

    @property
    def scenarios(self) -> pd.DataFrame:
        """Per target and atmosphere scenario: the verdict columns of the summary."""
        out = self.simulation.scenarios.copy()
        for column in NEVER_COLUMNS:
            out[column] = out[column].where(np.isfinite(out[column]))
        return out

    @property
    def budget(self) -> pd.DataFrame:
        """The noise budget: per target and noise term, the median visit's noise in the deciding
        bin and its share (the table `write` saves as budget.csv, there rounded to 4 decimals).

        Returns
        -------
        pandas.DataFrame
            One row per target and term, columns (`vigil.schema.BUDGET`):

            - target : the planet's name
            - term : photon_target, photon_comparison, sky, read, scintillation, red_noise or floor
            - ppm_per_bin_per_visit : the term's noise on the transit depth in the deciding
              spectral bin for one median visit, ppm
            - share_of_variance : its share (0 to 1) of the variance after visits_stacked visits
              (the floor does not average down, so its share grows with visits)
            - wavelength_um : centre of the deciding bin, micrometres
            - visits_stacked : clear visits over the horizon, median over trials (at least 1)

        Examples
        --------
        >>> outcome.budget.query("target == 'Quillon-2 b'")[["term", "share_of_variance"]]  # doctest: +SKIP
        """
        return self.simulation.budget.copy()

    @property
    def forecast(self) -> pd.DataFrame:
        """Per target and campaign year: stacked hours, SNR and resolution reached (p10/p50/p90)."""
        return self.simulation.yearly.copy()

    @property
    def ledger(self) -> pd.DataFrame:
        """The visits of one simulated campaign (trial 0) with their hours and weather."""
        ledger = self.simulation.ledger
        out = ledger.drop(columns=["mid_jd_utc", "start_jd_utc", "end_jd_utc"])
        for position, (name, source) in enumerate((("mid_utc", "mid_jd_utc"), ("start_utc", "start_jd_utc"),
                                                   ("end_utc", "end_jd_utc")), start=4):
            out.insert(position, name, utc_datetimes(ledger[source].to_numpy()).set_axis(out.index))
        return out

    @property
    def years_to_goal(self) -> dict:
        """Per target, the years each trial took to reach the goal (inf if never)."""
        return self.simulation.years_to_goal

    def plot_resolution(self) -> Figure:
        """Resolution reached at the goal SNR by campaign year (median and 10-90 % of trials)."""
        return resolution_figure(self.forecast, self.spec.goal_resolution, self.spec.start.utc.decimalyear,
                                 self.spec.horizon_years, self.simulation.summary)

    def plot_hours(self) -> Figure:
        """In-transit hours stacked each calendar year (median over trials)."""
        return hours_figure(self.forecast, self.simulation.summary)

    def plot_budget(self) -> Figure:
        """Shares of the noise terms in each target's deciding bin (median visit)."""
        return budget_figure(self.budget)

    def write(self, folder) -> list[Path]:
        """summary.csv, scenarios.csv, forecast.csv, ledger.csv, budget.csv, resolution.png,
        hours.png and budget.png in `folder` (each written atomically; existing files are
        replaced)."""
        folder = Path(folder)
        paths = write_campaign_csvs(self.simulation, folder)
        for name, figure in zip(PLOT_FILES, (self.plot_resolution(), self.plot_hours(), self.plot_budget())):
            save_png(figure, folder / name)
        return [*paths, *(folder / name for name in PLOT_FILES)]
