"""Campaign outputs as CSV: summary per target, verdict per atmosphere scenario, yearly forecast,
ledger of visits, noise budget of the median visit."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from vigil import schema
from vigil.export.table import iso_utc, write_csv
from vigil.campaign.result import CampaignResult


def _verdicts(summary: pd.DataFrame) -> pd.DataFrame:
    out = summary.copy()
    for column in ("years_to_goal_p10", "years_to_goal_p50", "years_to_goal_p90", "hours_needed"):
        out[column] = out[column].where(np.isfinite(out[column]))  # never -> empty cell
    return out.round(3)


def _ledger(ledger: pd.DataFrame) -> pd.DataFrame:
    out = ledger.drop(columns=[schema.MID_JD_UTC, "start_jd_utc", "end_jd_utc"])
    out.insert(4, "mid_utc", iso_utc(ledger[schema.MID_JD_UTC].to_numpy()))
    out.insert(5, "start_utc", iso_utc(ledger["start_jd_utc"].to_numpy()))
    out.insert(6, "end_utc", iso_utc(ledger["end_jd_utc"].to_numpy()))
    return out.round(3)


def write_campaign_csvs(result: CampaignResult, folder: Path) -> list[Path]:
    """summary.csv, scenarios.csv, forecast.csv, ledger.csv and budget.csv in `folder` (atomic
    writes)."""
    paths = [folder / name for name in ("summary.csv", "scenarios.csv", "forecast.csv", "ledger.csv", "budget.csv")]
    write_csv(_verdicts(schema.SUMMARY.check(result.summary)), paths[0], text_columns=("target", "scenario", "limited_by",
                                                                  "reachable_scenarios"))
    write_csv(_verdicts(schema.SCENARIOS.check(result.scenarios)), paths[1], text_columns=("target", "scenario", "limited_by"))
    write_csv(schema.FORECAST.check(result.yearly).round(3), paths[2], text_columns=("target",))
    write_csv(_ledger(schema.LEDGER.check(result.ledger)), paths[3], text_columns=("target", "site", "shared_with"))
    write_csv(schema.BUDGET.check(result.budget).round(4), paths[4], text_columns=("target", "term"))
    return paths
