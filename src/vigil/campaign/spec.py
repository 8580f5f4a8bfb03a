"""A campaign's settings (CampaignSpec) and the campaign file (TOML) that fills them.

Every way into a campaign (this file reader, a CampaignSpec built in Python,
dataclasses.replace) goes through one validation, vigil.campaign.spec_checks. Paths inside
the file are relative to the file's own folder. Every problem is one InputError line naming
the file and the key.
"""

from __future__ import annotations

import dataclasses
import logging
from dataclasses import dataclass, field
from datetime import date, datetime, timezone
from pathlib import Path

from astropy.time import Time

from vigil import noise_model
from vigil.campaign import noise_spec, spec_checks
from vigil.constraints import CONSTRAINT_KEYS
from vigil.textfile import did_you_mean, load_toml, spelling_hint
from vigil.errors import ArgumentError, InputError
from vigil.scenarios import DEFAULT_SCENARIOS, Scenario
from vigil.target_source import CatalogueOptions
from vigil.spectrum import Instrument
from vigil.time_units import DAYS_PER_JULIAN_YEAR, MINUTES_PER_DAY

log = logging.getLogger("vigil")
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
    """Everything a campaign simulation needs besides the targets and sites themselves.

    Built by `read_campaign` from a file, or directly in Python; either way (and after
    `dataclasses.replace`) the values are checked on construction (vigil.campaign.spec_checks)
    and a bad one raises `vigil.errors.ArgumentError` naming the field.

    Parameters
    ----------
    start : astropy Time, ISO string (UTC) or timezone-aware datetime
        First night of the campaign (stored as a UTC Time).
    horizon_years : float
        Length of the campaign in Julian years (0.1 to 200).
    targets_file, sites_file : str or Path, optional
        The catalogue and sites TOML (None when both are passed to `vigil.run_campaign`).
    site_names : sequence of str
        The sites observed, each once (and in `sites_file` when that is readable).
    clear_fraction : dict
        Per site, 12 monthly clear-night fractions in [0, 1], January first.
    instrument : vigil.spectrum.Instrument
    goal_resolution, goal_snr : float
        Spectral resolution (1 to 1e6) and SNR per bin (0.1 to 1e4) to reach.
    trials, seed : int
        Weather trials (1 to 100000) and the random seed.
    coverage : sequence of {"full", "ingress", "egress", "partial"}
    min_fraction : float
        Least observable share of the transit (0 to 1).
    per_target_per_semester, per_site_per_semester : int, optional
        Allocation caps on visits.
    overhead_h : float
        Telescope hours added to each visit (0 to 24).
    constraints : dict
        Some of min_altitude_deg, twilight, baseline_h, sigma_k, moon_sep_deg (the sites' defaults
        for the rest).
    journal_file : str or Path, optional
    noise : vigil.noise_model.NoiseModel
    goal_bin_fraction : float
        Share of usable bins that must reach the SNR (above 0, at most 1).
    scenarios : tuple of vigil.scenarios.Scenario
    targets_options : vigil.target_source.CatalogueOptions
    refresh_every_years : float, optional
        A planned ephemeris refresh every so many years (0.1 to 100), each a timing of
        `refresh_timing_err_d` days (0.01 to 600 minutes).
    ephemeris_table : str or Path, optional
        A per-epoch table of predicted mid-times (as `vigil windows --ephemeris-table` reads
        it) for the targets it names; `extrapolate_table` continues it beyond its span.

    Examples
    --------
    >>> spec = dataclasses.replace(vigil.read_campaign("campaign.toml"), trials=4.5)  # doctest: +SKIP
    Traceback (most recent call last):
    vigil.errors.ArgumentError: trials: expected a whole number from 1 to 100000, got 4.5
    """

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

    def __post_init__(self) -> None:
        given = {f.name: getattr(self, f.name) for f in dataclasses.fields(self)}
        for name, value in spec_checks.checked_fields(given).items():
            object.__setattr__(self, name, value)  # normalised: floats, tuples, Paths, a UTC Time

    @property
    def end(self) -> Time:
        return Time(self.start.jd + self.horizon_years * DAYS_PER_JULIAN_YEAR, format="jd", scale="utc")


def _key(path: Path, table: dict, section: str, key: str, default=...):
    """The value of `key` in [section], or `default`; a missing required key is an error."""
    if key in table:
        return table[key]
    if default is ...:
        hint = spelling_hint([key], set(table) - (KNOWN.get(section) or set()))
        raise InputError(f"{path}: [{section}] {key}: required{hint}")
    return default


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


def _weather(path: Path, document: dict) -> dict:
    """clear_fraction of each [weather.SITE] table that gives one."""
    table = _table(path, document, "weather", required=False)
    return {site: entry["clear_fraction"] for site, entry in table.items()
            if isinstance(entry, dict) and "clear_fraction" in entry}


def _instrument(path: Path, table: dict) -> Instrument:
    given = {key: _key(path, table, "instrument", key, 0.0 if key in ("central_obstruction", "noise_floor_ppm") else ...)
             for key in ("aperture_m", "central_obstruction", "throughput", "wavelength_min_um", "wavelength_max_um",
                         "noise_floor_ppm")}
    try:
        return Instrument(**given)
    except ArgumentError as exc:
        raise InputError(f"{path}: [instrument] {exc}") from None


def _start(c: dict):
    """The start as written, a TOML date or date-time as ISO text in UTC."""
    value = c["start"]
    if isinstance(value, datetime) and value.tzinfo is not None:
        value = value.astimezone(timezone.utc).replace(tzinfo=None)
    return value.isoformat() if isinstance(value, date) else value


def _relative(path: Path, value):
    """A path written in the file, relative to the file's folder (other values as written)."""
    return path.parent / value if isinstance(value, str) else value


def _refresh(path: Path, table: dict) -> dict:
    """Planned ephemeris refreshes: one timing per target every N years, of the given precision."""
    if not table:
        return {}
    minutes = _key(path, table, "refresh", "timing_err_min")
    number = isinstance(minutes, (int, float)) and not isinstance(minutes, bool)
    return {"refresh_every_years": _key(path, table, "refresh", "every_years"),
            "refresh_timing_err_d": minutes / MINUTES_PER_DAY if number else minutes}


def _in_file(path: Path, document: dict, exc: ArgumentError) -> InputError:
    """A field's error as the file's "[section] key" error (with a spelling hint for a missing
    weather entry)."""
    hint = ""
    if exc.argument.startswith("clear_fraction[") and exc.detail.startswith("required"):
        entry = document.get("weather", {}).get(exc.argument[len("clear_fraction['"):-2])
        hint = spelling_hint(["clear_fraction"], entry) if isinstance(entry, dict) else ""
    return InputError(f"{path}: {spec_checks.file_key(exc.argument)}: {exc.detail}{hint}")


def read_campaign(path: str | Path) -> CampaignSpec:
    """Read a campaign TOML file (see configs/campaign.example.toml for every key)."""
    path = Path(path)
    document = load_toml(path)
    c = document.get("campaign")
    if not isinstance(c, dict):
        raise InputError(f"{path}: [campaign] table missing; expected [campaign] start, targets, sites_file, sites")
    for key in ("start", "sites", "targets", "sites_file"):
        _key(path, c, "campaign", key)
    allocation = _table(path, document, "allocation", required=False)
    goal = _table(path, document, "goal")
    instrument = _table(path, document, "instrument")
    sites = c["sites"]
    sites_file = _relative(path, c["sites_file"])
    clean_sites = tuple(s for s in sites if isinstance(s, str)) if isinstance(sites, list) else ()
    try:
        spec = CampaignSpec(
            start=_start(c),
            horizon_years=c.get("horizon_years", 30),
            targets_file=_relative(path, c["targets"]),
            sites_file=sites_file,
            site_names=sites,
            clear_fraction=_weather(path, document),
            instrument=_instrument(path, instrument),
            noise=noise_spec.read_noise(path, instrument, sites_file, clean_sites),
            goal_bin_fraction=goal.get("bin_fraction", 1.0),
            scenarios=noise_spec.read_scenarios(path, document),
            goal_resolution=_key(path, goal, "goal", "resolution"),
            goal_snr=_key(path, goal, "goal", "snr"),
            trials=c.get("trials", 200),
            seed=c.get("seed", 0),
            coverage=c.get("coverage", ["full"]),
            min_fraction=c.get("min_fraction", 0.0),
            per_target_per_semester=allocation.get("per_target_per_semester"),
            per_site_per_semester=allocation.get("per_site_per_semester"),
            overhead_h=allocation.get("overhead_h", 0.0),
            constraints={k: c[k] for k in CONSTRAINT_KEYS if k in c},
            journal_file=_relative(path, c.get("journal") or None),
            targets_options=CatalogueOptions(format=c.get("targets_format"),
                                             columns=_relative(path, c.get("targets_columns"))),
            ephemeris_table=_relative(path, c.get("ephemeris_table")),
            extrapolate_table=c.get("extrapolate_table", False),
            **_refresh(path, _table(path, document, "refresh", required=False)),
        )
    except ArgumentError as exc:
        raise _in_file(path, document, exc) from None
    _warn_unknown(path, document, spec.site_names)
    noise_spec.warn_assumed(path, instrument, spec.noise)
    return spec
