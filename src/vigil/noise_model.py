"""Settings of a visit's noise budget, with the documented defaults for ground and space.

Every term can be switched off: ``comparison_mag_delta = None`` (no comparison star, as from
space), ``extinction = False``, ``scintillation_factor = 0``, ``sky_area_arcsec2 = 0``,
``read_noise_e = 0``, ``red_noise_ppm = 0``, ``trapezoid = False``, ``readout_s = 0`` (duty
cycle 1) and ``excluded_um = ()``. With all of them off only the photon noise of the target
remains, as in vigil before the budget existed.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

from vigil.errors import ArgumentError

#: Telluric bands left out of ground-based spectra by default (um): O2 B and A, and the water
#: bands between the near-infrared windows (common practice, no source).
TELLURIC_BANDS_UM = ((0.686, 0.695), (0.758, 0.770), (0.93, 0.97), (1.11, 1.16), (1.33, 1.49), (1.79, 1.97),
                     (2.50, 2.90))


@dataclass(frozen=True)
class NoiseModel:
    """Noise settings of an instrument (units in the names; see the module docstring).

    ``comparison_mag_delta``: comparison star's magnitude minus the target's (0: as bright;
    None: no comparison). ``scintillation_factor``: multiplier of Young's estimate.
    ``sky_area_arcsec2``: sky area in the extraction aperture (slit width x extraction height).
    ``spatial_pixels`` x ``spectral_pixels_per_um`` x bin width: pixels read per bin.
    ``red_noise_ppm``: systematics of one visit in one bin, independent between visits.
    ``impact_parameter``: assumed when a target does not give one (trapezoid shape).
    """

    exposure_s: float = 60.0
    readout_s: float = 20.0
    comparison_mag_delta: float | None = 0.0
    extinction: bool = True
    scintillation_factor: float = 1.5
    sky_area_arcsec2: float = 40.0
    read_noise_e: float = 5.0
    spatial_pixels: float = 20.0
    spectral_pixels_per_um: float = 4000.0
    red_noise_ppm: float = 100.0
    trapezoid: bool = True
    impact_parameter: float = 0.5
    excluded_um: tuple[tuple[float, float], ...] = TELLURIC_BANDS_UM

    def __post_init__(self) -> None:
        for name, (low, high) in RANGES.items():
            value = getattr(self, name)
            if name == "comparison_mag_delta" and value is None:
                continue
            if not (isinstance(value, numbers.Real) and not isinstance(value, bool) and math.isfinite(value)
                    and low <= value <= high):
                extra = " or None (no comparison star; false in a campaign file)" if name == "comparison_mag_delta" else ""
                raise ArgumentError(name, f"expected a number from {low:g} to {high:g}{extra}, got {value!r}")
        for name in SWITCHES:
            if not isinstance(getattr(self, name), bool):
                raise ArgumentError(name, f"expected true or false, got {getattr(self, name)!r}")
        object.__setattr__(self, "excluded_um", _bands(self.excluded_um))


def _bands(value) -> tuple[tuple[float, float], ...]:
    """Excluded wavelength bands as (low_um, high_um) pairs with 0 < low < high."""
    ok = isinstance(value, (list, tuple)) and all(
        isinstance(pair, (list, tuple)) and len(pair) == 2
        and all(isinstance(v, numbers.Real) and not isinstance(v, bool) for v in pair) and 0 < pair[0] < pair[1]
        for pair in value)
    if not ok:
        raise ArgumentError("excluded_um", f"expected a list of [low_um, high_um] pairs with 0 < low < high, got {value!r}")
    return tuple((float(low), float(high)) for low, high in value)


#: The numeric settings' (low, high): wide limits of real instruments (common practice, no source).
RANGES = {"exposure_s": (0.001, 1e5), "readout_s": (0.0, 1e4), "comparison_mag_delta": (-10.0, 10.0),
          "scintillation_factor": (0.0, 100.0), "sky_area_arcsec2": (0.0, 1e5), "read_noise_e": (0.0, 1e4),
          "spatial_pixels": (0.0, 1e5), "spectral_pixels_per_um": (0.0, 1e7), "red_noise_ppm": (0.0, 1e5),
          "impact_parameter": (0.0, 0.999)}
SWITCHES = ("extinction", "trapezoid")


#: Ground default: a spectrograph with a wide slit (10" x 4" extraction), a comparison star as
#: bright as the target, 60 s exposures read in 20 s, 5 e- read noise, 20 spatial pixels and
#: 4000 pixels per um (about 2.5 A per pixel), Young's scintillation x 1.5 (Osborn et al. 2015),
#: 100 ppm of systematics per bin and visit, b = 0.5 (the mean impact parameter of transiting
#: planets, b uniform on [0, 1)). Instrument values are vigil's assumptions for a typical
#: low-resolution spectrophotometer (common practice, no source): set your own.
GROUND = NoiseModel()
#: Space default: no comparison star, no atmosphere (no extinction, scintillation or telluric
#: bands), zodiacal and other sky left out, 60 s exposures read in 5 s, 10 e- read noise,
#: 30 ppm of systematics per bin and visit (vigil's assumptions, common practice, no source).
SPACE = NoiseModel(readout_s=5.0, comparison_mag_delta=None, extinction=False, scintillation_factor=0.0,
                   sky_area_arcsec2=0.0, read_noise_e=10.0, red_noise_ppm=30.0, excluded_um=())
#: Every extra term off: the photon noise of the target alone (the regression anchor).
PHOTON_ONLY = NoiseModel(readout_s=0.0, comparison_mag_delta=None, extinction=False, scintillation_factor=0.0,
                         sky_area_arcsec2=0.0, read_noise_e=0.0, red_noise_ppm=0.0, trapezoid=False, excluded_um=())
