"""Read and validate the user's targets (CSV) and sites (TOML) into normalised tables and objects.

Every problem is reported as one `InputError` line naming the file, the row (as the line
number in the file) or TOML key, and the field, with what was expected.
"""

from __future__ import annotations

import logging
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
from astropy.coordinates import Angle

from vigil.errors import InputError

log = logging.getLogger("vigil")

REQUIRED_TARGET_FIELDS = ("name", "t0_bjd_tdb", "t0_err_d", "period_d", "period_err_d", "duration_h")
# Full Julian dates of the telescope era; smaller values are MJD or truncated JDs.
MIN_PLAUSIBLE_JD = 2_400_000.0
CONSTRAINT_KEYS = ("min_altitude_deg", "twilight", "baseline_h", "sigma_k", "moon_sep_deg")
SITE_KEYS = {"latitude_deg", "longitude_deg", "elevation_m", "timezone", "pressure_hpa", "temperature_c",
             *CONSTRAINT_KEYS}


@dataclass(frozen=True)
class Site:
    """A ground observatory. Longitude is east positive, in (-180, 180]."""

    name: str
    latitude_deg: float
    longitude_deg: float
    elevation_m: float
    timezone: str | None = None
    pressure_hpa: float | None = None
    temperature_c: float = 10.0
    defaults: dict = field(default_factory=dict)

    @property
    def air_pressure_hpa(self) -> float:
        """Air pressure for refraction: given, or the standard atmosphere at the site's elevation."""
        if self.pressure_hpa is not None:
            return self.pressure_hpa
        return 1013.25 * (1.0 - 2.25577e-5 * self.elevation_m) ** 5.25588


def _where(path: Path, line: int | None = None, key: str | None = None) -> str:
    if line is not None:
        return f"{path}: line {line}"
    return f"{path}: [{key}]" if key else str(path)


def _read_csv(path: Path) -> pd.DataFrame:
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise InputError(f"{path}: cannot read file ({exc.strerror})") from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError(f"{path}: not UTF-8 text (bad byte at offset {exc.start})") from None
    if not text.strip():
        raise InputError(f"{path}: file is empty; expected a header line and one row per target")
    from io import StringIO

    try:
        table = pd.read_csv(StringIO(text), dtype=str, keep_default_na=False, skipinitialspace=True,
                            skip_blank_lines=False)
    except pd.errors.ParserError as exc:
        raise InputError(f"{path}: not a valid comma-separated table ({exc})") from None
    table.columns = [str(c).strip() for c in table.columns]
    if len(table.columns) == 1 and ";" in table.columns[0]:
        raise InputError(f"{path}: header uses ';' as delimiter; vigil expects comma-separated values")
    # Blank lines are read as empty rows and dropped here, so that the index still counts
    # file lines: row i is line i + 2.
    table = table[(table != "").any(axis=1)]
    if table.empty:
        raise InputError(f"{path}: header only; expected one row per target below it")
    return table


def _number(path: Path, line: int, column: str, text: str, expected: str) -> float:
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not math.isfinite(value):
        raise InputError(f"{_where(path, line)}, field {column}: expected {expected}, got {text!r}")
    return value


def _coordinates(path: Path, line: int, row: pd.Series, columns) -> tuple[float, float]:
    if "ra_deg" in columns and "dec_deg" in columns:
        ra_field, dec_field = "ra_deg", "dec_deg"
        ra = _number(path, line, ra_field, row[ra_field], "right ascension in degrees")
        dec = _number(path, line, dec_field, row[dec_field], "declination in degrees")
    elif "ra" in columns and "dec" in columns:
        ra_field, dec_field = "ra", "dec"
        try:
            ra = Angle(row["ra"], unit="hourangle").deg
        except (ValueError, TypeError):
            raise InputError(f"{_where(path, line)}, field ra: expected hh:mm:ss, got {row['ra']!r}") from None
        try:
            dec = Angle(row["dec"], unit="deg").deg
        except (ValueError, TypeError):
            raise InputError(f"{_where(path, line)}, field dec: expected ±dd:mm:ss, got {row['dec']!r}") from None
    else:
        raise InputError(f"{path}: missing coordinates; expected columns ra_deg and dec_deg (or ra and dec)")
    if not 0.0 <= ra < 360.0:
        raise InputError(f"{_where(path, line)}, field {ra_field}: expected 0 <= RA < 360 degrees, got {ra:g}")
    if not -90.0 <= dec <= 90.0:
        raise InputError(f"{_where(path, line)}, field {dec_field}: expected -90 <= Dec <= 90 degrees, got {dec:g}")
    return ra, dec


def _target_row(path: Path, line: int, row: pd.Series, columns) -> dict:
    name = row["name"].strip()
    if not name:
        raise InputError(f"{_where(path, line)}, field name: expected a target name, got an empty cell")
    ra, dec = _coordinates(path, line, row, columns)
    values = {"name": name, "ra_deg": ra, "dec_deg": dec}
    expectations = {
        "t0_bjd_tdb": "a mid-transit time as a full Julian date (BJD_TDB)",
        "t0_err_d": "an uncertainty in days (>= 0)",
        "period_d": "a positive period in days",
        "period_err_d": "an uncertainty in days (>= 0)",
        "duration_h": "a positive duration in hours",
    }
    for column, expected in expectations.items():
        values[column] = _number(path, line, column, row[column], expected)
    cov = row.get("t0_period_cov_d2", "")
    values["t0_period_cov_d2"] = _number(path, line, "t0_period_cov_d2", cov, "a covariance in d^2") if str(cov).strip() else 0.0
    _check_target_values(path, line, values)
    return values


def _check_target_values(path: Path, line: int, v: dict) -> None:
    where = _where(path, line)
    if v["t0_bjd_tdb"] < MIN_PLAUSIBLE_JD:
        raise InputError(f"{where}, field t0_bjd_tdb: {v['t0_bjd_tdb']:g} looks like an MJD or a truncated JD; "
                         "expected a full Julian date in BJD_TDB (e.g. 2461000.5)")
    if v["period_d"] <= 0:
        raise InputError(f"{where}, field period_d: expected a positive period in days, got {v['period_d']:g}")
    if v["duration_h"] <= 0 or v["duration_h"] / 24.0 >= v["period_d"]:
        raise InputError(f"{where}, field duration_h: expected 0 < duration < period, got {v['duration_h']:g} h")
    for column in ("t0_err_d", "period_err_d"):
        if v[column] < 0:
            raise InputError(f"{where}, field {column}: expected an uncertainty >= 0 days, got {v[column]:g}")
    if v["period_err_d"] >= v["period_d"]:
        raise InputError(f"{where}, field period_err_d: uncertainty {v['period_err_d']:g} d is not smaller than the period")
    bound = v["t0_err_d"] * v["period_err_d"]
    if abs(v["t0_period_cov_d2"]) > bound * (1 + 1e-9):
        raise InputError(f"{where}, field t0_period_cov_d2: |cov| must not exceed t0_err_d * period_err_d = {bound:g} d^2")


def read_targets(path: str | Path) -> pd.DataFrame:
    """Read a targets CSV into a table with the columns of `schema.TARGET_COLUMNS`.

    Extra columns are kept as text; one `InputError` line reports the first problem.
    """
    path = Path(path)
    table = _read_csv(path)
    missing = [c for c in REQUIRED_TARGET_FIELDS if c not in table.columns]
    if missing:
        raise InputError(f"{path}: missing column(s) {', '.join(missing)}; found {', '.join(table.columns)}")
    rows = [_target_row(path, i + 2, row, table.columns) for i, row in table.iterrows()]
    parsed = pd.DataFrame(rows)
    duplicated = parsed["name"].duplicated().to_numpy()
    if duplicated.any():
        first = int(np.flatnonzero(duplicated)[0])
        line = int(table.index[first]) + 2
        raise InputError(f"{_where(path, line)}, field name: target {parsed['name'][first]!r} appears twice")
    extra = [c for c in table.columns if c not in parsed.columns and c not in ("ra", "dec")]
    return pd.concat([parsed, table[extra].reset_index(drop=True)], axis=1)


def _load_toml(path: Path) -> dict:
    try:
        with path.open("rb") as handle:
            return tomllib.load(handle)
    except OSError as exc:
        raise InputError(f"{path}: cannot read file ({exc.strerror})") from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{path}: TOML syntax error: {exc}") from None
    except UnicodeDecodeError:
        raise InputError(f"{path}: not UTF-8 text") from None


def _site_number(path: Path, key: str, entry: dict, field_name: str, low: float, high: float, unit: str) -> float:
    value = entry.get(field_name)
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not low <= value <= high:
        raise InputError(f"{path}: [{key}] {field_name}: expected a number from {low:g} to {high:g} {unit}, got {value!r}")
    return float(value)


def _site(path: Path, name: str, entry) -> Site:
    key = f"sites.{name}"
    if not isinstance(entry, dict):
        raise InputError(f"{path}: [{key}]: expected a table of site fields")
    for unknown in sorted(set(entry) - SITE_KEYS):
        log.warning("%s: [%s] unknown key %r ignored", path, key, unknown)
    lon = _site_number(path, key, entry, "longitude_deg", -180.0, 360.0, "degrees east")
    if lon > 180.0:
        log.info("%s: [%s] longitude %.4f read as 0-360 east, used as %.4f", path, key, lon, lon - 360.0)
        lon -= 360.0
    defaults = {k: entry[k] for k in CONSTRAINT_KEYS if k in entry}
    pressure = entry.get("pressure_hpa")
    if pressure is not None:
        pressure = _site_number(path, key, entry, "pressure_hpa", 0.0, 1100.0, "hPa")
    timezone = entry.get("timezone")
    if timezone is not None:
        _check_timezone(path, key, timezone)
    return Site(
        name=name,
        latitude_deg=_site_number(path, key, entry, "latitude_deg", -90.0, 90.0, "degrees"),
        longitude_deg=lon,
        elevation_m=_site_number(path, key, entry, "elevation_m", -500.0, 9000.0, "metres"),
        timezone=timezone,
        pressure_hpa=pressure,
        temperature_c=_site_number(path, key, entry, "temperature_c", -80.0, 60.0, "°C") if "temperature_c" in entry else 10.0,
        defaults=defaults,
    )


def _check_timezone(path: Path, key: str, name) -> None:
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    try:
        ZoneInfo(str(name))
    except (ZoneInfoNotFoundError, ValueError):
        raise InputError(f"{path}: [{key}] timezone: expected an IANA time zone name such as 'America/Santiago', got {name!r}") from None


def read_sites(path: str | Path) -> dict[str, Site]:
    """Read `[sites.NAME]` tables from a TOML file into Site objects, in file order."""
    path = Path(path)
    document = _load_toml(path)
    sites = document.get("sites")
    if not isinstance(sites, dict) or not sites:
        raise InputError(f"{path}: no [sites.NAME] tables found")
    return {name: _site(path, name, entry) for name, entry in sites.items()}


def read_timings(path: str | Path) -> pd.DataFrame:
    """Read measured mid-transit times: target, mid_bjd_tdb, mid_err_d (days), optional note."""
    path = Path(path)
    table = _read_csv(path)
    missing = [c for c in ("target", "mid_bjd_tdb", "mid_err_d") if c not in table.columns]
    if missing:
        raise InputError(f"{path}: missing column(s) {', '.join(missing)}; found {', '.join(table.columns)}")
    rows = []
    for index, row in table.iterrows():
        line = int(index) + 2
        target = row["target"].strip()
        if not target:
            raise InputError(f"{_where(path, line)}, field target: expected a target name, got an empty cell")
        mid = _number(path, line, "mid_bjd_tdb", row["mid_bjd_tdb"], "a mid-transit time as a full Julian date (BJD_TDB)")
        if mid < MIN_PLAUSIBLE_JD:
            raise InputError(f"{_where(path, line)}, field mid_bjd_tdb: {mid:g} looks like an MJD or a truncated JD; "
                             "expected a full Julian date in BJD_TDB")
        err = _number(path, line, "mid_err_d", row["mid_err_d"], "a positive uncertainty in days")
        if err <= 0:
            raise InputError(f"{_where(path, line)}, field mid_err_d: expected a positive uncertainty in days, got {err:g}")
        rows.append({"target": target, "mid_bjd_tdb": mid, "mid_err_d": err, "note": row.get("note", "")})
    return pd.DataFrame(rows)
