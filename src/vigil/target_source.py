"""A targets catalogue as the reader sees it: any format, the user's column mapping, vigil's units.

`catalog.read_targets` validates what `target_cells` gives: text cells under vigil's field
names, in the units those names state, one row per target. Rows that lack a required value
are left out with one warning listing them (`drop_incomplete`), or, with `strict`, kept so
that the reader refuses the first of them.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from vigil import bodies, schema
from vigil.column_map import apply_column_map, read_column_map
from vigil.errors import InputError
from vigil.field_units import ANGLE_FIELDS, in_field_units
from vigil.table_formats import SourceTable, read_typed_table, table_format
from vigil.textfile import read_csv, row_label

log = logging.getLogger("vigil")

# Fields a mapping may name: the targets table, sexagesimal coordinates, the physical columns,
# the occultation geometry and the host star.
MAPPABLE_FIELDS = (*schema.TARGET_COLUMNS, *ANGLE_FIELDS, *bodies.NUMBER_COLUMNS, "mag_band", "eccentricity",
                   "omega_deg", "inclination_deg", "host")
MAX_LISTED_ROWS = 10


@dataclass(frozen=True)
class CatalogueOptions:
    """How to read a targets catalogue: its format (None: by extension), a column mapping
    TOML (None: vigil's own column names), and whether an incomplete row is refused."""

    format: str | None = None
    columns: Path | None = None
    strict: bool = False


def target_cells(path: Path, options: CatalogueOptions) -> SourceTable:
    """The catalogue's cells under vigil's field names and in their units.

    Examples
    --------
    >>> source = target_cells(Path("planets.ecsv"), CatalogueOptions())  # doctest: +SKIP
    >>> source.cells["duration_h"]  # hours, whatever unit the file states  # doctest: +SKIP
    """
    fmt = table_format(path, options.format)
    if fmt == "csv":
        header, cells = read_csv(path, "target")
        source = SourceTable(path, cells, {}, header)
    else:
        source = read_typed_table(path, fmt)
    return prepared_cells(source, options)


def prepared_cells(source: SourceTable, options: CatalogueOptions) -> SourceTable:
    """A catalogue's cells (a file's or a table's built in Python) under vigil's field names,
    by the column mapping if any, and in their units."""
    if options.columns is not None:
        source = apply_column_map(read_column_map(options.columns, MAPPABLE_FIELDS), source)
    return in_field_units(source)


def drop_incomplete(source: SourceTable, required: tuple[str, ...], strict: bool) -> pd.DataFrame:
    """The cells without rows that lack a required value; a warning lists what was left out.

    With `strict` nothing is left out (the reader then refuses the first incomplete row).

    Examples
    --------
    >>> cells = pd.DataFrame({"name": ["a", "b"], "period_d": ["1.5", ""]}, index=[2, 3])
    >>> drop_incomplete(SourceTable(Path("t.csv"), cells), ("name", "period_d"), False).index.tolist()
    [2]
    """
    cells = source.cells
    empty = cells[list(required)] == ""
    incomplete = empty.any(axis=1)
    if strict or not incomplete.any():
        return cells
    if incomplete.all():
        raise InputError(f"{source.path}: no row has every required value ({', '.join(required)}); "
                         f"the first incomplete is {_listed(empty, cells.index[:1])}")
    lost = cells.index[incomplete.to_numpy()]
    more = f" and {len(lost) - MAX_LISTED_ROWS} more" if len(lost) > MAX_LISTED_ROWS else ""
    log.warning("%s: %d of %d rows left out for missing required values: %s%s (--strict refuses them instead)",
                source.path, len(lost), len(cells), _listed(empty, lost[:MAX_LISTED_ROWS]), more)
    return cells[~incomplete.to_numpy()]


def _listed(empty: pd.DataFrame, labels) -> str:
    return "; ".join(f"{row_label(label)} ({', '.join(empty.columns[empty.loc[label].to_numpy()])})"
                     for label in labels)
