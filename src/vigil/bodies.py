"""Planet and star of each target, from the optional physical columns of the targets table.

Columns (units in the names): planet_radius_earth; planet_mass_earth or surface_gravity_m_s2;
teq_k, or a_over_rstar with star_teff_k; optional mu and n_scale_heights (a "catalog"
atmosphere scenario besides the campaign's, see scenarios.py), impact_parameter (transit
shape); star_radius_sun, star_teff_k; brightness as magnitude with mag_band (V, J, H, Ks, G or
TESS) or distance_pc; optional star_spectrum_file (the star's own spectrum, scaled to the
magnitude); optional priority (higher first).
"""

from __future__ import annotations

import math

import pandas as pd

from vigil import spectrum
from vigil.errors import InputError

REQUIRED = ("planet_radius_earth", "star_radius_sun", "star_teff_k")
#: The optional column naming a file with the star's own spectrum (star_spectra), relative to
#: the targets file (catalog.read_targets makes it a path from the working directory).
SPECTRUM_FILE_COLUMN = "star_spectrum_file"
OPTIONAL = ("planet_mass_earth", "surface_gravity_m_s2", "teq_k", "a_over_rstar", "mu", "n_scale_heights",
            "impact_parameter", "magnitude", "distance_pc")
#: Every numeric physical column; catalog.read_targets checks them where they are filled in.
NUMBER_COLUMNS = (*REQUIRED, *OPTIONAL, "priority")
#: Accepted range of each column (low, high, unit): wide bounds around what planets and their
#: host stars can be (common practice, no source), so unit slips and absurd values are refused
#: before any arithmetic can overflow or divide by zero.
RANGES = {
    "planet_radius_earth": (0.05, 50.0, "Earth radii"),
    "planet_mass_earth": (1e-4, 3e4, "Earth masses"),
    "surface_gravity_m_s2": (0.01, 1e4, "m/s^2"),
    "teq_k": (10.0, 6000.0, "K"),
    "a_over_rstar": (1.0, 1e5, "(semi-major axis over stellar radius)"),
    "mu": (1.0, 100.0, "(mean molecular weight, atomic mass units)"),
    "n_scale_heights": (0.1, 20.0, "(scale heights)"),
    "star_radius_sun": (0.005, 1000.0, "solar radii"),
    "star_teff_k": (500.0, 60000.0, "K"),
    "magnitude": (-5.0, 30.0, "(magnitudes)"),
    "distance_pc": (1.0, 1e5, "pc"),
    "priority": (-1e6, 1e6, "(higher first)"),
}
# The column behind each field name that spectrum.Planet and spectrum.Star report.
_COLUMN_OF_FIELD = {
    "planet radius_earth": "planet_radius_earth", "planet mass_earth": "planet_mass_earth",
    "planet surface_gravity_m_s2": "surface_gravity_m_s2", "planet teq_k": "teq_k", "planet mu": "mu",
    "planet a_over_rstar": "a_over_rstar", "planet n_scale_heights": "n_scale_heights",
    "planet impact_parameter": "impact_parameter",
    "star radius_sun": "star_radius_sun", "star teff_k": "star_teff_k", "star band": "mag_band",
    "star magnitude": "magnitude", "star distance_pc": "distance_pc",
}


def _optional(row: pd.Series, column: str, where: str):
    text = str(row.get(column, "")).strip()
    if text in ("", "nan"):
        return None
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not math.isfinite(value):
        raise InputError(f"{where}, field {column}: expected a number, got {text!r}")
    return value


def target_bodies(row: pd.Series, where: str) -> tuple[spectrum.Planet, spectrum.Star]:
    """Planet and Star for one targets row; `where` names the file and line for errors."""
    values = {c: _optional(row, c, where) for c in (*REQUIRED, *OPTIONAL)}
    missing = [c for c in REQUIRED if values[c] is None]
    if missing:
        raise InputError(f"{where}, field {missing[0]}: target {row['name']!r} needs {', '.join(missing)} "
                         "(numbers, units as in the column names) for a spectrum forecast")
    band = str(row.get("mag_band", "")).strip() or None
    try:
        planet = spectrum.Planet(
            radius_earth=values["planet_radius_earth"], mass_earth=values["planet_mass_earth"],
            surface_gravity_m_s2=values["surface_gravity_m_s2"], teq_k=values["teq_k"],
            a_over_rstar=values["a_over_rstar"], mu=values["mu"], impact_parameter=values["impact_parameter"],
            **({"n_scale_heights": values["n_scale_heights"]} if values["n_scale_heights"] is not None else {}))
        star = spectrum.Star(radius_sun=values["star_radius_sun"], teff_k=values["star_teff_k"],
                             magnitude=values["magnitude"], band=band, distance_pc=values["distance_pc"])
    except InputError as exc:
        field, _, problem = str(exc).partition(": ")
        column = _COLUMN_OF_FIELD.get(field)
        if column is None:
            raise InputError(f"{where}: target {row['name']!r}: {exc}") from None
        raise InputError(f"{where}, field {column}: target {row['name']!r}: {problem}") from None
    return planet, star


def spectrum_file_of(row: pd.Series) -> str | None:
    """The row's star_spectrum_file (a path), or None when the cell is absent or empty."""
    text = str(row.get(SPECTRUM_FILE_COLUMN, "")).strip()
    return None if text in ("", "nan", "None") else text


def priority_of(row: pd.Series, where: str) -> float:
    """User priority (higher is scheduled first); 0 when absent."""
    value = _optional(row, "priority", where)
    return 0.0 if value is None else value
