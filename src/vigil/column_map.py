"""A column mapping the user writes once (TOML): which column of their catalogue is which field.

    [columns]
    name = "object"                                             # a column, read as is
    period_d = { column = "per", unit = "d" }
    duration_h = { column = "t14", unit = "min" }              # converted to hours
    t0_bjd_tdb = { column = "tmid", unit = "d", offset = 2450000 }  # JD - 2450000 in the file
    period_err_d = { plus = "per_up", minus = "per_lo", unit = "d", combine = "larger" }
    t0_err_d = { value = 0.0007, unit = "d" }                   # stated: the same for every row

`combine` joins asymmetric uncertainties: "larger" (the default, conservative) or "mean" of
the two magnitudes (a minus column may hold negative numbers); where one side is empty the
other is used. `offset` is added after conversion, in the field's unit. A unit the file itself
states is used when the mapping gives none; if both are given they must agree. Columns the
mapping does not name are kept under their own names.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass
from pathlib import Path

import astropy.units as u
import pandas as pd

from vigil.errors import InputError
from vigil.field_units import conversion_factor, field_unit
from vigil.table_formats import SourceTable, unit_of
from vigil.textfile import csv_number, did_you_mean

COMBINE = ("larger", "mean")
_KEYS = {"column", "plus", "minus", "combine", "unit", "value", "offset"}


@dataclass(frozen=True)
class FieldSource:
    """Where one vigil field comes from: a column, a +/- pair of columns, or a stated value."""

    field: str
    column: str | None = None
    plus: str | None = None
    minus: str | None = None
    combine: str = "larger"
    unit: u.UnitBase | None = None
    value: float | None = None
    offset: float = 0.0

    @property
    def columns(self) -> tuple[str, ...]:
        """The source columns this field reads."""
        return tuple(c for c in (self.column, self.plus, self.minus) if c is not None)


@dataclass(frozen=True)
class ColumnMap:
    """A mapping file: its path and one FieldSource per vigil field it names."""

    path: Path
    fields: tuple[FieldSource, ...]


def read_column_map(path: str | Path, known_fields) -> ColumnMap:
    """Read a mapping TOML; `known_fields` are the vigil fields it may name.

    Examples
    --------
    >>> mapping = read_column_map("examples/survey_columns.toml", ["name", "period_d"])  # doctest: +SKIP
    """
    path = Path(path)
    try:
        document = tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except OSError as exc:
        raise InputError(f"{path}: cannot read file ({exc.strerror})") from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: not a readable TOML file ({exc})") from None
    columns = document.get("columns")
    if not isinstance(columns, dict) or not columns:
        raise InputError(f"{path}: [columns]: expected a table naming, for each vigil field, its source column")
    known = list(known_fields)
    return ColumnMap(path, tuple(_field_source(path, name, entry, known) for name, entry in columns.items()))


def _field_source(path: Path, name: str, entry, known: list[str]) -> FieldSource:
    where = f"{path}: [columns] {name}"
    if name not in known:
        hint = did_you_mean(name, known) or f"; vigil fields are {', '.join(known)}"
        raise InputError(f"{where}: not a vigil field{hint}")
    if isinstance(entry, str):
        entry = {"column": entry}
    if not isinstance(entry, dict) or not entry:
        raise InputError(f"{where}: expected a column name or a table such as {{ column = \"per\", unit = \"d\" }}")
    unknown = sorted(set(entry) - _KEYS)
    if unknown:
        raise InputError(f"{where}: unknown key {unknown[0]!r}; expected {', '.join(sorted(_KEYS))}")
    for key in ("column", "plus", "minus", "combine", "unit"):
        if key in entry and not (isinstance(entry[key], str) and entry[key].strip()):
            raise InputError(f"{where}: {key}: expected text, got {entry[key]!r}")
    for key in ("value", "offset"):
        if key in entry and (isinstance(entry[key], bool) or not isinstance(entry[key], (int, float))
                             or not math.isfinite(entry[key])):
            raise InputError(f"{where}: {key}: expected a number, got {entry[key]!r}")
    _check_shape(where, entry)
    combine = entry.get("combine", "larger").lower()
    if combine not in COMBINE:
        raise InputError(f"{where}: combine: expected larger or mean, got {entry['combine']!r}")
    unit = unit_of(entry["unit"], where) if "unit" in entry else None
    if unit is not None and field_unit(name) is not None:
        conversion_factor(unit, name, where)
    return FieldSource(name, entry.get("column"), entry.get("plus"), entry.get("minus"), combine, unit,
                       entry.get("value"), float(entry.get("offset", 0.0)))


def _check_shape(where: str, entry: dict) -> None:
    """Exactly one of: column, the plus/minus pair, value."""
    given = [k for k in ("column", "plus", "minus", "value") if k in entry]
    if given in (["column"], ["plus", "minus"], ["value"]):
        return
    if given == ["plus"] or given == ["minus"]:
        raise InputError(f"{where}: {given[0]} needs its partner ({'minus' if given == ['plus'] else 'plus'})")
    raise InputError(f"{where}: expected one of column, plus and minus, or value; got {', '.join(given) or 'none'}")


def apply_column_map(mapping: ColumnMap, source: SourceTable) -> SourceTable:
    """The source table with the mapped fields in vigil's names and units; other columns kept.

    Examples
    --------
    >>> import pandas as pd
    >>> table = SourceTable(Path("c.csv"), pd.DataFrame({"t14": ["150"]}, index=[2]))
    >>> field = FieldSource("duration_h", column="t14", unit=u.min)
    >>> apply_column_map(ColumnMap(Path("m.toml"), (field,)), table).cells["duration_h"].tolist()
    ['2.5']
    """
    _check_columns(mapping, source)
    cells, units = source.cells.copy(), dict(source.units)
    mapped = {}
    for spec in mapping.fields:
        mapped[spec.field] = _field_cells(mapping.path, spec, source)
        units.pop(spec.field, None)
        unit = field_unit(spec.field) if field_unit(spec.field) is not None else _unit(spec, source, "")
        if unit is not None:  # a field read in its own unit, or ra/dec text for field_units to convert
            units[spec.field] = unit
    used = {c for spec in mapping.fields for c in spec.columns} | set(mapped)
    kept = cells[[c for c in cells.columns if c not in used]]
    for name in list(units):
        if name in used and name not in mapped:
            del units[name]
    table = pd.concat([pd.DataFrame(mapped, index=cells.index, dtype=str), kept], axis=1)
    return SourceTable(source.path, table, units, source.header)


def _check_columns(mapping: ColumnMap, source: SourceTable) -> None:
    found = list(source.cells.columns)
    for spec in mapping.fields:
        for column in spec.columns:
            if column not in found:
                hint = did_you_mean(column, found)
                listed = ", ".join(found[:12]) + (", ..." if len(found) > 12 else "")
                raise InputError(f"{mapping.path}: [columns] {spec.field}: column {column!r} is not in {source.path}"
                                 f"{hint} (found: {listed})")


def _field_cells(path: Path, spec: FieldSource, source: SourceTable) -> list[str]:
    where = f"{path}: [columns] {spec.field}"
    unit = _unit(spec, source, where)
    factor = conversion_factor(unit, spec.field, where) if unit is not None else 1.0
    if spec.value is not None:
        return [_text(spec.value * factor + spec.offset)] * len(source.cells)
    if spec.column is not None and field_unit(spec.field) is None:
        return list(source.cells[spec.column])
    rows = []
    for label, row in source.cells.iterrows():
        value = _combined(spec, row, source.path, label)
        rows.append("" if value is None else _text(value * factor + spec.offset))
    return rows


def _unit(spec: FieldSource, source: SourceTable, where: str) -> u.UnitBase | None:
    stated = {source.units[c] for c in spec.columns if c in source.units}
    if spec.unit is not None and any(s != spec.unit for s in stated):
        raise InputError(f"{where}: unit {spec.unit.to_string()!r} disagrees with the unit "
                         f"{next(iter(stated)).to_string()!r} that {source.path} states; give one or make them agree")
    if spec.unit is not None:
        return spec.unit
    return next(iter(stated), None)


def _combined(spec: FieldSource, row, path: Path, label) -> float | None:
    """The field's number in the row (None when missing): the column, or the +/- pair combined."""
    def number(column: str) -> float | None:
        text = row[column]
        return csv_number(path, label, column, text, f"a number (read as {spec.field})") if text else None

    if spec.column is not None:
        return number(spec.column)
    values = [abs(v) for c in (spec.plus, spec.minus) if (v := number(c)) is not None]
    if not values:
        return None
    return max(values) if spec.combine == "larger" else sum(values) / len(values)


def _text(value: float) -> str:
    return repr(float(value))
