"""Read and validate a campaign file (TOML) into a CampaignSpec.

Paths inside the file are relative to the file's own folder. Every problem is one InputError
line naming the file and the key.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field
from datetime import date, datetime, timezone
from pathlib import Path

from astropy.time import Time

from vigil.timescales import FIRST_PLAN_YEAR, LAST_PLAN_YEAR, check_plan_date
from vigil import noise_model
from vigil.campaign import noise_spec
from vigil.constraints import CONSTRAINT_KEYS, checked_constraints
from vigil.ephemeris.table import read_ephemeris_table
from vigil.textfile import did_you_mean, load_toml, number_in_range, spelling_hint
from vigil.errors import InputError
from vigil.scenarios import DEFAULT_SCENARIOS, Scenario
from vigil.table_formats import FORMATS
from vigil.target_source import CatalogueOptions
from vigil.schema import COVERAGE_CLASSES
from vigil.spectrum import Instrument
from vigil.time_units import DAYS_PER_JULIAN_YEAR, MINUTES_PER_DAY

log = logging.getLogger("vigil")
MONTHS = 12
FIRST_START_YEAR, LAST_START_YEAR = FIRST_PLAN_YEAR, LAST_PLAN_YEAR
KNOWN = {
    "campaign": {"start", "horizon_years", "targets", "sites_file", "sites", "trials", "seed", "coverage",
                 "min_fraction", "min_altitude_deg", "twilight", "baseline_h", "sigma_k", "moon_sep_deg", "journal",
                 "targets_format", "targets_columns", "ephemeris_table", "extrapolate_table"},
    "refresh": {"every_years", "timing_err_min"},
    "allocation": {"per_target_per_semester", "per_site_per_semester", "overhead_h"},
    "instrument": {"aperture_m", "central_obstruction", "throughput", "wavelength_min_um", "wavelength_max_um",
                   "noise_floor_ppm", *noise_spec.INSTRUMENT_KEYS},
    "goal": {"resolution", "snr", "bin_fraction"},
    "scenarios": None,  # one table per scenario
    "weather": None,  # one key per site
}
REQUIRED_KEYS = {"start", "targets", "sites_file", "sites", "aperture_m", "throughput", "wavelength_min_um",
                 "wavelength_max_um", "resolution", "snr"}


@dataclass(frozen=True)
class CampaignSpec:
    """Everything a campaign simulation needs besides the targets and sites themselves."""

    start: Time
    horizon_years: float
    targets_file: Path
    sites_file: Path
    site_names: tuple[str, ...]
    clear_fraction: dict  # site -> 12 monthly clear-night fractions, January first
    instrument: Instrument
    goal_resolution: float
    goal_snr: float
    trials: int = 200
    seed: int = 0
    coverage: tuple[str, ...] = ("full",)
    min_fraction: float = 0.0
    per_target_per_semester: int | None = None
    per_site_per_semester: int | None = None
    overhead_h: float = 0.0
    constraints: dict = field(default_factory=dict)
    journal_file: Path | None = None
    noise: noise_model.NoiseModel = noise_model.GROUND
    goal_bin_fraction: float = 1.0
    scenarios: tuple[Scenario, ...] = DEFAULT_SCENARIOS
    targets_options: CatalogueOptions = CatalogueOptions()
    refresh_every_years: float | None = None
    refresh_timing_err_d: float = 0.0
    ephemeris_table: Path | None = None
    extrapolate_table: bool = False

    @property
    def end(self) -> Time:
        return Time(self.start.jd + self.horizon_years * DAYS_PER_JULIAN_YEAR, format="jd", scale="utc")


def _expected(kind, low, high, unit: str) -> str:
    words = {str: "text in quotes", int: "a whole number", list: "a list [...]", bool: "true or false"}.get(kind, "a number")
    return f"{words} from {low:g} to {high:g}{unit}" if low is not None else words


def _get(path: Path, table: dict, section: str, key: str, kind, low=None, high=None, default=..., unit: str = ""):
    if key not in table:
        if default is ...:
            hint = spelling_hint([key], set(table) - (KNOWN.get(section) or set()))
            raise InputError(f"{path}: [{section}] {key}: required, {_expected(kind, low, high, unit)}{hint}")
        return default
    value = table[key]
    if kind == (int, float) and low is not None:
        return number_in_range(f"{path}: [{section}] {key}", value, low, high, unit.strip())
    ok = isinstance(value, kind) and (kind is bool or not isinstance(value, bool))
    if ok and low is not None and not low <= value <= high:
        ok = False
    if not ok:
        raise InputError(f"{path}: [{section}] {key}: expected {_expected(kind, low, high, unit)}, got {value!r}")
    return value


def _table(path: Path, document: dict, section: str, required: bool = True) -> dict:
    """The [section] table; a missing one is an error naming the keys it needs, unless optional."""
    value = document.get(section)
    if value is None and not required:
        return {}
    if value is None:
        needed = [k for k in sorted(KNOWN[section]) if k in REQUIRED_KEYS]
        raise InputError(f"{path}: [{section}] table missing; expected [{section}] {', '.join(needed)}")
    if not isinstance(value, dict):
        raise InputError(f"{path}: [{section}]: expected a table, got {value!r}")
    return value


def _warn_unknown(path: Path, document: dict, sites: tuple[str, ...]) -> None:
    for section, value in document.items():
        if section not in KNOWN:
            log.warning("%s: unknown table [%s] ignored%s", path, section, spelling_hint([*KNOWN], [section]))
        elif KNOWN[section] is not None and isinstance(value, dict):
            for key in sorted(set(value) - KNOWN[section]):
                log.warning("%s: [%s] unknown key %r ignored, the default is used%s", path, section, key,
                            did_you_mean(key, KNOWN[section]))
    for site in document.get("weather", {}):
        if site not in sites:
            log.warning("%s: [weather.%s] ignored: %r is not in [campaign] sites", path, site, site)


def _weather(path: Path, document: dict, sites: tuple[str, ...]) -> dict:
    table = _table(path, document, "weather", required=False)
    fractions = {}
    for site in sites:
        entry = table.get(site, {})
        values = entry.get("clear_fraction") if isinstance(entry, dict) else None
        if values is None:
            hint = spelling_hint(["clear_fraction"], entry) if isinstance(entry, dict) else ""
            raise InputError(f"{path}: [weather.{site}] clear_fraction: required, 12 monthly fractions (Jan..Dec){hint}")
        if (not isinstance(values, list) or len(values) != MONTHS
                or not all(isinstance(v, (int, float)) and not isinstance(v, bool) and 0 <= v <= 1 for v in values)):
            raise InputError(f"{path}: [weather.{site}] clear_fraction: expected 12 numbers from 0 to 1, got {values!r}")
        fractions[site] = tuple(float(v) for v in values)
    return fractions


def _instrument(path: Path, table: dict) -> Instrument:
    number = (int, float)
    try:
        return Instrument(
            aperture_m=float(_get(path, table, "instrument", "aperture_m", number, 0.01, 100.0, unit=" m")),
            central_obstruction=float(_get(path, table, "instrument", "central_obstruction", number, 0.0, 0.99, 0.0)),
            throughput=float(_get(path, table, "instrument", "throughput", number, 1e-6, 1.0)),
            wavelength_min_um=float(_get(path, table, "instrument", "wavelength_min_um", number, 0.1, 30.0, unit=" um")),
            wavelength_max_um=float(_get(path, table, "instrument", "wavelength_max_um", number, 0.1, 30.0, unit=" um")),
            noise_floor_ppm=float(_get(path, table, "instrument", "noise_floor_ppm", number, 0.0, 1e5, 0.0, unit=" ppm")),
        )
    except InputError as exc:
        message = str(exc)
        if message.startswith(str(path)):
            raise
        raise InputError(f"{path}: [instrument] {message.removeprefix('instrument ')}") from None


def _start(path: Path, c: dict) -> Time:
    """The campaign start (UTC) from a quoted date or a TOML date or date-time."""
    expected = f"a UTC date from {FIRST_START_YEAR} to {LAST_START_YEAR} such as 2027-01-01"
    if "start" not in c:
        raise InputError(f"{path}: [campaign] start: required, {expected}")
    value = c["start"]
    if isinstance(value, datetime) and value.tzinfo is not None:
        value = value.astimezone(timezone.utc).replace(tzinfo=None)
    text = value.isoformat() if isinstance(value, date) else value
    try:
        start = Time(text, scale="utc") if isinstance(text, str) else None
    except ValueError:
        start = None
    if start is None or not FIRST_START_YEAR <= start.ymdhms["year"] <= LAST_START_YEAR:
        raise InputError(f"{path}: [campaign] start: expected {expected}, got {c['start']!r}")
    return start


def _sites(path: Path, c: dict) -> tuple[str, ...]:
    sites = _get(path, c, "campaign", "sites", list)
    if not sites or not all(isinstance(s, str) for s in sites):
        raise InputError(f"{path}: [campaign] sites: expected a list of site names, got {sites!r}")
    twice = next((s for i, s in enumerate(sites) if s in sites[:i]), None)
    if twice is not None:
        raise InputError(f"{path}: [campaign] sites: {twice!r} is listed twice")
    return tuple(sites)


def _check_sites_known(path: Path, sites_file: Path, names: tuple[str, ...]) -> None:
    """Name the [campaign] key when a site is missing from a readable sites file; problems of
    the sites file itself are left to catalog.read_sites."""
    try:
        known = load_toml(sites_file).get("sites")
    except InputError:
        return
    if not isinstance(known, dict) or not known:
        return
    for name in names:
        if name not in known:
            raise InputError(f"{path}: [campaign] sites: {name!r} is not a site of {sites_file}"
                             f"{did_you_mean(name, known)}; expected one of {', '.join(known)}")


def _refresh(path: Path, table: dict) -> dict:
    """Planned ephemeris refreshes: one timing per target every N years, of the given precision."""
    if not table:
        return {}
    every = float(_get(path, table, "refresh", "every_years", (int, float), 0.1, 100.0, default=..., unit=" years"))
    error_min = float(_get(path, table, "refresh", "timing_err_min", (int, float), 0.01, 600.0, default=..., unit=" minutes"))
    return {"refresh_every_years": every, "refresh_timing_err_d": error_min / MINUTES_PER_DAY}


def _targets_options(path: Path, c: dict) -> CatalogueOptions:
    """targets_format (csv, ecsv, votable, ipac; default by extension) and targets_columns (a
    column mapping TOML, relative to the campaign file) of the targets catalogue."""
    fmt = _get(path, c, "campaign", "targets_format", str, default=None)
    if fmt is not None and fmt.lower() not in FORMATS:
        raise InputError(f"{path}: [campaign] targets_format: expected one of {', '.join(FORMATS)}, got {fmt!r}")
    columns = _get(path, c, "campaign", "targets_columns", str, default=None)
    return CatalogueOptions(format=fmt, columns=path.parent / columns if columns else None)


def _ephemeris_table(path: Path, c: dict) -> dict:
    """ephemeris_table (a per-epoch table CSV, relative to the campaign file, read as `vigil windows
    --ephemeris-table` reads it) and extrapolate_table (true or false, default false)."""
    name = _get(path, c, "campaign", "ephemeris_table", str, default=None)
    extrapolate = _get(path, c, "campaign", "extrapolate_table", bool, default=False)
    if name is None:
        if extrapolate:
            raise InputError(f"{path}: [campaign] extrapolate_table: needs ephemeris_table, the table to extrapolate")
        return {}
    table = path.parent / name
    try:
        read_ephemeris_table(table, extrapolate)
    except InputError as exc:
        raise InputError(f"{path}: [campaign] ephemeris_table: {exc}") from None
    return {"ephemeris_table": table, "extrapolate_table": extrapolate}


def read_campaign(path: str | Path) -> CampaignSpec:
    """Read a campaign TOML file (see configs/campaign.example.toml for every key)."""
    path = Path(path)
    document = load_toml(path)
    c = document.get("campaign")
    if not isinstance(c, dict):
        raise InputError(f"{path}: [campaign] table missing; expected [campaign] start, targets, sites_file, sites")
    sites = _sites(path, c)
    coverage = tuple(_get(path, c, "campaign", "coverage", list, default=["full"]))
    bad = [k for k in coverage if k not in COVERAGE_CLASSES[:-1]]
    if bad or not coverage:
        raise InputError(f"{path}: [campaign] coverage: expected some of full, ingress, egress, partial; got {coverage!r}")
    allocation = _table(path, document, "allocation", required=False)
    goal = _table(path, document, "goal")
    sites_file = path.parent / _get(path, c, "campaign", "sites_file", str)
    _check_sites_known(path, sites_file, sites)
    instrument = _table(path, document, "instrument")
    constraints = {k: c[k] for k in CONSTRAINT_KEYS if k in c}
    spec = CampaignSpec(
        start=_start(path, c),
        horizon_years=float(_get(path, c, "campaign", "horizon_years", (int, float), 0.1, 200.0, 30, " years")),
        targets_file=path.parent / _get(path, c, "campaign", "targets", str),
        sites_file=sites_file,
        site_names=sites,
        clear_fraction=_weather(path, document, sites),
        instrument=_instrument(path, instrument),
        noise=noise_spec.read_noise(path, instrument, sites_file, sites),
        goal_bin_fraction=noise_spec.read_bin_fraction(path, goal),
        scenarios=noise_spec.read_scenarios(path, document),
        goal_resolution=float(_get(path, goal, "goal", "resolution", (int, float), 1.0, 1e6)),
        goal_snr=float(_get(path, goal, "goal", "snr", (int, float), 0.1, 1e4)),
        trials=int(_get(path, c, "campaign", "trials", int, 1, 100_000, 200)),
        seed=int(_get(path, c, "campaign", "seed", int, 0, 2**63 - 1, 0)),
        coverage=coverage,
        min_fraction=float(_get(path, c, "campaign", "min_fraction", (int, float), 0.0, 1.0, 0.0)),
        per_target_per_semester=_get(path, allocation, "allocation", "per_target_per_semester", int, 0, 10_000, None),
        per_site_per_semester=_get(path, allocation, "allocation", "per_site_per_semester", int, 0, 100_000, None),
        overhead_h=float(_get(path, allocation, "allocation", "overhead_h", (int, float), 0.0, 24.0, 0.0, " hours")),
        constraints=checked_constraints(f"{path}: [campaign]", constraints),
        journal_file=path.parent / c["journal"] if _get(path, c, "campaign", "journal", str, default=None) else None,
        targets_options=_targets_options(path, c),
        **_ephemeris_table(path, c),
        **_refresh(path, _table(path, document, "refresh", required=False)),
    )
    check_plan_date(spec.end, f"{path}: [campaign] horizon_years: the campaign's end ({spec.horizon_years:g} years "
                              "after the start)")
    _warn_unknown(path, document, sites)
    noise_spec.warn_assumed(path, instrument, spec.noise)
    return spec
