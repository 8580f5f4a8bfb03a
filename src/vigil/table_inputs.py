"""Tables built in Python (pandas, astropy, records) as the text cells a CSV file would hold.

The readers validate cells of text, so an in-memory table goes through exactly the checks
(and messages) of a file: each value is written as text that reads back to the same number,
astropy `Quantity` columns are converted to the unit their name states, `Time` columns of
BJD_TDB to Julian dates, a `SkyCoord` column to ra_deg and dec_deg, and missing values
(None, NaN, NA, masked) become empty cells. Rows are named by their DataFrame index label,
or by their position for other tables.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np
import pandas as pd
from astropy.coordinates import SkyCoord
from astropy.table import Table
from astropy.time import Time
import astropy.units as u

from vigil.errors import InputError
from vigil.inputs import unit_of


@dataclass(frozen=True)
class MemorySource:
    """Where an in-memory table's problems are reported: `label row N` instead of `file: line N`."""

    label: str

    def at(self, row) -> str:
        """The place of one row (None: the table as a whole)."""
        return self.label if row is None else f"{self.label} row {row}"

    def __str__(self) -> str:
        return self.label


def text_cells(data, label: str) -> pd.DataFrame:
    """The table as text cells indexed by row name, from a DataFrame, an astropy Table or
    QTable, or a list of records (dicts).

    Examples
    --------
    >>> text_cells([{"name": "A b", "period_d": 1.5}], "targets")
         name period_d
    0     A b      1.5
    """
    if isinstance(data, pd.DataFrame):
        columns = {str(c): list(data[c]) for c in data.columns}
        index = list(data.index)
    elif isinstance(data, Table):
        columns = _table_columns(data, label)
        index = list(range(len(data)))
    elif isinstance(data, (list, tuple)) and all(isinstance(r, dict) for r in data):
        frame = pd.DataFrame.from_records(list(data))
        columns, index = {str(c): list(frame[c]) for c in frame.columns}, list(range(len(frame)))
    else:
        raise InputError(f"{label}: expected a file path, a pandas DataFrame, an astropy Table or QTable, or a list "
                         f"of records (dicts), got {type(data).__name__}")
    if not index:
        raise InputError(f"{label}: no rows; expected one row per target")
    cells = {name: [_text(v, name, label) for v in values] for name, values in columns.items()}
    return pd.DataFrame(cells, index=index, columns=list(columns), dtype=str)


def _table_columns(table: Table, label: str) -> dict:
    """Plain values of an astropy table's columns, Quantities in the unit their name states."""
    columns = {}
    for name in table.colnames:
        column = table[name]
        if isinstance(column, SkyCoord):
            icrs = column.icrs
            columns.setdefault("ra_deg", list(icrs.ra.deg))
            columns.setdefault("dec_deg", list(icrs.dec.deg))
        elif isinstance(column, Time):
            columns[name] = list(_bjd_tdb(column, name, label))
        elif getattr(column, "unit", None) is not None:
            columns[name] = list(_in_unit(column, name, label))
        else:
            values = column.filled(np.nan) if np.ma.isMaskedArray(column) and column.dtype.kind == "f" else column
            columns[name] = [None if v is np.ma.masked else v for v in values.tolist()]
    return columns


def _bjd_tdb(column: Time, name: str, label: str) -> np.ndarray:
    if not name.endswith("_bjd_tdb") or column.scale != "tdb":
        raise InputError(f"{label}: column {name}: an astropy Time in scale {column.scale!r}; expected Barycentric "
                         "Julian Dates in TDB in a column named *_bjd_tdb (Time(..., format='jd', scale='tdb'))")
    return column.jd


def _in_unit(column, name: str, label: str) -> np.ndarray:
    unit = unit_of(name)
    quantity = u.Quantity(column)
    if unit is None:
        if quantity.unit.physical_type == "dimensionless":
            return quantity.to_value(u.dimensionless_unscaled)
        raise InputError(f"{label}: column {name}: has unit {quantity.unit}; expected plain numbers")
    try:
        return quantity.to_value(unit, equivalencies=u.temperature())
    except u.UnitConversionError:
        raise InputError(f"{label}: column {name}: unit {quantity.unit} does not convert to {unit}, the unit its "
                         "name states") from None


def _text(value, name: str, label: str) -> str:
    """The cell text of one value: numbers so that float(text) gives them back exactly."""
    if value is None or value is pd.NA or value is pd.NaT:
        return ""
    if isinstance(value, Time):
        value = float(_bjd_tdb(value, name, label))
    if isinstance(value, u.Quantity):
        value = float(_in_unit(value, name, label))
    if isinstance(value, bool | np.bool_):
        return str(bool(value))
    if isinstance(value, numbers.Integral):
        return str(int(value))
    if isinstance(value, numbers.Real):
        return "" if math.isnan(value) else repr(float(value))
    return str(value).strip()
