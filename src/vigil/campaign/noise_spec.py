"""The campaign file's noise-budget keys: [instrument] noise settings and [scenarios.NAME]
atmospheres. Every problem is one InputError line naming the file and key.

``[instrument] kind = "ground" | "space"`` picks the documented defaults (noise_model.GROUND,
noise_model.SPACE) for the keys not given; a file without ``kind`` (written before the budget
existed) gets the defaults of its sites' kind, with a warning naming them.
"""

from __future__ import annotations

import logging
from dataclasses import replace
from pathlib import Path

from vigil import noise_model, scenarios
from vigil.errors import ArgumentError, InputError
from vigil.textfile import load_toml

log = logging.getLogger("vigil")

#: [instrument] keys of the noise budget: the NoiseModel's fields, checked by NoiseModel itself.
NOISE_KEYS = ("exposure_s", "readout_s", "comparison_mag_delta", "extinction", "scintillation_factor",
              "sky_area_arcsec2", "read_noise_e", "spatial_pixels", "spectral_pixels_per_um", "red_noise_ppm",
              "trapezoid", "impact_parameter", "excluded_um")
INSTRUMENT_KEYS = {"kind", *NOISE_KEYS}


def _sites_kind(sites_file: Path, names: tuple[str, ...]) -> str:
    """space when every named site is of kind space, else ground."""
    try:
        known = load_toml(sites_file).get("sites", {})
    except InputError:
        return "ground"
    kinds = {known.get(name, {}).get("kind", "ground") if isinstance(known.get(name), dict) else "ground"
             for name in names}
    return "space" if kinds == {"space"} else "ground"


def warn_assumed(path: Path, table: dict, noise: noise_model.NoiseModel) -> None:
    """Warn, naming them, when defaults were assumed for a file without [instrument] kind."""
    assumed = sorted(set(NOISE_KEYS) - set(table))
    if "kind" not in table and assumed:
        kind = "ground" if noise.comparison_mag_delta is not None or noise.extinction else "space"
        log.warning("%s: [instrument] kind not given: %s defaults assumed for %s (README, Noise budget)",
                    path, kind, ", ".join(assumed))


def read_noise(path: Path, table: dict, sites_file: Path, site_names: tuple[str, ...]) -> noise_model.NoiseModel:
    """The NoiseModel of an [instrument] table (module docstring)."""
    kind = table.get("kind")
    if kind is None:
        kind = _sites_kind(sites_file, site_names)
    if kind not in ("ground", "space"):
        raise InputError(f"{path}: [instrument] kind: expected \"ground\" or \"space\", got {kind!r}")
    base = noise_model.GROUND if kind == "ground" else noise_model.SPACE
    given = {key: table[key] for key in NOISE_KEYS if key in table}
    if given.get("comparison_mag_delta") is False:
        given["comparison_mag_delta"] = None  # TOML has no null: false means no comparison star
    try:
        return replace(base, **given)
    except ArgumentError as exc:
        raise InputError(f"{path}: [instrument] {exc}") from None


def read_scenarios(path: Path, document: dict) -> tuple[scenarios.Scenario, ...]:
    """[scenarios.NAME] tables with mu and n_scale_heights; the defaults when there are none."""
    table = document.get("scenarios")
    if table is None:
        return scenarios.DEFAULT_SCENARIOS
    if not isinstance(table, dict) or not table:
        raise InputError(f"{path}: [scenarios]: expected tables [scenarios.NAME] with mu and n_scale_heights")
    found = []
    for name, entry in table.items():
        if not isinstance(entry, dict) or set(entry) != {"mu", "n_scale_heights"}:
            raise InputError(f"{path}: [scenarios.{name}]: expected exactly mu and n_scale_heights, got {entry!r}")
        try:
            found.append(scenarios.Scenario(name, entry["mu"], entry["n_scale_heights"]))
        except InputError as exc:
            raise InputError(f"{path}: [scenarios.{name}] {str(exc).split(': ', 1)[1]}") from None
    return tuple(found)
