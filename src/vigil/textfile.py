"""Reading the user's text files: UTF-8 text, CSV records, TOML documents, spelling hints.

Every problem is reported as one `InputError` line naming the file, the line and the field,
with what was expected. CSV files are UTF-8, with or without a byte-order mark,
comma-separated, with a point as the decimal mark; blank lines and lines starting with `#`
(comments, as catalogue exports begin with) are skipped, and rows shorter
than the header are padded with empty cells. `number_in_range` is the one check of a number
against its allowed range that every reader uses.
"""

from __future__ import annotations

import csv
import difflib
import io
import math
import numbers
import re
import tomllib
from collections.abc import Mapping
from pathlib import Path

import pandas as pd

from vigil.errors import InputError
from vigil.export.table import restore_cell

MAX_LINE_CHARS = 10_000


class RowPlaces(Mapping):
    """Read-only map from a row's name to where it was read ("FILE: line N"), carried in a
    table's attrs. pandas deep-copies attrs on nearly every operation (each column read), so a
    copy of this map is the map itself: a large catalogue's places are never copied.

    Examples
    --------
    >>> import copy
    >>> places = RowPlaces({"b": "targets.csv: line 2"})
    >>> copy.deepcopy(places) is places, places["b"]
    (True, 'targets.csv: line 2')
    """

    def __init__(self, places):
        self._places = dict(places)

    def __getitem__(self, name):
        return self._places[name]

    def __iter__(self):
        return iter(self._places)

    def __len__(self) -> int:
        return len(self._places)

    def __copy__(self) -> "RowPlaces":
        return self

    def __deepcopy__(self, memo) -> "RowPlaces":
        return self


def row_label(line: int | str) -> str:
    """'line N' for a line number; a row label of a table read by astropy ('row 3', 'header') as it is.

    Examples
    --------
    >>> row_label(4), row_label("row 2")
    ('line 4', 'row 2')
    """
    return f"line {line}" if str(line).isdigit() else str(line)


def line_of(path: Path, line: int | str) -> str:
    """'PATH: line N' (or 'PATH: row N'), the start of a message about one row of a file."""
    return f"{path}: {row_label(line)}"


def spelling_hint(wanted, found) -> str:
    """' (is 'X' meant to be 'Y'?)' for the first wanted name with a near miss among `found`."""
    found = list(found)
    for name in wanted:
        by_case = [f for f in found if f.lower() == name.lower()]
        close = by_case or difflib.get_close_matches(name, found, n=1, cutoff=0.75)
        if close:
            return f" (is {close[0]!r} meant to be {name!r}?)"
    return ""


def did_you_mean(name: str, known) -> str:
    """'; did you mean 'X'?' naming the known names closest to `name` (any case), or ''.

    Names are matched exactly elsewhere; this only helps the user see a near miss.

    Examples
    --------
    >>> did_you_mean("mirador sur", ["mirador_sur", "alto_verde"])
    "; did you mean 'mirador_sur'?"
    """
    known = [str(k) for k in known]
    by_case = [k for k in known if k.casefold() == name.casefold()]
    close = by_case or difflib.get_close_matches(name, known, n=3, cutoff=0.6)
    return f"; did you mean {' or '.join(repr(c) for c in close)}?" if close else ""


_LINE_BREAK = re.compile(r"\r\n|\r|\n")
_COMMENT_LINE = re.compile(r"^[ \t]*#[^\r\n]*", re.MULTILINE)
_CONTROL_CHARACTER = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")


def read_text(path: Path) -> str:
    """The file's text: UTF-8, with or without a byte-order mark."""
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise InputError(f"{path}: cannot read file ({exc.strerror})") from None
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[:exc.start].count(b"\n") + 1
        raise InputError(f"{path}: line {line}: not UTF-8 text (byte 0x{raw[exc.start]:02X}); "
                         "expected a file saved as UTF-8") from None


def _check_plain_lines(path: Path, text: str, rows_are: str) -> None:
    for number, line in enumerate(_LINE_BREAK.split(text), start=1):
        if len(line) > MAX_LINE_CHARS:
            raise InputError(f"{path}: line {number} is {len(line)} characters long; expected at most "
                             f"{MAX_LINE_CHARS} per line of a table of {rows_are}s")
        bad = _CONTROL_CHARACTER.search(line)
        if bad:
            raise InputError(f"{path}: line {number}: control character U+{ord(bad.group()):04X} at column "
                             f"{bad.start() + 1}; expected plain text")


def _records(path: Path, text: str) -> list[tuple[int, list[str]]]:
    """(first line, stripped fields) of every record that is not blank or a comment; the
    spreadsheet text mark vigil's CSV output adds (vigil.export.table) is removed."""
    # Comment lines become blank lines, so line numbers stay those of the file.
    text = _COMMENT_LINE.sub("", text)
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    records, line = [], 1
    try:
        for fields in reader:
            if any(f.strip() for f in fields):
                records.append((line, [restore_cell(f.strip()) for f in fields]))
            line = reader.line_num + 1
    except csv.Error as exc:
        raise InputError(f"{path}: line {line}: not valid comma-separated values ({exc}); check the quotes") from None
    return records


def _check_header(path: Path, line: int, header: list[str]) -> None:
    if len(header) == 1:
        for mark, name in ((";", "semicolons"), ("\t", "tabs")):
            if mark in header[0]:
                raise InputError(f"{path}: line {line}: fields are separated by {name}; expected comma-separated "
                                 "values with a point as the decimal mark (45.20, not 45,20)")
    named = [h for h in header if h]
    twice = next((h for i, h in enumerate(named) if h in named[:i]), None)
    if twice is not None:
        raise InputError(f"{path}: line {line}: column {twice!r} appears twice in the header")


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _check_commented_header(path: Path, text: str, header_line: int, header: list[str]) -> None:
    """Refuse a file whose column names sit on a comment line: the last comment before the first
    record has as many comma-separated names (no numbers) as that record, which holds a number."""
    lines = _LINE_BREAK.split(text)[:header_line - 1]
    number = next((n for n in range(len(lines), 0, -1) if _COMMENT_LINE.fullmatch(lines[n - 1])), None)
    if number is None or not any(_is_number(f) for f in header):
        return
    names = [f.strip() for f in next(csv.reader([lines[number - 1].strip()[1:]]), [])]
    if len(names) == len(header) and all(names) and not any(_is_number(f) for f in names):
        raise InputError(f"{path}: line {number}: the header row is commented out ('# {names[0]},{names[1]},...'); "
                         f"remove the '#' so that line {number} names the columns")


def _cells(path: Path, line: int, fields: list[str], header: list[str]) -> list[str]:
    """The row's values for the named columns; short rows are padded with empty cells."""
    if len(fields) > len(header) and any(fields[len(header):]):
        raise InputError(f"{path}: line {line}: {len(fields)} fields but the header has {len(header)}; expected one "
                         "value per column (a decimal comma such as 45,20 or an unquoted comma in a name splits "
                         "a field: use points and quote such names)")
    fields = (fields + [""] * len(header))[:len(header)]
    stray = next((v for h, v in zip(header, fields) if not h and v), None)
    if stray is not None:
        raise InputError(f"{path}: line {line}: value {stray!r} sits under a column with no name in the header")
    return [v for h, v in zip(header, fields) if h]


def read_csv(path: Path, rows_are: str) -> tuple[int, pd.DataFrame]:
    """(header line, table of stripped text cells indexed by line number in the file)."""
    text = read_text(path)
    _check_plain_lines(path, text, rows_are)
    records = _records(path, text)
    if not records:
        raise InputError(f"{path}: file is empty; expected a header line and one row per {rows_are}")
    (header_line, header), body = records[0], records[1:]
    _check_commented_header(path, text, header_line, header)
    _check_header(path, header_line, header)
    if not body:
        raise InputError(f"{path}: header only; expected one row per {rows_are} below line {header_line}")
    cells = [_cells(path, line, fields, header) for line, fields in body]
    table = pd.DataFrame(cells, columns=[h for h in header if h], index=[line for line, _ in body], dtype=str)
    return header_line, table


def load_toml(path: Path) -> dict:
    """The TOML document (UTF-8, a byte-order mark allowed)."""
    text = read_text(path)
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{path}: TOML syntax error: {exc}") from None


_DECIMAL_COMMA = re.compile(r"[+-]?\d+,\d+")


def csv_number(path: Path, line: int, column: str, text: str, expected: str) -> float:
    """The CSV cell `text` as a finite float; else an InputError naming file, line and column
    (saying so when the cell has a decimal comma). `expected` describes the value wanted.

    Examples
    --------
    >>> csv_number(Path("targets.csv"), 2, "period_d", "3.5", "a positive period in days")
    3.5
    """
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if math.isfinite(value):
        return value
    where = f"{line_of(path, line)}, field {column}"
    if _DECIMAL_COMMA.fullmatch(text):
        raise InputError(f"{where}: {text!r} has a decimal comma; expected {expected} with a point as the decimal "
                         f"mark ({text.replace(',', '.')})")
    raise InputError(f"{where}: expected {expected}, got {repr(text) if text else 'an empty cell'}")


def number_in_range(field: str, value, low: float, high: float, unit: str) -> float:
    """`value` as a float if it is a number (not a bool) in [low, high]; else an InputError
    "FIELD: expected a number from LOW to HIGH UNIT, got VALUE".

    Examples
    --------
    >>> number_in_range("sigma_k", 2, 0.0, 10.0, "(a multiple of sigma)")
    2.0
    """
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not low <= value <= high:
        raise InputError(f"{field}: expected a number from {low:g} to {high:g}{' ' + unit if unit else ''}, got {value!r}")
    return float(value)


def positive_number(field: str, value, unit: str) -> float:
    """`value` as a float if it is a finite number (not a bool) above 0; else an InputError
    "FIELD: expected a positive number UNIT, got VALUE".

    Examples
    --------
    >>> positive_number("limit_d", 0.5, "days")
    0.5
    """
    if isinstance(value, bool) or not isinstance(value, numbers.Real) or not math.isfinite(value) or value <= 0:
        raise InputError(f"{field}: expected a positive number {unit}, got {value!r}")
    return float(value)
