"""CSV output of vigil's tables: ISO 8601 UTC times, fixed precision, spreadsheet-safe text.

Spreadsheet programs run a cell that starts with `=`, `+`, `-`, `@`, a tab or a carriage
return as a formula. Text cells (names, notes) that start so get a leading apostrophe;
numeric columns are written as numbers and left alone.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from astropy.time import Time

from vigil.export.files import write_atomic

_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def iso_utc(jd_utc) -> np.ndarray:
    """ISO 8601 UTC strings with a `Z`, to the second; empty where the JD is NaN."""
    jd = np.asarray(jd_utc, dtype=float)
    out = np.full(jd.shape, "", dtype=object)
    good = np.isfinite(jd)
    if good.any():
        out[good] = [s + "Z" for s in Time(jd[good], format="jd", scale="utc", precision=0).isot]
    return out


def neutralise_text(values: pd.Series) -> pd.Series:
    """Prefix an apostrophe to text that a spreadsheet would read as a formula."""
    text = values.astype(str)
    return text.where(~text.str.startswith(_FORMULA_STARTS), "'" + text)


def write_csv(table: pd.DataFrame, path, text_columns=()) -> None:
    """Write `table` as CSV (atomic), neutralising the named text columns."""
    write_atomic(path, csv_bytes(table, text_columns))


def csv_bytes(table: pd.DataFrame, text_columns=(), header: bool = True) -> bytes:
    """`table` as UTF-8 CSV text, neutralising the named text columns; with header=False the
    rows only (to continue a file)."""
    out = table.copy()
    for column in text_columns:
        out[column] = neutralise_text(out[column])
    return out.to_csv(index=False, header=header, lineterminator="\n").encode("utf-8")
