"""Campaign outputs as CSV: summary per target, yearly forecast, ledger of visits."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from vigil import schema
from vigil.export.table import iso_utc, write_csv
from vigil.campaign.result import CampaignResult


def _summary(summary: pd.DataFrame) -> pd.DataFrame:
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
    """summary.csv, forecast.csv and ledger.csv in `folder` (atomic writes)."""
    paths = [folder / "summary.csv", folder / "forecast.csv", folder / "ledger.csv"]
    write_csv(_summary(schema.SUMMARY.check(result.summary)), paths[0], text_columns=("target", "limited_by"))
    write_csv(schema.FORECAST.check(result.yearly).round(3), paths[1], text_columns=("target",))
    write_csv(_ledger(schema.LEDGER.check(result.ledger)), paths[2], text_columns=("target", "site", "shared_with"))
    return paths
