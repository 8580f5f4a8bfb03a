"""Read and validate the user's targets and timings (CSV) and sites (TOML).

Every problem is reported as one `InputError` line naming the file, the row (as the line
number in the file) or TOML key, and the field, with what was expected. Values that are
plausible but odd are accepted with a warning on the "vigil" logger. The text-file rules
(encoding, CSV records, TOML) are in `textfile`; the types read are in `sites` and
`constraints`. Only the command line (and a caller of vigil as a library) reads files.
"""

from __future__ import annotations

import datetime
import logging
import math
import re
from collections.abc import Mapping
from pathlib import Path

import astropy.units as u
import numpy as np
import pandas as pd
from astropy.coordinates import Angle
from astropy.time import Time

from vigil import bodies, geometry, schema
from vigil.constraints import CONSTRAINT_KEYS, checked_constraints
from vigil.ephemeris.models import catalogue_ephemeris
from vigil.errors import InputError
from vigil.names import clean_name
from vigil.facility import FACILITY_KEYS, read_facility
from vigil.sites import (DEFAULT_INTERRUPTION_START_JD_UTC, DEFAULT_SUN_ANGLE_MAX_DEG, DEFAULT_SUN_ANGLE_MIN_DEG,
                         DEFAULT_TEMPERATURE_C, Site, SpaceSettings)
from vigil.table_formats import SourceTable
from vigil.target_source import CatalogueOptions, drop_incomplete, target_cells
from vigil.textfile import (RowPlaces, did_you_mean, csv_number, line_of, load_toml, number_in_range, read_csv, row_label,
                            spelling_hint)
from vigil.timescales import MAX_PLAUSIBLE_JD, MIN_PLAUSIBLE_JD

log = logging.getLogger("vigil")

REQUIRED_TARGET_FIELDS = ("name", "t0_bjd_tdb", "t0_err_d", "period_d", "period_err_d", "duration_h")
TIMING_FIELDS = ("target", "mid_bjd_tdb", "mid_err_d")
# Shorter periods than this are a unit mistake, and would ask for millions of transits.
MIN_PERIOD_D = 0.05
# Thresholds of the warnings for plausible but odd values.
ODD_PERIOD_ERR_FRACTION = 0.01
LOW_ALTITUDE_LIMIT_DEG = 10.0
HIGH_ELEVATION_M = 5000.0
GROUND_KEYS = ("latitude_deg", "longitude_deg", "elevation_m", "pressure_hpa", "temperature_c")
SPACE_KEYS = ("sun_angle_min_deg", "sun_angle_max_deg", "interruption_period_h", "interruption_h",
              "interruption_start_utc", "blackouts", "distance_from_earth_km")
SITE_KEYS = {"kind", *GROUND_KEYS, "timezone", *CONSTRAINT_KEYS, *FACILITY_KEYS}
SPACE_SITE_KEYS = {"kind", *SPACE_KEYS, "timezone", *CONSTRAINT_KEYS}
# Constraints of the ground that mean nothing in space (the windows' padding still applies).
GROUND_ONLY_CONSTRAINTS = ("min_altitude_deg", "twilight", "moon_sep_deg")
MIN_INTERRUPTION_PERIOD_H = 0.1
_LIGHT_KM_PER_S = 299792.458
_AU_KM = 149597870.7


def _other_time_column(columns, time_column: str) -> str | None:
    """A column that holds the mid-times under another scale or format, e.g. t0_hjd_utc."""
    prefix = time_column.split("_")[0]
    for column in columns:
        lowered = column.lower()
        if lowered == prefix or (lowered.startswith(prefix + "_") and "err" not in lowered
                                 and re.search(r"jd|tdb|utc|tt", lowered)):
            return column
    return None


def _require_columns(path: Path, line: int, columns, required, time_column: str) -> None:
    missing = [c for c in required if c not in columns]
    if not missing:
        return
    other = _other_time_column(columns, time_column) if time_column in missing else None
    if other is not None:
        raise InputError(f"{line_of(path, line)}: column {other!r} found, but vigil needs {time_column}: times as "
                         "Barycentric Julian Dates in TDB (BJD_TDB); rename the column if it holds BJD_TDB, else "
                         "convert the times first (HJD, JD or UTC-based times differ from BJD_TDB by up to about "
                         "10 minutes)")
    hint = spelling_hint(missing, [c for c in columns if c not in required])
    raise InputError(f"{line_of(path, line)}: missing column(s) {', '.join(missing)}{hint}; found {', '.join(columns)}")


# --- values --------------------------------------------------------------------------------

def _full_jd(path: Path, line: int, column: str, value: float) -> float:
    if MIN_PLAUSIBLE_JD <= value <= MAX_PLAUSIBLE_JD:
        return value
    if 0 < value < 30_000:
        looks = f"looks like JD - 2450000 (the full date would be {value + 2_450_000:.5f})"
    elif 30_000 <= value < 100_000:
        looks = "looks like an MJD (JD - 2400000.5) or a reduced JD (JD - 2400000)"
    else:
        looks = "is not a Julian date of the years 1858 to 2406"
    raise InputError(f"{line_of(path, line)}, field {column}: {value:.6g} {looks}; expected a full Julian date in "
                     "BJD_TDB (e.g. 2461000.5)")


def _coordinate_columns(path: Path, line: int, columns) -> tuple[str, str]:
    """('ra_deg', 'dec_deg') or, for sexagesimal text, ('ra', 'dec')."""
    for pair in (("ra_deg", "dec_deg"), ("ra", "dec")):
        if all(c in columns for c in pair):
            return pair
    raise InputError(f"{line_of(path, line)}: missing coordinates; expected columns ra_deg and dec_deg (or ra and dec)"
                     f"{spelling_hint(('ra_deg', 'dec_deg'), [c for c in columns if c not in ('ra_deg', 'dec_deg')])}; found {', '.join(columns)}")


def _coordinates(path: Path, line: int, row: Mapping, ra_field: str, dec_field: str) -> tuple[float, float]:
    if ra_field == "ra_deg":
        ra = csv_number(path, line, ra_field, row[ra_field], "right ascension in degrees")
        dec = csv_number(path, line, dec_field, row[dec_field], "declination in degrees")
    else:
        _refuse_bare_ra(path, line, row[ra_field])
        ra = _angle_deg(path, line, ra_field, row[ra_field], "hourangle", "hh:mm:ss")
        dec = _angle_deg(path, line, dec_field, row[dec_field], "deg", "±dd:mm:ss")
    if not 0.0 <= ra < 360.0:
        raise InputError(f"{line_of(path, line)}, field {ra_field}: expected 0 <= RA < 360 degrees, got {ra:g}")
    if not -90.0 <= dec <= 90.0:
        raise InputError(f"{line_of(path, line)}, field {dec_field}: expected -90 <= Dec <= 90 degrees, got {dec:g}")
    return ra, dec


def _refuse_bare_ra(path: Path, line, text: str) -> None:
    """A plain number in `ra` could be hours or degrees: refused, saying how to state it."""
    try:
        value = float(text)
    except ValueError:
        return
    hms = Angle(value, unit="hourangle").to_string(sep=":", precision=0, pad=True) if 0 <= value < 24 else None
    hours = f"{hms} or {text}h if it is hours, " if hms else ""
    raise InputError(f"{line_of(path, line)}, field ra: {text!r} is a bare number, which could be hours or degrees; "
                     f"write {hours}{text}d if it is degrees, or give degrees in a column named ra_deg")


def _angle_deg(path: Path, line: int, column: str, text: str, unit: str, form: str) -> float:
    try:
        return float(Angle(text, unit=unit).deg)
    except (ValueError, TypeError, u.UnitsError):
        raise InputError(f"{line_of(path, line)}, field {column}: expected {form}, "
                         f"got {repr(text) if text else 'an empty cell'}") from None


TARGET_EXPECTATIONS = {
    "t0_bjd_tdb": "a mid-transit time as a full Julian date (BJD_TDB)",
    "t0_err_d": "an uncertainty in days (>= 0)",
    "period_d": "a positive period in days",
    "period_err_d": "an uncertainty in days (>= 0)",
    "duration_h": "a positive duration in hours",
}


def _target_row(path: Path, line: int, row: Mapping, coordinates: tuple[str, str]) -> dict:
    if not row["name"]:
        raise InputError(f"{line_of(path, line)}, field name: expected a target name, got an empty cell")
    name = clean_name(row["name"], f"{line_of(path, line)}, field name")
    ra, dec = _coordinates(path, line, row, *coordinates)
    values = {"name": name, "ra_deg": ra, "dec_deg": dec}
    for column, expected in TARGET_EXPECTATIONS.items():
        values[column] = csv_number(path, line, column, row[column], expected)
    cov = row.get("t0_period_cov_d2", "")
    values["t0_period_cov_d2"] = csv_number(path, line, "t0_period_cov_d2", cov, "a covariance in d^2") if cov else 0.0
    for column in schema.TARGET_EPHEMERIS_COLUMNS:
        if column.name in row:
            text = row[column.name]
            expected = f"a number ({column.text}{', ' + column.unit if column.unit else ''})"
            values[column.name] = csv_number(path, line, column.name, text, expected) if text else math.nan
    _check_target_values(path, line, values)
    _check_body_columns(path, line, row)
    return values


def _check_target_values(path: Path, line: int, v: dict) -> None:
    where = line_of(path, line)
    _full_jd(path, line, "t0_bjd_tdb", v["t0_bjd_tdb"])
    if v["period_d"] < MIN_PERIOD_D:
        raise InputError(f"{where}, field period_d: expected a period of at least {MIN_PERIOD_D:g} days, "
                         f"got {v['period_d']:g}")
    for column in ("t0_err_d", "period_err_d"):
        if v[column] < 0:
            raise InputError(f"{where}, field {column}: expected an uncertainty >= 0 days, got {v[column]:g}")
    for column in ("t0_err_d", "period_err_d"):
        if v[column] >= v["period_d"] / 2:
            raise InputError(f"{where}, field {column}: expected an uncertainty smaller than half the period "
                             f"({v['period_d'] / 2:g} d; beyond it the transit phase is unknown), got {v[column]:g} d")
    if v["duration_h"] <= 0 or v["duration_h"] / 24.0 >= v["period_d"]:
        raise InputError(f"{where}, field duration_h: expected 0 < duration < period ({v['period_d'] * 24:g} h), "
                         f"got {v['duration_h']:g} h")
    bound = v["t0_err_d"] * v["period_err_d"]
    if abs(v["t0_period_cov_d2"]) > bound * (1 + 1e-9):
        raise InputError(f"{where}, field t0_period_cov_d2: expected |cov| <= t0_err_d * period_err_d = {bound:g} d^2, "
                         f"got {v['t0_period_cov_d2']:g}")


def _check_body_columns(path: Path, line: int, row: Mapping) -> None:
    """The optional physical columns (bodies.py) hold numbers in their ranges where they are filled in."""
    for column in bodies.NUMBER_COLUMNS:
        text = row.get(column, "")
        if text and text.lower() != "nan":
            value = csv_number(path, line, column, text, "a number (units as in the column name) or an empty cell")
            low, high, unit = bodies.RANGES[column]
            if not low <= value <= high:
                raise InputError(f"{line_of(path, line)}, field {column}: target {row['name']!r}: expected a number "
                                 f"from {low:g} to {high:g} {unit}, got {text}")


def _odd_target_notes(path: Path, line: int, v: dict) -> list[str]:
    """Warnings for a valid row with plausible but odd values."""
    where, notes = line_of(path, line), []
    if v["period_err_d"] > ODD_PERIOD_ERR_FRACTION * v["period_d"]:
        notes.append(f"{where}, field period_err_d: {v['period_err_d']:g} d is more than 1 % of the period "
                     f"({v['period_d']:g} d); check the units (predicted times blur within a few epochs)")
    # Circular orbit: T14 = (P / pi) asin(...) <= P / 2 (Seager & Mallen-Ornelas 2003, eq. 3; from memory).
    if v["duration_h"] > v["period_d"] * 12.0:
        notes.append(f"{where}, field duration_h: {v['duration_h']:g} h is more than half the period "
                     f"({v['period_d']:g} d), longer than a circular orbit allows; check the units")
    if v["t0_err_d"] * 24.0 > v["duration_h"]:
        notes.append(f"{where}, field t0_err_d: {v['t0_err_d']:g} d is longer than the transit itself "
                     f"({v['duration_h']:g} h); check the units")
    return notes


def _duration_notes(path: Path, line: int, v: dict, row: Mapping) -> list[str]:
    """A warning when duration_h exceeds what a central transit allows for the row's a_over_rstar
    and radii (geometry.central_duration_h), when those are given."""
    cells = [str(row.get(c, "")).strip() for c in ("a_over_rstar", "planet_radius_earth", "star_radius_sun")]
    if not all(cells) or "nan" in cells:
        return []
    try:
        longest_h = float(geometry.central_duration_h(v["period_d"], *map(float, cells)))
    except InputError as exc:
        return [f"{line_of(path, line)}: the transit geometry is impossible ({exc})"]
    if v["duration_h"] <= geometry.DURATION_SLACK * longest_h:
        return []
    return [f"{line_of(path, line)}, field duration_h: {v['duration_h']:g} h is longer than a central transit allows "
            f"({longest_h:.2f} h for a_over_rstar {cells[0]} and these radii, Winn 2010 eq. 14); check the units"]


def read_targets(path: str | Path, options: CatalogueOptions | None = None) -> pd.DataFrame:
    """Read a targets catalogue into a table with the columns of `schema.TARGET_COLUMNS`.

    `options` give the format (default by extension: CSV, ECSV, VOTable, IPAC), a column
    mapping and strictness (target_source.py). Rows lacking a required value are left out with
    a warning, or refused when strict. Extra columns are kept as text (numbers where
    bodies.NUMBER_COLUMNS says so are checked); one `InputError` line reports the first problem.
    """
    options = options or CatalogueOptions()
    return targets_from_source(target_cells(Path(path), options), options.strict)


def targets_from_source(source: SourceTable, strict: bool = False) -> pd.DataFrame:
    """The targets table from a catalogue's cells (a file's, or a table built in Python:
    vigil.table_inputs), checked as `read_targets` checks a file; rows are named as
    `source.path: line N` (or `row N`) in messages."""
    path = source.path
    _require_columns(path, source.header, source.cells.columns, REQUIRED_TARGET_FIELDS, "t0_bjd_tdb")
    coordinates = _coordinate_columns(path, source.header, source.cells.columns)
    table = drop_incomplete(source, (*REQUIRED_TARGET_FIELDS, *coordinates), strict)
    records = dict(zip(table.index, table.to_dict("records")))  # plain dicts: reading cells of Series rows is slow
    rows = [_target_row(path, line, record, coordinates) for line, record in records.items()]
    parsed = pd.DataFrame(rows)
    duplicated = parsed["name"].duplicated().to_numpy()
    if duplicated.any():
        first = int(np.flatnonzero(duplicated)[0])
        name = parsed["name"][first]
        earlier = table.index[int(np.flatnonzero(parsed["name"] == name)[0])]
        raise InputError(f"{line_of(path, table.index[first])}, field name: target {name!r} appears twice "
                         f"(also on {row_label(earlier)}); expected unique names")
    for line, values in zip(table.index, rows):  # warnings only once the whole table is valid
        for note in _odd_target_notes(path, line, values) + _duration_notes(path, line, values, records[line]):
            log.warning("%s", note)
    extra = [c for c in table.columns if c not in parsed.columns and c not in ("ra", "dec")]
    result = pd.concat([parsed, table[extra].reset_index(drop=True)], axis=1)
    if bodies.SPECTRUM_FILE_COLUMN in result:  # relative to the targets file; absolute, so tables written from it keep it
        result[bodies.SPECTRUM_FILE_COLUMN] = [str((Path(path).parent / cell).absolute()) if cell else ""
                                               for cell in result[bodies.SPECTRUM_FILE_COLUMN]]
    result.attrs["source_rows"] = RowPlaces(zip(parsed["name"], (line_of(path, line) for line in table.index)))
    catalogue_ephemeris(result)  # the ephemeris columns' ranges and covariance, refused before any work
    return schema.TARGETS.check(result)


def _timing_row(path: Path, line: int, row: pd.Series) -> dict:
    if not row["target"]:
        raise InputError(f"{line_of(path, line)}, field target: expected a target name, got an empty cell")
    target = clean_name(row["target"], f"{line_of(path, line)}, field target")
    mid = csv_number(path, line, "mid_bjd_tdb", row["mid_bjd_tdb"], "a mid-transit time as a full Julian date (BJD_TDB)")
    _full_jd(path, line, "mid_bjd_tdb", mid)
    err = csv_number(path, line, "mid_err_d", row["mid_err_d"], "a positive uncertainty in days")
    if err <= 0:
        raise InputError(f"{line_of(path, line)}, field mid_err_d: expected a positive uncertainty in days, got {err:g}")
    return {"target": target, "mid_bjd_tdb": mid, "mid_err_d": err, "note": row.get("note", "")}


def read_timings(path: str | Path) -> pd.DataFrame:
    """Read measured mid-transit times: target, mid_bjd_tdb, mid_err_d (days), optional note."""
    path = Path(path)
    header_line, table = read_csv(path, "timing")
    return timings_from_cells(path, header_line, table)


def timings_from_cells(source, header, table: pd.DataFrame) -> pd.DataFrame:
    """The timings table from text cells indexed by line number (or row label), checked like a
    timings CSV; `source` names the file (or a table built in Python) in messages."""
    _require_columns(source, header, table.columns, TIMING_FIELDS, "mid_bjd_tdb")
    return pd.DataFrame([_timing_row(source, line, row) for line, row in table.iterrows()])


# --- sites (TOML) --------------------------------------------------------------------------


def _site_number(path: Path, key: str, entry: dict, field_name: str, low: float, high: float, unit: str) -> float:
    expected = f"a number from {low:g} to {high:g} {unit}"
    if field_name not in entry:
        hint = spelling_hint([field_name], set(entry) - SITE_KEYS)
        raise InputError(f"{path}: [{key}] {field_name}: required, {expected}{hint}")
    return number_in_range(f"{path}: [{key}] {field_name}", entry[field_name], low, high, unit)


def site_from_entry(path, name: str, entry) -> Site:
    """One site from its `[sites.NAME]` table (a dict), checked; `path` names the file (or
    "sites" for a site built in Python) in messages."""
    key = f"sites.{name}"
    if not isinstance(entry, dict):
        raise InputError(f"{path}: [{key}]: expected a table of site fields, got {entry!r}")
    kind = entry.get("kind", "ground")
    if kind == "space":
        return _space_site(path, name, entry)
    if kind != "ground":
        raise InputError(f"{path}: [{key}] kind: expected \"ground\" or \"space\", got {kind!r}")
    latitude = _site_number(path, key, entry, "latitude_deg", -90.0, 90.0, "degrees")
    longitude = _site_number(path, key, entry, "longitude_deg", -180.0, 360.0, "degrees east")
    elevation = _site_number(path, key, entry, "elevation_m", -500.0, 9000.0, "metres")
    pressure = _site_number(path, key, entry, "pressure_hpa", 0.0, 1100.0, "hPa") if "pressure_hpa" in entry else None
    temperature = _site_number(path, key, entry, "temperature_c", -80.0, 60.0, "°C") if "temperature_c" in entry else DEFAULT_TEMPERATURE_C
    timezone = entry.get("timezone")
    if timezone is not None:
        _check_timezone(path, key, timezone)
    defaults = checked_constraints(f"{path}: [{key}]", {k: entry[k] for k in CONSTRAINT_KEYS if k in entry})
    _note_site(path, key, entry, longitude, elevation, defaults)
    return Site(name=name, latitude_deg=latitude, longitude_deg=_east_longitude_deg(longitude), elevation_m=elevation,
                timezone=timezone, pressure_hpa=pressure, temperature_c=temperature, defaults=defaults,
                facility=read_facility(f"{path}: [{key}]", entry))


def _east_longitude_deg(longitude: float) -> float:
    """The same meridian in (-180, 180] degrees east."""
    if longitude > 180.0:
        return longitude - 360.0
    return 180.0 if longitude == -180.0 else longitude


def _warn_unknown_keys(path: Path, key: str, entry: dict, known: set) -> None:
    for unknown in sorted(set(entry) - known):
        if unknown in SPACE_KEYS:
            log.warning("%s: [%s] key %r ignored: it is read for sites of kind = \"space\" only", path, key, unknown)
        else:
            log.warning("%s: [%s] unknown key %r ignored, the default is used%s", path, key, unknown,
                        did_you_mean(unknown, known))


def _note_site(path: Path, key: str, entry: dict, longitude: float, elevation: float, defaults: dict) -> None:
    """Warn about unknown keys and odd values of a site that is otherwise valid."""
    _warn_unknown_keys(path, key, entry, SITE_KEYS)
    if longitude > 180.0:
        log.info("%s: [%s] longitude_deg %.4f read as 0-360 degrees east, used as %.4f (east positive, -180 to 180)",
                 path, key, longitude, _east_longitude_deg(longitude))
    if elevation > HIGH_ELEVATION_M:
        log.warning("%s: [%s] elevation_m %g is above %g m; check it is in metres, not feet",
                    path, key, elevation, HIGH_ELEVATION_M)
    altitude = defaults.get("min_altitude_deg")
    if altitude is not None and altitude < LOW_ALTITUDE_LIMIT_DEG:
        log.warning("%s: [%s] min_altitude_deg %g is below %g degrees, where the air mass exceeds 5 "
                    "and extinction and refraction are large", path, key, altitude, LOW_ALTITUDE_LIMIT_DEG)


def _space_site(path: Path, name: str, entry: dict) -> Site:
    """A site of kind space: Sun-angle band, interruptions, blackouts; no place on the Earth."""
    key = f"sites.{name}"
    where = f"{path}: [{key}]"
    ground = next((k for k in GROUND_KEYS if k in entry), None)
    if ground is not None:
        raise InputError(f"{where} {ground}: a site of kind = \"space\" has no place on the Earth; remove {ground}, "
                         "or remove the kind line for a ground site")
    low = _optional_site_number(path, key, entry, "sun_angle_min_deg", 0.0, 180.0, "degrees", DEFAULT_SUN_ANGLE_MIN_DEG)
    high = _optional_site_number(path, key, entry, "sun_angle_max_deg", 0.0, 180.0, "degrees", DEFAULT_SUN_ANGLE_MAX_DEG)
    if not low < high:
        raise InputError(f"{where} sun_angle_max_deg: expected more than sun_angle_min_deg ({low:g} degrees), got {high:g}")
    period, lost = _interruptions(path, key, entry)
    start = (_utc_jd(f"{where} interruption_start_utc", entry["interruption_start_utc"])
             if "interruption_start_utc" in entry else DEFAULT_INTERRUPTION_START_JD_UTC)
    distance = _optional_site_number(path, key, entry, "distance_from_earth_km", 0.0, 1e10, "km", None)
    timezone = entry.get("timezone")
    if timezone is not None:
        _check_timezone(path, key, timezone)
    defaults = checked_constraints(where, {k: entry[k] for k in CONSTRAINT_KEYS if k in entry})
    space = SpaceSettings(sun_angle_min_deg=low, sun_angle_max_deg=high, interruption_period_h=period,
                          interruption_h=lost, interruption_start_jd_utc=start,
                          blackouts_jd_utc=_blackouts(where, entry.get("blackouts", [])), distance_from_earth_km=distance)
    _note_space_site(path, key, entry, space)
    return Site.in_space(name, space, timezone=timezone, defaults=defaults)


def _optional_site_number(path: Path, key: str, entry: dict, field_name: str, low: float, high: float, unit: str,
                          default):
    return _site_number(path, key, entry, field_name, low, high, unit) if field_name in entry else default


def _interruptions(path: Path, key: str, entry: dict) -> tuple[float | None, float]:
    """(interruption_period_h or None, interruption_h): both given, or neither."""
    where = f"{path}: [{key}]"
    if "duty_cycle" in entry:
        raise InputError(f"{where} duty_cycle: not read; describe the lost time as interruption_h hours every "
                         "interruption_period_h hours instead")
    pair = ("interruption_period_h", "interruption_h")
    given = [k for k in pair if k in entry]
    if not given:
        return None, 0.0
    if len(given) == 1:
        missing = next(k for k in pair if k not in entry)
        raise InputError(f"{where} {missing}: required with {given[0]} (interruptions last interruption_h hours "
                         "every interruption_period_h hours)")
    period = _site_number(path, key, entry, "interruption_period_h", MIN_INTERRUPTION_PERIOD_H, 1e5, "hours")
    lost = _site_number(path, key, entry, "interruption_h", 0.0, period, "hours")
    if lost == period:
        raise InputError(f"{where} interruption_h: expected less than interruption_period_h ({period:g} hours), "
                         f"got {lost:g}: the site would never observe")
    return period, lost


def _utc_jd(where: str, value) -> float:
    """JD UTC of an ISO 8601 date or date-time read as UTC, or of a TOML date-time (an offset one
    is converted to UTC, a local one read as UTC)."""
    if isinstance(value, datetime.datetime) and value.tzinfo is not None:
        value = value.astimezone(datetime.timezone.utc).replace(tzinfo=None)
    if isinstance(value, datetime.date):
        value = value.isoformat()
    try:
        if not isinstance(value, str):
            raise ValueError(value)
        return float(Time(value, scale="utc").jd)
    except ValueError:
        raise InputError(f"{where}: expected a UTC date or date-time such as \"2031-03-01T06:00\", got {value!r}") from None


def _blackouts(where: str, value) -> tuple[tuple[float, float], ...]:
    """The blackouts as (start, end) JD UTC pairs sorted by start, from [start, end] pairs."""
    if not isinstance(value, list) or any(not isinstance(pair, list) or len(pair) != 2 for pair in value):
        raise InputError(f"{where} blackouts: expected a list of [start, end] pairs of UTC date-times, got {value!r}")
    pairs = []
    for number, (start, end) in enumerate(value, start=1):
        field_name = f"{where} blackouts (pair {number})"
        lo, hi = _utc_jd(f"{field_name} start", start), _utc_jd(f"{field_name} end", end)
        if not hi > lo:
            raise InputError(f"{field_name}: expected the end after the start, got {start!r} to {end!r}")
        pairs.append((lo, hi))
    return tuple(sorted(pairs))


def _note_space_site(path: Path, key: str, entry: dict, space: SpaceSettings) -> None:
    """Warn about unknown keys and ignored constraints; note what the distance from the Earth costs."""
    _warn_unknown_keys(path, key, entry, SPACE_SITE_KEYS)
    for name in GROUND_ONLY_CONSTRAINTS:
        if name in entry:
            log.warning("%s: [%s] %s ignored: it constrains ground sites only", path, key, name)
    distance = space.distance_from_earth_km
    if distance is not None:
        log.info("%s: [%s] times and the Sun are taken at the Earth's centre; %g km from it, the site sees each "
                 "mid-time up to %.2f s earlier or later and the Sun up to %.2f deg elsewhere (less near the "
                 "Sun-Earth line); windows are not widened for it", path, key, distance, distance / _LIGHT_KM_PER_S,
                 math.degrees(math.asin(min(distance / _AU_KM, 1.0))))


def _check_timezone(path: Path, key: str, name) -> None:
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    try:
        if not isinstance(name, str):
            raise ValueError(name)
        ZoneInfo(name)
    except (ZoneInfoNotFoundError, ValueError):
        raise InputError(f"{path}: [{key}] timezone: expected an IANA time zone name such as 'America/Santiago', got {name!r}") from None


def read_sites(path: str | Path) -> dict[str, Site]:
    """Read `[sites.NAME]` tables from a TOML file into Site objects, in file order."""
    path = Path(path)
    document = load_toml(path)
    sites = document.get("sites")
    if not isinstance(sites, dict) or not sites:
        found = f" (found: {', '.join(document)})" if document else ""
        raise InputError(f"{path}: [sites]: expected one or more [sites.NAME] tables{found}")
    named = {clean_name(name, f"{path}: [sites.{name}]"): entry for name, entry in sites.items()}
    if len(named) < len(sites):
        raise InputError(f"{path}: [sites]: two site names are the same once normalised (Unicode NFC, surrounding "
                         f"spaces): {', '.join(map(repr, sites))}")
    return {name: site_from_entry(path, name, entry) for name, entry in named.items()}
