"""Read and validate a campaign file (TOML) into a CampaignSpec.

Paths inside the file are relative to the file's own folder. Every problem is one InputError
line naming the file and the key.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field
from pathlib import Path

from astropy.time import Time

from vigil.catalog import _load_toml
from vigil.errors import InputError
from vigil.schema import COVERAGE_CLASSES
from vigil.spectrum import Instrument

log = logging.getLogger("vigil")
MONTHS = 12
KNOWN = {
    "campaign": {"start", "horizon_years", "targets", "sites_file", "sites", "trials", "seed", "coverage",
                 "min_fraction", "min_altitude_deg", "twilight", "baseline_h", "sigma_k", "moon_sep_deg"},
    "allocation": {"per_target_per_semester", "per_site_per_semester", "overhead_h"},
    "instrument": {"aperture_m", "central_obstruction", "throughput", "wavelength_min_um", "wavelength_max_um",
                   "noise_floor_ppm"},
    "goal": {"resolution", "snr"},
    "weather": None,  # one key per site
}


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

    @property
    def end(self) -> Time:
        return Time(self.start.jd + self.horizon_years * 365.25, format="jd", scale="utc")


def _get(path: Path, table: dict, section: str, key: str, kind, low=None, high=None, default=...):
    if key not in table:
        if default is ...:
            raise InputError(f"{path}: [{section}] {key}: required")
        return default
    value = table[key]
    ok = isinstance(value, kind) and not isinstance(value, bool)
    if ok and low is not None and not low <= value <= high:
        ok = False
    if not ok:
        expected = f"from {low:g} to {high:g}" if low is not None else kind.__name__ if isinstance(kind, type) else "a number"
        raise InputError(f"{path}: [{section}] {key}: expected {expected}, got {value!r}")
    return value


def _warn_unknown(path: Path, document: dict) -> None:
    for section, value in document.items():
        if section not in KNOWN:
            log.warning("%s: unknown table [%s] ignored", path, section)
        elif KNOWN[section] is not None and isinstance(value, dict):
            for key in sorted(set(value) - KNOWN[section]):
                log.warning("%s: [%s] unknown key %r ignored", path, section, key)


def _weather(path: Path, document: dict, sites: tuple[str, ...]) -> dict:
    table = document.get("weather", {})
    fractions = {}
    for site in sites:
        values = table.get(site, {}).get("clear_fraction") if isinstance(table.get(site), dict) else None
        if values is None:
            raise InputError(f"{path}: [weather.{site}] clear_fraction: required, 12 monthly fractions (Jan..Dec)")
        if (not isinstance(values, list) or len(values) != MONTHS
                or not all(isinstance(v, (int, float)) and not isinstance(v, bool) and 0 <= v <= 1 for v in values)):
            raise InputError(f"{path}: [weather.{site}] clear_fraction: expected 12 numbers from 0 to 1, got {values!r}")
        fractions[site] = tuple(float(v) for v in values)
    return fractions


def _instrument(path: Path, table: dict) -> Instrument:
    number = (int, float)
    try:
        return Instrument(
            aperture_m=float(_get(path, table, "instrument", "aperture_m", number, 0.01, 100.0)),
            central_obstruction=float(_get(path, table, "instrument", "central_obstruction", number, 0.0, 0.99, 0.0)),
            throughput=float(_get(path, table, "instrument", "throughput", number, 1e-6, 1.0)),
            wavelength_min_um=float(_get(path, table, "instrument", "wavelength_min_um", number, 0.1, 30.0)),
            wavelength_max_um=float(_get(path, table, "instrument", "wavelength_max_um", number, 0.1, 30.0)),
            noise_floor_ppm=float(_get(path, table, "instrument", "noise_floor_ppm", number, 0.0, 1e5, 0.0)),
        )
    except InputError as exc:
        message = str(exc)
        raise InputError(message if message.startswith(str(path)) else f"{path}: [instrument] {message}") from None


def _start(path: Path, text) -> Time:
    try:
        return Time(str(text), scale="utc")
    except ValueError:
        raise InputError(f"{path}: [campaign] start: expected a UTC date such as 2027-01-01, got {text!r}") from None


def read_campaign(path: str | Path) -> CampaignSpec:
    """Read a campaign TOML file (see configs/campaign.example.toml for every key)."""
    path = Path(path)
    document = _load_toml(path)
    _warn_unknown(path, document)
    c = document.get("campaign")
    if not isinstance(c, dict):
        raise InputError(f"{path}: [campaign] table missing")
    sites = tuple(_get(path, c, "campaign", "sites", list))
    if not sites or not all(isinstance(s, str) for s in sites):
        raise InputError(f"{path}: [campaign] sites: expected a list of site names, got {sites!r}")
    coverage = tuple(_get(path, c, "campaign", "coverage", list, default=["full"]))
    bad = [k for k in coverage if k not in COVERAGE_CLASSES[:-1]]
    if bad or not coverage:
        raise InputError(f"{path}: [campaign] coverage: expected some of full, ingress, egress, partial; got {coverage!r}")
    allocation = document.get("allocation", {})
    goal = document.get("goal", {})
    return CampaignSpec(
        start=_start(path, _get(path, c, "campaign", "start", str)),
        horizon_years=float(_get(path, c, "campaign", "horizon_years", (int, float), 0.1, 200.0, 30)),
        targets_file=path.parent / _get(path, c, "campaign", "targets", str),
        sites_file=path.parent / _get(path, c, "campaign", "sites_file", str),
        site_names=sites,
        clear_fraction=_weather(path, document, sites),
        instrument=_instrument(path, document.get("instrument", {})),
        goal_resolution=float(_get(path, goal, "goal", "resolution", (int, float), 1.0, 1e6)),
        goal_snr=float(_get(path, goal, "goal", "snr", (int, float), 0.1, 1e4)),
        trials=int(_get(path, c, "campaign", "trials", int, 1, 100_000, 200)),
        seed=int(_get(path, c, "campaign", "seed", int, 0, 2**63 - 1, 0)),
        coverage=coverage,
        min_fraction=float(_get(path, c, "campaign", "min_fraction", (int, float), 0.0, 1.0, 0.0)),
        per_target_per_semester=_get(path, allocation, "allocation", "per_target_per_semester", int, 0, 10_000, None),
        per_site_per_semester=_get(path, allocation, "allocation", "per_site_per_semester", int, 0, 100_000, None),
        overhead_h=float(_get(path, allocation, "allocation", "overhead_h", (int, float), 0.0, 24.0, 0.0)),
        constraints={k: c[k] for k in ("min_altitude_deg", "twilight", "baseline_h", "sigma_k", "moon_sep_deg") if k in c},
    )
