"""What a campaign simulation hands to the exporters (kept below both, so exporters never
import the runner)."""

from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

from vigil.notes import Note


@dataclass
class CampaignResult:
    """Outputs of one campaign simulation."""

    summary: pd.DataFrame
    yearly: pd.DataFrame
    ledger: pd.DataFrame
    years_to_goal: dict  # target -> per-trial years (inf if never), reference scenario
    scenarios: pd.DataFrame  # one row per target and atmosphere scenario
    budget: pd.DataFrame  # one row per target and noise term (median visit)
    notes: tuple[Note, ...] = ()  # for the user (vigil.notes), each once
