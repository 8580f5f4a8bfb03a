"""The unit of each vigil target field, and conversion of columns whose file states a unit.

A field's unit is in its name (`_deg`, `_d`, `_d2` for covariances in d^2, `_h`, `_min`, and a few named ones such as
`planet_radius_earth`). A column whose file (ECSV, VOTable, IPAC) states a unit is converted
into its field's unit; a unit that cannot be converted is refused. Right ascension is the one
ambiguous case: a bare number in an `ra` column with no unit could be hours or degrees and is
refused by the reader; with a stated unit (deg, hourangle, h) it becomes `ra_deg`.
"""

from __future__ import annotations

import math

import astropy.units as u
from astropy.coordinates import Angle

from vigil.errors import InputError
from vigil.table_formats import SourceTable

_BY_NAME = {
    "t0_bjd_tdb": u.day, "planet_radius_earth": u.earthRad,
    "planet_mass_earth": u.earthMass, "star_radius_sun": u.solRad, "surface_gravity_m_s2": u.m / u.s ** 2,
    "teq_k": u.K, "star_teff_k": u.K, "distance_pc": u.pc,
}
_BY_SUFFIX = (("_deg", u.deg), ("_min", u.min), ("_h", u.hour), ("_d", u.day), ("_d2", u.day ** 2))
# Sexagesimal and decimal coordinates under these names become the *_deg fields when a unit is stated.
ANGLE_FIELDS = {"ra": "ra_deg", "dec": "dec_deg"}


def field_unit(name: str) -> u.UnitBase | None:
    """The unit vigil reads field `name` in, or None for a number without a unit or text.

    Examples
    --------
    >>> field_unit("duration_h")
    Unit("h")
    >>> field_unit("name") is None
    True
    """
    if name in _BY_NAME:
        return _BY_NAME[name]
    return next((unit for suffix, unit in _BY_SUFFIX if name.endswith(suffix)), None)


def conversion_factor(unit: u.UnitBase, field: str, where: str) -> float:
    """How many of `field`'s units one `unit` is; refused with `where` when not convertible.

    For angles an hour of time is read as an hour angle (15 degrees).

    Examples
    --------
    >>> conversion_factor(u.min, "duration_h", "catalogue")
    0.016666666666666666
    """
    target = field_unit(field)
    if target is None:
        return 1.0
    if isinstance(unit, u.UnrecognizedUnit):
        raise InputError(f"{where}: unit {unit.name!r} is not a unit vigil knows; expected {_examples(target)}")
    if target == u.deg and unit.is_equivalent(u.hour):
        unit = u.hourangle * unit.to(u.hour)
    try:
        return float(unit.to(target))
    except u.UnitConversionError:
        raise InputError(f"{where}: unit {unit.to_string()!r} cannot be read as {target.to_string()} for {field}; "
                         f"expected a unit of the same kind (e.g. {_examples(target)})") from None


def _examples(target: u.UnitBase) -> str:
    if target == u.deg:
        return "deg, arcmin, hourangle"
    if target in (u.day, u.hour, u.min):
        return "d, h, min"
    return target.to_string()


def scaled_cells(cells, factor: float):
    """Text cells times `factor`, written back at full precision; empty and unreadable cells kept.

    Examples
    --------
    >>> list(scaled_cells(["150", "", "x"], 1 / 60))
    ['2.5', '', 'x']
    """
    if factor == 1.0:
        return cells
    return [_scaled(text, factor) for text in cells]


def _scaled(text: str, factor: float) -> str:
    try:
        value = float(text)
    except ValueError:
        return text  # the reader reports it, naming the field
    return repr(value * factor) if math.isfinite(value) else text


def in_field_units(source: SourceTable) -> SourceTable:
    """The table with every column that states a unit converted into its field's unit.

    `ra` and `dec` with an angle unit become `ra_deg` and `dec_deg` (sexagesimal text too);
    columns vigil reads without a unit keep their cells.

    Examples
    --------
    >>> import pandas as pd
    >>> from pathlib import Path
    >>> table = SourceTable(Path("p.ecsv"), pd.DataFrame({"duration_h": ["150"]}), {"duration_h": u.min})
    >>> in_field_units(table).cells["duration_h"].tolist()
    ['2.5']
    """
    cells, units = source.cells.copy(), dict(source.units)
    for column, unit in source.units.items():
        where = f"{source.path}: column {column!r}"
        if column in ANGLE_FIELDS:
            continue
        if field_unit(column) is not None:
            cells[column] = scaled_cells(list(cells[column]), conversion_factor(unit, column, where))
            units[column] = field_unit(column)
    if "ra" in source.units:
        for column, field in ANGLE_FIELDS.items():
            if column in cells:
                unit = units.pop(column, u.deg)
                cells[field] = [_angle_text(t, unit, f"{source.path}: column {column!r}", field) for t in cells.pop(column)]
                units[field] = u.deg
    elif "dec" in source.units:
        unit = units.pop("dec")
        cells["dec"] = [_angle_text(t, unit, f"{source.path}: column 'dec'", "dec_deg") for t in cells["dec"]]
    return SourceTable(source.path, cells, units, source.header)


def _angle_text(text: str, unit: u.UnitBase, where: str, field: str) -> str:
    """A number in `unit`, or sexagesimal text in it, as degrees; unreadable text kept for the reader."""
    factor = conversion_factor(unit, field, where)
    try:
        return repr(float(text) * factor)
    except ValueError:
        pass
    try:
        return repr(float(Angle(text, unit=u.hourangle if unit.is_equivalent(u.hour) else unit).deg))
    except (ValueError, TypeError, u.UnitsError):
        return text
