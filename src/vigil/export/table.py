"""CSV output of vigil's tables: ISO 8601 UTC times, fixed precision, spreadsheet-safe text.

Spreadsheet programs run a cell that starts with `=`, `+`, `-`, `@`, a tab or a carriage
return as a formula. The rule, applied to every text cell of every CSV vigil writes:
- on export, a leading apostrophe is added to a text cell that starts with one of those
  characters or that already starts with an apostrophe;
- on import (every CSV vigil reads), a leading apostrophe followed by one of those characters
  or by another apostrophe (exactly what export adds) is removed.
So import(export(text)) == text for every text, and text that needs neither is never altered
(a name such as 'Oumuamua keeps its apostrophe).
Spreadsheets themselves treat a leading apostrophe as a text marker and do not save it.
Numeric columns are written as numbers and left alone.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from astropy.time import Time

from vigil.export.files import write_atomic

_FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
_TEXT_MARK = "'"


def iso_utc(jd_utc) -> np.ndarray:
    """ISO 8601 UTC strings with a `Z`, to the second; empty where the JD is NaN."""
    jd = np.asarray(jd_utc, dtype=float)
    out = np.full(jd.shape, "", dtype=object)
    good = np.isfinite(jd)
    if good.any():
        out[good] = [s + "Z" for s in Time(jd[good], format="jd", scale="utc", precision=0).isot]
    return out


def utc_from_iso(text) -> pd.Series:
    """ISO 8601 UTC strings (a trailing `Z` allowed; empty for none) as timezone-aware UTC
    datetimes (datetime64[s, UTC]: every date vigil plans for, 1950-2300, fits); NaT for empty.
    A leap second (23:59:60), which datetimes cannot hold, becomes 23:59:59.

    Examples
    --------
    >>> utc_from_iso(["2027-03-04T22:15:00Z", ""]).tolist()
    [Timestamp('2027-03-04 22:15:00+0000', tz='UTC'), NaT]
    """
    cleaned = pd.Series(text, dtype=object).str.rstrip("Z").str.replace(r":60$", ":59", regex=True).replace("", "NaT")
    return pd.Series(cleaned.to_numpy(dtype=object).astype("datetime64[s]")).dt.tz_localize("UTC")


def neutralise_cell(text: str) -> str:
    """The text as exported: an apostrophe added where a spreadsheet would run it, or where one leads.

    Examples
    --------
    >>> neutralise_cell("=cmd|' /C calc'!A0"), neutralise_cell("'"), neutralise_cell("b")
    ("'=cmd|' /C calc'!A0", "''", 'b')
    """
    if text.startswith((_TEXT_MARK, *_FORMULA_STARTS)):
        return _TEXT_MARK + text
    return text


def restore_cell(text: str) -> str:
    """The text as imported: the apostrophe `neutralise_cell` adds removed, other text as it is.

    Examples
    --------
    >>> restore_cell("''"), restore_cell("'=1+1"), restore_cell("'Oumuamua"), restore_cell("plain")
    ("'", '=1+1', "'Oumuamua", 'plain')
    """
    return text[1:] if text.startswith(_TEXT_MARK) and text[1:].startswith((_TEXT_MARK, *_FORMULA_STARTS)) else text


def write_csv(table: pd.DataFrame, path) -> None:
    """Write `table` as CSV (atomic), every text cell neutralised (module docstring)."""
    write_atomic(path, csv_bytes(table))


def csv_bytes(table: pd.DataFrame, header: bool = True) -> bytes:
    """`table` as UTF-8 CSV text, every text cell neutralised; with header=False the rows only
    (to continue a file)."""
    out = table.copy()
    for column in out.columns:
        if not pd.api.types.is_numeric_dtype(out[column]) and not pd.api.types.is_bool_dtype(out[column]):
            out[column] = out[column].map(lambda v: neutralise_cell(v) if isinstance(v, str) else v)
    return out.to_csv(index=False, header=header, lineterminator="\n").encode("utf-8")
