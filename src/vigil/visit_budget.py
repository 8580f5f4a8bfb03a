"""Variance of a transit depth in one spectral bin from one visit, term by term.

For a bin of width lambda / R, a visit with effective in-transit time t_in and baseline t_out
(seconds) measures the depth with variance ``sum_terms rate_term (1/t_in + 1/t_out)`` plus
its red noise. With N the target's detected photons per second in the bin (after extinction
and duty cycle), N_c the comparison star's, S the sky's, n the pixels read and sigma_read the
read noise, the rates are:

* photon_target ``1 / N``; photon_comparison ``1 / N_c``;
* sky ``S (1/N^2 + 1/N_c^2)``; read ``n sigma_read^2 / t_cycle (1/N^2 + 1/N_c^2)``
  (the comparison's share only when there is one);
* scintillation ``sigma_Y^2 t / duty`` for the target, and again for the comparison (their
  light crosses different turbulence); treated per bin, not removed by a white-light
  common-mode correction (conservative);
* red_noise: ``sigma_visit^2`` per visit, whatever its length.

N, S and n scale as 1/R, so the first four terms grow as R; scintillation and red noise do not.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from vigil import noise_terms, stars
from vigil.noise_model import NoiseModel
from vigil.spectrum import Instrument, collecting_area_m2

#: Terms whose variance grows as the resolution R, and those that do not depend on it.
PER_RESOLUTION_TERMS = ("photon_target", "photon_comparison", "sky", "read")
FLAT_TERMS = ("scintillation", "red_noise")
TERMS = (*PER_RESOLUTION_TERMS, *FLAT_TERMS)
_SECONDS_PER_HOUR = 3600.0


def inverse_times_s(visits: pd.DataFrame, in_transit_weight: float) -> np.ndarray:
    """1 / t_in + 1 / t_out (s^-1) per visit, t_in the in-transit hours times the trapezoid's
    ``in_transit_weight``; inf when either is zero (the visit measures nothing).

    Examples
    --------
    >>> inverse_times_s(pd.DataFrame({"in_transit_h": [1.0], "baseline_h": [1.0]}), 1.0) * 3600
    array([2.])
    """
    seconds_in = visits["in_transit_h"].to_numpy(dtype=float) * in_transit_weight * _SECONDS_PER_HOUR
    seconds_out = visits["baseline_h"].to_numpy(dtype=float) * _SECONDS_PER_HOUR
    with np.errstate(divide="ignore", over="ignore"):
        return 1.0 / seconds_in + 1.0 / seconds_out


def term_variances(flux_w_m2_um: np.ndarray, instrument: Instrument, noise: NoiseModel, visits: pd.DataFrame,
                   wavelength_um, resolution: float, in_transit_weight: float) -> dict[str, np.ndarray]:
    """Variance of the depth per term (module docstring), arrays (visits, wavelengths).

    ``visits`` needs in_transit_h, baseline_h, airmass, moon_illumination, moon_sep_deg,
    elevation_m and ground (bool: the atmosphere's terms apply; an unknown airmass counts as
    1, an unknown Moon as new), and may give moon_alt_deg (the Moon's altitude at mid-visit; an
    unknown one is noise_terms.MOON_ALTITUDE_DEG); ``flux_w_m2_um`` is the star's F_lambda on ``stars.GRID_UM``.

    Examples
    --------
    >>> from vigil.noise_model import PHOTON_ONLY
    >>> spec = Instrument(2.0, 0.0, 0.5, 0.5, 0.9)
    >>> visit = pd.DataFrame({"in_transit_h": [2.0], "baseline_h": [2.0], "airmass": [1.0],
    ...                       "moon_illumination": [0.0], "moon_sep_deg": [90.0], "elevation_m": [0.0],
    ...                       "ground": [True]})
    >>> flux = stars.flux_at_earth_w_m2_um(5770.0, 1.0, magnitude=10.0, band="V")
    >>> parts = term_variances(flux, spec, PHOTON_ONLY, visit, [0.7], 100.0, 1.0)
    >>> sorted(name for name, value in parts.items() if value.any())
    ['photon_target']
    """
    wavelength_um = np.asarray(wavelength_um, dtype=float)
    ground = visits["ground"].to_numpy(dtype=bool)[:, None]
    airmass = np.where(ground[:, 0], np.nan_to_num(visits["airmass"].to_numpy(dtype=float), nan=1.0), 0.0)
    duty = noise_terms.duty_cycle(noise.exposure_s, noise.readout_s)
    light = collecting_area_m2(instrument) * instrument.throughput * duty * wavelength_um / resolution
    transmission = noise_terms.atmospheric_transmission(wavelength_um[None, :], airmass[:, None]) \
        if noise.extinction else np.ones((len(visits), wavelength_um.size))
    target = stars.photon_flux(flux_w_m2_um, wavelength_um)[None, :] * light * transmission
    comparison = None if noise.comparison_mag_delta is None else target * 10.0 ** (-0.4 * noise.comparison_mag_delta)
    stars_factor = 1.0 / target**2 + (0.0 if comparison is None else 1.0 / comparison**2)
    sky = np.zeros_like(target)
    if noise.sky_area_arcsec2 > 0:
        sky = noise_terms.sky_photon_flux(wavelength_um, visits["moon_illumination"].fillna(0.0).to_numpy(),
                                          visits["moon_sep_deg"].fillna(90.0).to_numpy(), np.maximum(airmass, 1.0),
                                          _column_or_nan(visits, "moon_alt_deg"))
        sky = np.where(ground, sky * light * noise.sky_area_arcsec2, 0.0)
    pixels = noise.spatial_pixels * noise.spectral_pixels_per_um * wavelength_um / resolution
    read_rate = pixels * noise.read_noise_e**2 / (noise.exposure_s + noise.readout_s)
    scint = noise_terms.scintillation_variance_s(instrument.aperture_m, airmass, visits["elevation_m"].fillna(0.0),
                                                 noise.scintillation_factor) / duty
    scint = np.where(ground[:, 0], scint * (1.0 if comparison is None else 2.0), 0.0)
    per_time = inverse_times_s(visits, in_transit_weight)[:, None]
    shape = target.shape
    with np.errstate(over="ignore", invalid="ignore"):
        parts = {
            "photon_target": per_time / target,
            "photon_comparison": np.zeros(shape) if comparison is None else per_time / comparison,
            "sky": per_time * sky * stars_factor,
            "read": per_time * read_rate[None, :] * stars_factor,
            "scintillation": per_time * np.broadcast_to(scint[:, None], shape),
            "red_noise": np.full(shape, (noise.red_noise_ppm * 1e-6) ** 2),
        }
    measures_nothing = ~np.isfinite(per_time[:, 0])
    for values in parts.values():
        values[measures_nothing] = np.inf
    return parts


def variance_parts(flux_w_m2_um: np.ndarray, instrument: Instrument, noise: NoiseModel, visits: pd.DataFrame,
                   wavelength_um, in_transit_weight: float) -> tuple[np.ndarray, np.ndarray]:
    """(a, b) with a visit's depth variance ``a R + b`` at resolution R, arrays (visits,
    wavelengths): a from the terms that grow as R, b from the others.

    Examples
    --------
    >>> from vigil.noise_model import GROUND
    >>> spec = Instrument(2.0, 0.0, 0.5, 0.5, 0.9)
    >>> visit = pd.DataFrame({"in_transit_h": [2.0], "baseline_h": [2.0], "airmass": [1.2],
    ...                       "moon_illumination": [0.5], "moon_sep_deg": [60.0], "elevation_m": [2400.0],
    ...                       "ground": [True]})
    >>> flux = stars.flux_at_earth_w_m2_um(5770.0, 1.0, magnitude=10.0, band="V")
    >>> a, b = variance_parts(flux, spec, GROUND, visit, [0.6, 0.8], 1.0)
    >>> a.shape, bool((b > 0).all())
    ((1, 2), True)
    """
    parts = term_variances(flux_w_m2_um, instrument, noise, visits, wavelength_um, 1.0, in_transit_weight)
    return (sum(parts[name] for name in PER_RESOLUTION_TERMS), sum(parts[name] for name in FLAT_TERMS))


def _column_or_nan(visits: pd.DataFrame, column: str) -> np.ndarray:
    """An optional visits column as floats (NaN where unknown or absent)."""
    if column not in visits.columns:
        return np.full(len(visits), np.nan)
    return visits[column].to_numpy(dtype=float)
