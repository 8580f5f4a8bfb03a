"""Coverage tallies per target and site, built piece by piece from a streamed windows table."""

from __future__ import annotations

import numpy as np
import pandas as pd

CLASSES = ("full", "ingress", "egress", "partial")
_HOW = {**{c: "sum" for c in CLASSES}, "first_full_jd_utc": "min"}


def coverage_tally(windows: pd.DataFrame) -> pd.DataFrame:
    """Per (target, site): windows of each observable class and the start (JD UTC) of the first
    full window (inf if none), sorted by target then site.

    Examples
    --------
    >>> tally = coverage_tally(pd.DataFrame({"target": ["A"], "site": ["s"], "coverage": ["full"],
    ...                                      "window_start_jd_utc": [2461000.5]}))
    >>> int(tally["full"].iloc[0]), float(tally["first_full_jd_utc"].iloc[0])
    (1, 2461000.5)
    """
    coverage = windows["coverage"].astype(str).to_numpy()
    columns = {"target": windows["target"].astype(str).to_numpy(), "site": windows["site"].astype(str).to_numpy(),
               **{c: (coverage == c).astype(np.int64) for c in CLASSES},
               "first_full_jd_utc": np.where(coverage == "full", windows["window_start_jd_utc"].to_numpy(dtype=float),
                                             np.inf)}
    return _regroup(pd.DataFrame(columns))


def add_tallies(tallies: list[pd.DataFrame]) -> pd.DataFrame:
    """The tally of a table from the tallies of its pieces (coverage_tally)."""
    return _regroup(pd.concat(tallies, ignore_index=True))


def _regroup(rows: pd.DataFrame) -> pd.DataFrame:
    return rows.groupby(["target", "site"], sort=True).agg(_HOW).reset_index()
