"""Catalogue files in the formats observers have: which format, and the typed ones read by astropy.

vigil's own CSV is read line by line by its text-file reader (it knows line numbers); ECSV,
VOTable and IPAC tables are read with astropy's table readers and turned into the same table
of text cells, with the unit each column states. Rows of those files are named "row N" (the
N-th data row), since their line numbers are not the reader's to know.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from pathlib import Path

import astropy.units as u
import numpy as np
import pandas as pd

from vigil.errors import ArgumentError, InputError

FORMATS = ("csv", "ecsv", "votable", "ipac")
EXTENSIONS = {".csv": "csv", ".ecsv": "ecsv", ".xml": "votable", ".vot": "votable", ".votable": "votable",
              ".tbl": "ipac", ".ipac": "ipac"}
_ASTROPY_FORMAT = {"ecsv": "ascii.ecsv", "votable": "votable", "ipac": "ascii.ipac"}
_ECSV_SIGNATURE = "# %ECSV"


@dataclass
class SourceTable:
    """A catalogue as read: text cells, the units its columns state, and where rows are.

    `cells` holds stripped text (empty for a missing value) indexed by row label: the line
    number (int) for CSV files, "row N" for the typed formats. `units` maps a column to the
    astropy unit its file states; `header` is the header's line number, or "header".
    """

    path: Path
    cells: pd.DataFrame
    units: dict = field(default_factory=dict)
    header: int | str = 1


def table_format(path: Path, given: str | None = None) -> str:
    """The format of a catalogue file: `given` (any case), else by extension, else CSV.

    A .csv file whose first line is the ECSV signature is read as ECSV.

    Examples
    --------
    >>> table_format(Path("planets.tbl"))
    'ipac'
    >>> table_format(Path("planets.txt"), "VOTable")
    'votable'
    """
    if given is not None:
        chosen = given.strip().lower()
        if chosen not in FORMATS:
            raise ArgumentError("format", f"expected one of {', '.join(FORMATS)}, got {given!r}")
        return chosen
    found = EXTENSIONS.get(path.suffix.lower(), "csv")
    if found == "csv" and _starts_with(path, _ECSV_SIGNATURE):
        return "ecsv"
    return found


def _starts_with(path: Path, signature: str) -> bool:
    try:
        with path.open("rb") as handle:
            return handle.read(len(signature) + 3).decode("utf-8-sig", "replace").startswith(signature)
    except OSError:
        return False  # the reader reports the file itself


def read_typed_table(path: Path, fmt: str) -> SourceTable:
    """Read an ECSV, VOTable or IPAC table into text cells with the units its columns state.

    Masked values and NaN are empty cells; numbers keep full precision (shortest repr that
    reads back to the same float). Time columns must be in TDB and are written as JD.

    Examples
    --------
    >>> table = read_typed_table(Path("planets.ecsv"), "ecsv")  # doctest: +SKIP
    >>> table.units["period_d"]  # doctest: +SKIP
    Unit("h")
    """
    from astropy.table import Table

    if not path.is_file():
        raise InputError(f"{path}: cannot read file (no such file)")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # astropy's notes on spec details; what matters is checked below
            table = Table.read(path, format=_ASTROPY_FORMAT[fmt])
    except (ValueError, TypeError, KeyError, IndexError, UnicodeDecodeError) as exc:
        reason = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise ArgumentError("format", "", f"{path}: not a readable {_label(fmt)} table ({reason}); check the file, "
                                          "or give its format ({argument}) if the extension misleads") from None
    return table_cells(table, path)


def table_cells(table, path, first_row: int = 1, header: str = "header") -> SourceTable:
    """An astropy Table (or QTable) as text cells with the units its columns state; rows are
    named "row N" from `first_row`. A SkyCoord column gives ra_deg and dec_deg (ICRS).

    Examples
    --------
    >>> from astropy.table import QTable
    >>> table_cells(QTable({"duration_h": [150.0] * u.min}), "targets").units["duration_h"]
    Unit("min")
    """
    from astropy.coordinates import SkyCoord
    from astropy.time import Time

    if len(table) == 0:
        raise InputError(f"{path}: no rows; expected one row per target")
    cells, units = {}, {}
    for name in table.colnames:
        column = table[name]
        if isinstance(column, Time):
            cells[name] = _time_cells(path, name, column)
            continue
        if isinstance(column, SkyCoord):
            icrs = column.icrs
            cells.setdefault("ra_deg", [repr(float(v)) for v in icrs.ra.deg])
            cells.setdefault("dec_deg", [repr(float(v)) for v in icrs.dec.deg])
            continue
        if getattr(column, "unit", None) is not None:
            units[name] = column.unit
        cells[name] = _text_cells(column.value if isinstance(column, u.Quantity) else column)
    index = [f"row {n}" for n in range(first_row, first_row + len(table))]
    return SourceTable(path, pd.DataFrame(cells, index=index, dtype=str), units, header=header)


def _label(fmt: str) -> str:
    return {"ecsv": "ECSV", "votable": "VOTable", "ipac": "IPAC"}[fmt]


def _text_cells(column) -> list[str]:
    mask = np.ma.getmaskarray(column) if np.ma.isMaskedArray(column) else np.zeros(len(column), dtype=bool)
    values = np.ma.getdata(column)
    if values.ndim > 1:
        raise InputError(f"column {column.name!r} holds arrays; expected one value per row")
    out = []
    for value, masked in zip(values, mask):
        if isinstance(value, bytes):
            value = value.decode("utf-8", "replace")
        if masked or (isinstance(value, (float, np.floating)) and not np.isfinite(value)):
            out.append("")
        elif isinstance(value, (float, np.floating)):
            out.append(repr(float(value)))
        else:
            out.append(str(value).strip())
    return out


def _time_cells(path: Path, name: str, column) -> list[str]:
    if column.scale != "tdb":
        raise InputError(f"{path}: column {name!r} is a time in scale {column.scale.upper()}; expected BJD in "
                         "TDB (convert it first, or store it as a number column)")
    return [repr(float(jd)) for jd in column.jd]


def unit_of(text: str, where: str) -> u.UnitBase:
    """An astropy unit from its name (e.g. "min", "h", "d", "deg", "hourangle", "earthRad").

    Examples
    --------
    >>> unit_of("min", "mapping").to(u.h)
    0.016666666666666666
    """
    try:
        unit = u.Unit(text)
    except (ValueError, TypeError):
        unit = None
    if unit is None or isinstance(unit, u.UnrecognizedUnit):
        raise InputError(f"{where}: unit {text!r} is not a unit vigil knows; expected e.g. d, h, min, deg, "
                         "hourangle, earthRad, jupiterRad")
    return unit
