"""Choosing which windows an observer wants listed: by coverage class and observable fraction."""

from __future__ import annotations

import pandas as pd

from vigil.errors import InputError
from vigil.schema import COVERAGE_CLASSES


def parse_coverage(text: str | None, option: str = "--coverage") -> frozenset | None:
    """The coverage classes named in a comma-separated list (None: every class).

    Example: ``parse_coverage("full,ingress")`` is ``frozenset({"full", "ingress"})``.
    """
    if text is None:
        return None
    chosen = frozenset(part.strip() for part in text.split(",") if part.strip())
    unknown = sorted(chosen - set(COVERAGE_CLASSES))
    if unknown or not chosen:
        raise InputError(f"{option}: expected a comma-separated list of {', '.join(COVERAGE_CLASSES)}, got {text!r}")
    return chosen


def filter_windows(windows: pd.DataFrame, coverage: frozenset | None = None,
                   min_fraction: float | None = None) -> pd.DataFrame:
    """Windows whose coverage is in `coverage` (None: all) and whose observable fraction of the
    transit is at least `min_fraction` (0 to 1; None: no limit), in their original order.

    Example: ``filter_windows(windows, frozenset({"full"}), 0.5)``.
    """
    if min_fraction is not None and not 0.0 <= min_fraction <= 1.0:
        raise InputError(f"--min-fraction: expected a fraction from 0 to 1, got {min_fraction!r}")
    keep = pd.Series(True, index=windows.index)
    if coverage is not None:
        keep &= windows["coverage"].astype(str).isin(coverage)
    if min_fraction is not None:
        keep &= windows["observable_fraction"] >= min_fraction
    return windows[keep].reset_index(drop=True)
