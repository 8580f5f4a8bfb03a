"""vigil's tables as astropy QTables: `Time` for times, `Quantity` where a name states a unit."""

from __future__ import annotations

import numpy as np
import pandas as pd
from astropy.table import MaskedColumn, QTable
from astropy.time import Time

from vigil.inputs import unit_of


def to_qtable(table: pd.DataFrame) -> QTable:
    """The DataFrame as an astropy QTable.

    Columns of UTC datetimes become `Time` (scale utc), `*_bjd_tdb` columns `Time` in TDB
    (format jd), columns whose name states a unit (`_deg`, `_h`, `_d`, `_min`, ...) Quantities
    in it; missing values are masked. Other columns are copied (categories as text).

    Examples
    --------
    >>> import pandas as pd
    >>> to_qtable(pd.DataFrame({"mid_bjd_tdb": [2461000.5], "alt_mid_deg": [45.0]}))["alt_mid_deg"]
    <Quantity [45.] deg>
    """
    out = QTable()
    for name in table.columns:
        out[name] = _column(table[name], str(name))
    return out


def _column(values: pd.Series, name: str):
    if isinstance(values.dtype, pd.DatetimeTZDtype):
        when = values.dt.tz_convert("UTC").dt.tz_localize(None).to_numpy(dtype="datetime64[s]")
        return Time(np.ma.masked_where(np.isnat(when), when), scale="utc")
    if name.endswith("_bjd_tdb"):
        jd = values.to_numpy(dtype=float)
        return Time(np.ma.masked_invalid(jd), format="jd", scale="tdb")
    unit = unit_of(name)
    if unit is not None and pd.api.types.is_numeric_dtype(values) and not pd.api.types.is_bool_dtype(values):
        return values.to_numpy(dtype=float) * unit
    if isinstance(values.dtype, pd.CategoricalDtype) or pd.api.types.is_string_dtype(values):
        return MaskedColumn(values.astype(object).where(values.notna(), "").to_numpy(dtype=str),
                            mask=values.isna().to_numpy())
    return values.to_numpy()
