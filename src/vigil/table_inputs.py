"""Tables built in Python (pandas, astropy, records) as the text cells a catalogue file gives.

The readers validate cells of text, so an in-memory table goes through exactly the checks
(and messages) of a file: each value is written as text that reads back to the same number,
Quantities are converted into the unit their column's name states, `Time` values of BJD_TDB
become Julian dates, a `SkyCoord` column gives ra_deg and dec_deg, and missing values
(None, NaN, NA, masked) become empty cells. Rows are named `row N`: the DataFrame's index
label, or the position (from 0) in a list of records or an astropy table; the table as a
whole is `columns`.
"""

from __future__ import annotations

import math
import numbers

import astropy.units as u
import numpy as np
import pandas as pd
from astropy.table import Table
from astropy.time import Time

from vigil.errors import InputError
from vigil.field_units import conversion_factor
from vigil.table_formats import SourceTable, table_cells

HEADER = "columns"


def memory_cells(data, label: str, rows_are: str = "target") -> SourceTable:
    """The table as text cells, from a DataFrame, an astropy Table or QTable, or a list of
    records (dicts); `label` stands for the file name in messages.

    Examples
    --------
    >>> memory_cells([{"name": "A b", "period_d": 1.5}], "targets").cells
             name period_d
    row 0     A b      1.5
    """
    if isinstance(data, Table):
        return table_cells(data, label, first_row=0, header=HEADER)
    if isinstance(data, (list, tuple)) and all(isinstance(r, dict) for r in data):
        data = pd.DataFrame.from_records(list(data))
    if not isinstance(data, pd.DataFrame):
        raise InputError(f"{label}: expected a file path, a pandas DataFrame, an astropy Table or QTable, or a list "
                         f"of records (dicts), got {type(data).__name__}")
    if data.empty:
        raise InputError(f"{label}: no rows; expected one row per {rows_are}")
    cells = {str(c): [_text(v, str(c), label) for v in data[c]] for c in data.columns}
    return SourceTable(label, pd.DataFrame(cells, index=[f"row {i}" for i in data.index], dtype=str), {}, HEADER)


def _text(value, name: str, label: str) -> str:
    """The cell text of one value: numbers so that float(text) gives them back exactly."""
    if value is None or value is pd.NA or value is pd.NaT:
        return ""
    if isinstance(value, Time):
        if value.scale != "tdb":
            raise InputError(f"{label}: column {name!r} is a time in scale {value.scale.upper()}; expected BJD in TDB "
                             "(convert it first, or give the Julian date as a number)")
        value = float(value.jd)
    if isinstance(value, u.Quantity):
        value = float(value.value) * conversion_factor(value.unit, name, f"{label}: column {name!r}")
    if isinstance(value, (bool, np.bool_)):
        return str(bool(value))
    if isinstance(value, numbers.Integral):
        return str(int(value))
    if isinstance(value, numbers.Real):
        return "" if math.isnan(value) else repr(float(value))
    return str(value).strip()
