"""A stellar spectrum the observer supplies for a target, used instead of the built-in model.

The file (named by the targets column ``star_spectrum_file``) has a wavelength column and a
flux column; other columns are ignored. Either

* ECSV: columns ``wavelength`` and ``flux`` with their units in the header, or
* CSV (``#`` comment lines allowed): the units in the column names, ``wavelength_<unit>`` and
  ``flux_<unit>``, the unit's parts joined by ``_`` with everything after the first part
  dividing: ``wavelength_um``, ``wavelength_a``, ``flux_erg_s_cm2_a`` (erg s^-1 cm^-2 A^-1),
  ``flux_w_m2_um``, ``flux_w_m2_hz``, ``flux_jy``, ``flux_photons_s_cm2_a``.

Wavelengths in any length unit, strictly increasing; flux density per unit wavelength or per
unit frequency, in energy or photons, finite and not negative (converted with astropy's
``spectral_density`` equivalencies). Only the shape matters: the flux is scaled to the
target's catalogue magnitude through the band's response, as the built-in model is
(``stars.scaled_to_magnitude``), so the spectrum must cover the band, and the forecast's
wavelength range (``StarSpectrum.require_range``). Nothing is extrapolated. Columns of
uncertainties (``flux_err...``) are ignored like any other.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import astropy.units as u
import numpy as np
import pandas as pd

from vigil import passbands, stars
from vigil.spectrum import Instrument, Star
from vigil.errors import InputError
from vigil.table_formats import read_typed_table, table_format
from vigil.textfile import csv_number, line_of, read_csv, read_text

ROLES = ("wavelength", "flux")
_PER_WAVELENGTH = u.W / (u.m**2 * u.um)
#: The kinds of flux density accepted, each as a unit of its kind.
FLUX_KINDS = {
    "energy per wavelength": _PER_WAVELENGTH,
    "energy per frequency": u.W / (u.m**2 * u.Hz),
    "photons per wavelength": u.photon / (u.s * u.m**2 * u.um),
    "photons per frequency": u.photon / (u.s * u.m**2 * u.Hz),
}
#: The parts a unit in a CSV column name is built from.
NAME_UNITS = {
    "a": u.AA, "angstrom": u.AA, "nm": u.nm, "um": u.um, "mm": u.mm, "cm": u.cm, "m": u.m, "hz": u.Hz,
    "s": u.s, "cm2": u.cm**2, "m2": u.m**2, "erg": u.erg, "w": u.W, "j": u.J, "photons": u.photon,
    "jy": u.Jy, "mjy": u.mJy,
}


@dataclass(frozen=True)
class StarSpectrum:
    """A spectrum as read: F_lambda (W m^-2 um^-1, the file's own scale) at strictly increasing
    wavelengths (um)."""

    path: Path
    wavelength_um: np.ndarray
    flux_w_m2_um: np.ndarray

    def require_range(self, low_um: float, high_um: float, needed_for: str) -> None:
        """A one-line InputError naming the file and what is missing unless the samples cover
        [``low_um``, ``high_um``]."""
        first, last = float(self.wavelength_um[0]), float(self.wavelength_um[-1])
        missing = [f"{a:.4g}-{b:.4g} um" for a, b in ((low_um, min(first, high_um)), (max(last, low_um), high_um))
                   if b > a]
        if missing:
            raise InputError(f"{self.path}: the spectrum covers {first:.4g}-{last:.4g} um; {needed_for} needs "
                             f"{low_um:.4g}-{high_um:.4g} um (missing {' and '.join(missing)})")


def unit_from_name(column: str, where: str) -> u.UnitBase:
    """The unit a CSV column's name states after its role (``flux_erg_s_cm2_a``: erg / (s cm2 A)).

    Examples
    --------
    >>> unit_from_name("flux_erg_s_cm2_a", "spectrum.csv")
    Unit("erg / (Angstrom s cm2)")
    """
    parts = column.split("_")[1:]
    unknown = [p for p in parts if p.lower() not in NAME_UNITS]
    if not parts or unknown:
        raise InputError(f"{where}: column {column!r} states no unit vigil knows "
                         f"{'(' + repr(unknown[0]) + ') ' if unknown else ''}in its name; expected e.g. wavelength_um, "
                         f"wavelength_nm, wavelength_a, flux_erg_s_cm2_a, flux_w_m2_um, flux_jy, flux_photons_s_cm2_a "
                         f"(parts: {', '.join(NAME_UNITS)})")
    unit = NAME_UNITS[parts[0].lower()]
    for part in parts[1:]:
        unit = unit / NAME_UNITS[part.lower()]
    return unit


def _column(path: Path, header: str, columns, role: str) -> str:
    """The one column of ``role`` (its uncertainty columns, ``<role>_err...``, aside)."""
    found = [c for c in columns if c.lower() == role or (c.lower().startswith(role + "_")
                                                          and not c.lower().startswith(role + "_err"))]
    if len(found) != 1:
        got = f"{len(found)} ({', '.join(found)})" if found else "none"
        raise InputError(f"{line_of(path, header)}: expected one {role} column ({role}_<unit>, or {role} with a unit "
                         f"in an ECSV header), found {got}")
    return found[0]


def _unit(path: Path, header: str, column: str, stated) -> u.UnitBase:
    """The column's unit: stated in the file's header (ECSV), else in its name."""
    where = line_of(path, header)
    if stated is None:
        return unit_from_name(column, where)
    if isinstance(stated, u.UnrecognizedUnit):
        raise InputError(f"{where}: column {column!r} has unit {stated.name!r}, which is not a unit vigil knows")
    if "_" in column and stated != unit_from_name(column, where):
        raise InputError(f"{where}: column {column!r} states unit {stated} in the header, unlike its name")
    return stated


def _check_kinds(path: Path, header: str, columns: dict, units: dict) -> None:
    where = line_of(path, header)
    if units["wavelength"].physical_type != "length":
        raise InputError(f"{where}: column {columns['wavelength']!r} is in {units['wavelength']}, not a length; "
                         "expected wavelengths (um, nm, Angstrom, ...)")
    if not any(units["flux"].is_equivalent(kind) for kind in FLUX_KINDS.values()):
        raise InputError(f"{where}: column {columns['flux']!r} is in {str(units['flux']) or 'no unit'}, not a flux density; "
                         f"expected one of: {', '.join(f'{k} (e.g. {v})' for k, v in FLUX_KINDS.items())}")


def _numbers(path: Path, cells, column: str, expected: str) -> np.ndarray:
    """The column as finite floats; the first cell that is not one is refused by csv_number."""
    values = pd.to_numeric(cells[column], errors="coerce").to_numpy(dtype=float)
    for i in np.flatnonzero(~np.isfinite(values)):
        values[i] = csv_number(path, cells.index[i], column, cells[column].iloc[i], expected)
    return values


def _ecsv_lines(path: Path, cells):
    """The ECSV's rows, labelled by their line in the file (one line per row after the header)."""
    lines = read_text(path).splitlines()
    names_line = next(i for i, text in enumerate(lines, start=1) if text.strip() and not text.startswith("#"))
    return cells.set_axis(range(names_line + 1, names_line + 1 + len(cells)))


def _cells(path: Path):
    """(header label, text cells by line, units stated in the file) of a CSV or ECSV file."""
    fmt = table_format(path)
    if fmt == "csv":
        header_line, cells = read_csv(path, "spectrum sample")
        return header_line, cells, {}
    if fmt != "ecsv":
        raise InputError(f"{path}: a star spectrum is read from ECSV (.ecsv) or CSV (.csv), not {fmt}")
    source = read_typed_table(path, fmt)
    return "header", _ecsv_lines(path, source.cells), source.units


def read_star_spectrum(path: str | Path) -> StarSpectrum:
    """Read and check a spectrum file (module docstring); F_lambda in W m^-2 um^-1.

    Examples
    --------
    >>> spectrum = read_star_spectrum("examples/star_spectrum.ecsv")  # doctest: +SKIP
    >>> spectrum.wavelength_um[:2], spectrum.flux_w_m2_um[:2]  # doctest: +SKIP
    """
    path = Path(path)
    header, cells, stated = _cells(path)
    columns = {role: _column(path, header, cells.columns, role) for role in ROLES}
    units = {role: _unit(path, header, columns[role], stated.get(columns[role])) for role in ROLES}
    _check_kinds(path, header, columns, units)
    if len(cells) < 2:
        raise InputError(f"{path}: one sample; expected a spectrum of at least two wavelengths")
    wavelength = _numbers(path, cells, columns["wavelength"], "a wavelength") * units["wavelength"]
    flux = _numbers(path, cells, columns["flux"], "a flux density")
    lines = cells.index
    step = np.flatnonzero(np.diff(wavelength.value) <= 0)
    if wavelength.value[0] <= 0 or step.size:
        at = 0 if wavelength.value[0] <= 0 else step[0] + 1
        raise InputError(f"{line_of(path, lines[at])}, field {columns['wavelength']}: {wavelength.value[at]:g} does "
                         f"not follow {'0' if at == 0 else f'{wavelength.value[at - 1]:g} (line {lines[at - 1]})'}; "
                         "expected strictly increasing wavelengths above 0")
    negative = np.flatnonzero(flux < 0)
    if negative.size:
        raise InputError(f"{line_of(path, lines[negative[0]])}, field {columns['flux']}: {flux[negative[0]]:g} is "
                         "negative; expected a flux density >= 0")
    flux_w_m2_um = (flux * units["flux"]).to_value(_PER_WAVELENGTH, equivalencies=u.spectral_density(wavelength))
    return StarSpectrum(path, wavelength.to_value(u.um), flux_w_m2_um)


@lru_cache(maxsize=32)
def _read_once(path: str, _modified_ns: int, _size: int) -> StarSpectrum:
    return read_star_spectrum(path)


def star_spectrum(path: str | Path) -> StarSpectrum:
    """``read_star_spectrum``, read again only when the file has changed (time and size)."""
    try:
        status = Path(path).stat()
    except OSError as exc:
        raise InputError(f"{path}: cannot read file ({exc.strerror})") from None
    return _read_once(str(path), status.st_mtime_ns, status.st_size)


def flux_at_earth_w_m2_um(path: str | Path, magnitude: float, band: str) -> np.ndarray:
    """F_lambda above the atmosphere on ``stars.GRID_UM`` (W m^-2 um^-1; NaN outside the
    file's range, see ``stars.flux_on_grid``), scaled to ``magnitude`` in ``band``.

    Examples
    --------
    >>> flux = flux_at_earth_w_m2_um("spectrum.ecsv", 9.1, "J")  # doctest: +SKIP
    """
    spectrum = star_spectrum(path)
    spectrum.require_range(*passbands.band_range_um(band), f"the normalising band {band}")
    on_grid = stars.flux_on_grid(spectrum.wavelength_um, spectrum.flux_w_m2_um)
    known = np.isfinite(on_grid)
    with np.errstate(divide="ignore", invalid="ignore"):  # no flux in the band: refused just below
        scaled = stars.scaled_to_magnitude(stars.GRID_UM[known], on_grid[known], magnitude, band)
    if not np.all(np.isfinite(scaled)):
        raise InputError(f"{spectrum.path}: no flux in the normalising band {band}; expected a spectrum of the star")
    on_grid[known] = scaled
    return on_grid


def star_light(path: str | Path, star: Star, instrument: Instrument) -> np.ndarray:
    """The star's F_lambda above the atmosphere on ``stars.GRID_UM`` from its spectrum file,
    scaled to its magnitude; refused unless the file covers the instrument's wavelength range.

    Examples
    --------
    >>> star = Star(radius_sun=0.6, teff_k=4100.0, magnitude=9.1, band="J")
    >>> flux = star_light("spectra/star.ecsv", star, instrument)  # doctest: +SKIP
    """
    if star.magnitude is None:
        raise InputError("the spectrum is scaled to the star's magnitude; expected magnitude and mag_band, "
                         "not distance_pc")
    flux = flux_at_earth_w_m2_um(path, star.magnitude, star.band)
    star_spectrum(path).require_range(instrument.wavelength_min_um, instrument.wavelength_max_um,
                                      "the forecast (the instrument's wavelength range)")
    return flux
