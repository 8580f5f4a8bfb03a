"""Coverage tallies per target and site, built piece by piece from a streamed windows table."""

from __future__ import annotations

import numpy as np
import pandas as pd

from vigil.export.windows_csv import windows_table

CLASSES = ("full", "ingress", "egress", "partial")
_HOW = {**{c: "sum" for c in CLASSES}, "first_full_utc": "min"}


def coverage_tally(windows: pd.DataFrame) -> pd.DataFrame:
    """Per (target, site): windows of each observable class and the start (UTC) of the first
    full window (NaT if none), sorted by target then site. `windows` as vigil.plan_windows
    returns it (or the windows stage's table).

    Examples
    --------
    >>> tally = coverage_tally(pd.DataFrame({"target": ["A"], "site": ["s"], "coverage": ["full"],
    ...                                      "window_start_utc": pd.to_datetime(["2027-01-01"], utc=True)}))
    >>> int(tally["full"].iloc[0]), str(tally["first_full_utc"].iloc[0])
    (1, '2027-01-01 00:00:00+00:00')
    """
    windows = windows_table(windows)
    coverage = windows["coverage"].astype(str).to_numpy()
    columns = {"target": windows["target"].astype(str).to_numpy(), "site": windows["site"].astype(str).to_numpy(),
               **{c: (coverage == c).astype(np.int64) for c in CLASSES},
               "first_full_utc": windows["window_start_utc"].where(coverage == "full").array}
    return _regroup(pd.DataFrame(columns))


def add_tallies(tallies: list[pd.DataFrame]) -> pd.DataFrame:
    """The tally of a table from the tallies of its pieces (coverage_tally)."""
    return _regroup(pd.concat(tallies, ignore_index=True))


def _regroup(rows: pd.DataFrame) -> pd.DataFrame:
    return rows.groupby(["target", "site"], sort=True).agg(_HOW).reset_index()
