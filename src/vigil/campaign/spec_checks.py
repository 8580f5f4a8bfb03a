"""The one validation of a campaign's settings, whichever way they arrive (a campaign file, a
`CampaignSpec` built in Python, `dataclasses.replace`, keyword arguments to `vigil.run_campaign`).

Each problem is an `ArgumentError` naming the field as Python spells it (``horizon_years``,
``clear_fraction['ridge']``, ``targets_options.format``); the campaign file's reader renames it
to the file's ``[section] key`` (`FILE_KEYS`), so both say the same thing about the same value.
"""

from __future__ import annotations

import numbers
import os
from collections.abc import Mapping
from pathlib import Path

from astropy.time import Time

from vigil import noise_model
from vigil.constraints import CONSTRAINT_KEYS, checked_constraints
from vigil.ephemeris.table import read_ephemeris_table
from vigil.errors import ArgumentError, InputError
from vigil.inputs import as_time
from vigil.scenarios import Scenario
from vigil.schema import COVERAGE_CLASSES
from vigil.spectrum import Instrument
from vigil.table_formats import FORMATS
from vigil.target_source import CatalogueOptions
from vigil.textfile import did_you_mean, load_toml, number_in_range
from vigil.time_units import DAYS_PER_JULIAN_YEAR, MINUTES_PER_DAY
from vigil.timescales import FIRST_PLAN_YEAR, LAST_PLAN_YEAR, check_plan_date

MONTHS = 12
# How the campaign file names each field (the reader's messages say "[section] key").
FILE_KEYS = {
    "start": "[campaign] start", "horizon_years": "[campaign] horizon_years", "targets_file": "[campaign] targets",
    "sites_file": "[campaign] sites_file", "site_names": "[campaign] sites", "trials": "[campaign] trials",
    "seed": "[campaign] seed", "coverage": "[campaign] coverage", "min_fraction": "[campaign] min_fraction",
    "journal_file": "[campaign] journal", "targets_options.format": "[campaign] targets_format",
    "targets_options.columns": "[campaign] targets_columns", "goal_resolution": "[goal] resolution",
    "goal_snr": "[goal] snr", "goal_bin_fraction": "[goal] bin_fraction",
    "per_target_per_semester": "[allocation] per_target_per_semester",
    "per_site_per_semester": "[allocation] per_site_per_semester", "overhead_h": "[allocation] overhead_h",
    "refresh_every_years": "[refresh] every_years", "refresh_timing_err_d": "[refresh] timing_err_min",
    "ephemeris_table": "[campaign] ephemeris_table", "extrapolate_table": "[campaign] extrapolate_table",
    "instrument": "[instrument]", "noise": "[instrument]", "scenarios": "[scenarios]",
}
_REFRESH_ERR_MIN = (0.01, 600.0)  # timing precision of a planned refresh, minutes


def file_key(argument: str) -> str:
    """The campaign file's ``[section] key`` for a field named as `ArgumentError.argument`.

    Examples
    --------
    >>> file_key("clear_fraction['ridge']"), file_key("goal_snr")
    ('[weather.ridge] clear_fraction', '[goal] snr')
    """
    if argument.startswith("clear_fraction["):
        return f"[weather.{argument[len('clear_fraction['):-1].strip(chr(39))}] clear_fraction"
    if argument.startswith("constraints["):
        return f"[campaign] {argument[len('constraints['):-1].strip(chr(39))}"
    return FILE_KEYS.get(argument, argument)


def _number(name: str, value, low: float, high: float, unit: str = "") -> float:
    try:
        return number_in_range(name, value, low, high, unit)
    except InputError as exc:
        raise ArgumentError(name, str(exc).split(": ", 1)[1]) from None


def _whole(name: str, value, low: int, high: int, optional: bool = False) -> int | None:
    if optional and value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, numbers.Integral) or not low <= value <= high:
        raise ArgumentError(name, f"expected a whole number from {low:g} to {high:g}, got {value!r}")
    return int(value)


def _path(name: str, value) -> Path | None:
    if value is None or isinstance(value, Path):
        return value
    if isinstance(value, (str, os.PathLike)):
        return Path(value)
    raise ArgumentError(name, f"expected a file path, got {value!r}")


def _of_kind(name: str, value, kind: type, what: str):
    if not isinstance(value, kind):
        raise ArgumentError(name, f"expected {what}, got {value!r}")
    return value


def _start(value):
    start = as_time(value, "start")
    if not FIRST_PLAN_YEAR <= start.ymdhms["year"] <= LAST_PLAN_YEAR:
        raise ArgumentError("start", f"expected a UTC date from {FIRST_PLAN_YEAR} to {LAST_PLAN_YEAR} such as "
                                     f"2027-01-01, got {value!r}")
    return start


def _horizon(value, start) -> float:
    years = _number("horizon_years", value, 0.1, 200.0, "years")
    end = start.utc.jd + years * DAYS_PER_JULIAN_YEAR
    try:
        check_plan_date(Time(end, format="jd", scale="utc"), "end")
    except InputError as exc:
        detail = str(exc).split(": ", 1)[1]
        raise ArgumentError("horizon_years", f"the campaign's end ({years:g} years after the start): {detail}") from None
    return years


def _site_names(value, sites_file: Path | None) -> tuple[str, ...]:
    if isinstance(value, str) or not isinstance(value, (list, tuple)) or not value \
            or not all(isinstance(s, str) for s in value):
        raise ArgumentError("site_names", f"expected a list of site names, got {value!r}")
    twice = next((s for i, s in enumerate(value) if s in value[:i]), None)
    if twice is not None:
        raise ArgumentError("site_names", f"{twice!r} is listed twice")
    _check_sites_known(tuple(value), sites_file)
    return tuple(value)


def _check_sites_known(names: tuple[str, ...], sites_file: Path | None) -> None:
    """Name the field when a site is missing from a readable sites file; problems of the sites
    file itself are left to its reader."""
    try:
        known = load_toml(sites_file).get("sites") if sites_file is not None else None
    except InputError:
        return
    if not isinstance(known, dict) or not known:
        return
    for name in names:
        if name not in known:
            raise ArgumentError("site_names", f"{name!r} is not a site of {sites_file}{did_you_mean(name, known)}; "
                                              f"expected one of {', '.join(known)}")


def _clear_fraction(value, sites: tuple[str, ...]) -> dict:
    """Each campaign site's 12 monthly clear-night fractions, January first."""
    _of_kind("clear_fraction", value, Mapping, "a mapping of site name to 12 monthly fractions")
    fractions = {}
    for site in sites:
        name = f"clear_fraction[{site!r}]"
        if site not in value:
            raise ArgumentError(name, "required, 12 monthly fractions (Jan..Dec)")
        months = value[site]
        if (isinstance(months, (str, Mapping)) or not hasattr(months, "__len__") or len(months) != MONTHS
                or not all(isinstance(v, numbers.Real) and not isinstance(v, bool) and 0 <= v <= 1 for v in months)):
            raise ArgumentError(name, f"expected 12 numbers from 0 to 1, got {months!r}")
        fractions[site] = tuple(float(v) for v in months)
    return fractions


def _coverage(value) -> tuple[str, ...]:
    allowed = COVERAGE_CLASSES[:-1]
    if isinstance(value, str) or not isinstance(value, (list, tuple)) or not value \
            or any(k not in allowed for k in value):
        raise ArgumentError("coverage", f"expected some of {', '.join(allowed)}; got {value!r}")
    return tuple(value)


def _constraints(value) -> dict:
    _of_kind("constraints", value, Mapping, f"a mapping with some of {', '.join(CONSTRAINT_KEYS)}")
    unknown = [k for k in value if k not in CONSTRAINT_KEYS]
    if unknown:
        raise ArgumentError("constraints", f"unknown key {unknown[0]!r}{did_you_mean(str(unknown[0]), CONSTRAINT_KEYS)}"
                                           f"; expected some of {', '.join(CONSTRAINT_KEYS)}")
    try:
        return checked_constraints("constraints", dict(value))
    except InputError as exc:
        key, detail = str(exc).removeprefix("constraints ").split(": ", 1)
        raise ArgumentError(f"constraints[{key!r}]", detail) from None


def _targets_options(value) -> CatalogueOptions:
    _of_kind("targets_options", value, CatalogueOptions, "a vigil.target_source.CatalogueOptions")
    if value.format is not None and (not isinstance(value.format, str) or value.format.lower() not in FORMATS):
        raise ArgumentError("targets_options.format", f"expected one of {', '.join(FORMATS)}, got {value.format!r}")
    return CatalogueOptions(value.format, _path("targets_options.columns", value.columns), value.strict)


def _scenarios(value) -> tuple[Scenario, ...]:
    if isinstance(value, Scenario):
        value = (value,)
    if not isinstance(value, (list, tuple)) or not value or not all(isinstance(s, Scenario) for s in value):
        raise ArgumentError("scenarios", f"expected one or more vigil.scenarios.Scenario, got {value!r}")
    return tuple(value)


def _refresh(every, error_d) -> tuple[float | None, float]:
    if every is None:
        return None, error_d
    every = _number("refresh_every_years", every, 0.1, 100.0, "years")
    low, high = (m / MINUTES_PER_DAY for m in _REFRESH_ERR_MIN)
    error_d = _number("refresh_timing_err_d", error_d, low, high,
                      f"days ({_REFRESH_ERR_MIN[0]:g} to {_REFRESH_ERR_MIN[1]:g} minutes)")
    return every, error_d


def checked_fields(f: dict) -> dict:
    """The fields of a CampaignSpec (a dict by field name) checked and normalised (plain floats
    and ints, tuples, Paths, `start` as a UTC Time); the first problem is an ArgumentError
    naming the field.

    Examples
    --------
    >>> checked_fields({**fields, "trials": 4.5})  # doctest: +SKIP
    Traceback (most recent call last):
    vigil.errors.ArgumentError: trials: expected a whole number from 1 to 100000, got 4.5
    """
    start = _start(f["start"])
    sites_file = _path("sites_file", f["sites_file"])
    sites = _site_names(f["site_names"], sites_file)
    every, error_d = _refresh(f["refresh_every_years"], f["refresh_timing_err_d"])
    return {
        **f, "start": start, "horizon_years": _horizon(f["horizon_years"], start),
        "targets_file": _path("targets_file", f["targets_file"]), "sites_file": sites_file, "site_names": sites,
        "clear_fraction": _clear_fraction(f["clear_fraction"], sites),
        "instrument": _of_kind("instrument", f["instrument"], Instrument, "a vigil.spectrum.Instrument"),
        "goal_resolution": _number("goal_resolution", f["goal_resolution"], 1.0, 1e6),
        "goal_snr": _number("goal_snr", f["goal_snr"], 0.1, 1e4),
        "trials": _whole("trials", f["trials"], 1, 100_000), "seed": _whole("seed", f["seed"], 0, 2**63 - 1),
        "coverage": _coverage(f["coverage"]), "min_fraction": _number("min_fraction", f["min_fraction"], 0.0, 1.0),
        "per_target_per_semester": _whole("per_target_per_semester", f["per_target_per_semester"], 0, 10_000, True),
        "per_site_per_semester": _whole("per_site_per_semester", f["per_site_per_semester"], 0, 100_000, True),
        "overhead_h": _number("overhead_h", f["overhead_h"], 0.0, 24.0, "hours"),
        "constraints": _constraints(f["constraints"]), "journal_file": _path("journal_file", f["journal_file"]),
        "noise": _of_kind("noise", f["noise"], noise_model.NoiseModel, "a vigil.noise_model.NoiseModel"),
        "goal_bin_fraction": _bin_fraction(f["goal_bin_fraction"]), "scenarios": _scenarios(f["scenarios"]),
        "targets_options": _targets_options(f["targets_options"]),
        "refresh_every_years": every, "refresh_timing_err_d": error_d,
        **_ephemeris_table(f["ephemeris_table"], f["extrapolate_table"]),
    }


def _ephemeris_table(name, extrapolate) -> dict:
    """The per-epoch table, read now as `vigil windows --ephemeris-table` reads it, so a bad one
    is refused before any work starts."""
    if not isinstance(extrapolate, bool):
        raise ArgumentError("extrapolate_table", f"expected true or false, got {extrapolate!r}")
    table = _path("ephemeris_table", name)
    if table is None:
        if extrapolate:
            raise ArgumentError("extrapolate_table", "needs ephemeris_table, the table to extrapolate")
    else:
        try:
            read_ephemeris_table(table, extrapolate)
        except InputError as exc:
            raise ArgumentError("ephemeris_table", str(exc)) from None
    return {"ephemeris_table": table, "extrapolate_table": extrapolate}


def _bin_fraction(value) -> float:
    """Share of usable bins that must reach the SNR (1: all)."""
    if not (isinstance(value, numbers.Real) and not isinstance(value, bool) and 0 < value <= 1):
        raise ArgumentError("goal_bin_fraction", f"expected a number above 0 and at most 1, got {value!r}")
    return float(value)
