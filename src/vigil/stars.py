"""Photon flux of a dwarf star across wavelength, from its T_eff and real colours.

Shape. A blackbody at T_eff is too blue for cool dwarfs (by 0.4 mag in V - J at K7-M0 and
1.6 mag at M5). The star's spectrum is taken as the blackbody times ``exp(w(ln lambda))``,
``w`` piecewise linear in ln lambda through knots at the effective wavelengths of V, J and Ks
(``w_J = 0``; constant outside the outer knots), with the knots solved so that the synthetic
V - J and J - Ks through the bands' response curves equal the mean dwarf colour sequence at
T_eff (Pecaut & Mamajek 2013, interpolated linearly in T_eff; outside the table the correction
of its nearest end is applied to the star's own blackbody). Molecular bands inside a bin are
smoothed over, which is what a bin-averaged count needs.

Scale. To the star's magnitude through its band's response (``passbands.vega_magnitude``), or
by ``(R_* / d)^2`` when a distance is given (the blackbody's J-band flux is kept).

A spectrum the observer supplies (``star_spectra``) replaces the model: ``flux_on_grid`` puts
its samples on the same grid and ``scaled_to_magnitude`` scales it as the model is scaled.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
from astropy import constants as const
from astropy import units as u

from vigil import passbands

_H_J_S = const.h.si.value
_C_M_S = const.c.si.value
_K_B_J_K = const.k_B.si.value
_R_SUN_M = const.R_sun.si.value
_PC_M = u.pc.to(u.m)
_M_PER_UM = 1e-6

#: Wavelength grid (um) on which spectra are built and from which bins are interpolated.
GRID_UM = np.geomspace(0.1, 30.0, 4000)

#: Mean dwarf sequence: (spectral type, T_eff K, M_V, M_J, M_Ks), Vega magnitudes; Pecaut &
#: Mamajek 2013, ApJS 208, 9, Table 5, in E. Mamajek's maintained version "A Modern Mean Dwarf
#: Stellar Color and Effective Temperature Sequence" (2024.05.15).
MEAN_DWARF_SEQUENCE = (
    ("F9V", 6050.0, 4.25, 3.21, 2.915), ("G2V", 5770.0, 4.80, 3.60, 3.236), ("G8V", 5480.0, 5.30, 3.96, 3.532),
    ("K0V", 5290.0, 5.78, 4.31, 3.827), ("K3V", 4870.0, 6.53, 4.78, 4.100), ("K5V", 4440.0, 7.28, 5.10, 4.397),
    ("K7V", 4090.0, 8.20, 5.59, 4.81), ("M0V", 3850.0, 8.80, 5.97, 5.15), ("M2V", 3560.0, 10.21, 6.81, 5.98),
    ("M3V", 3430.0, 11.15, 7.38, 6.55), ("M4V", 3210.0, 12.61, 8.20, 7.36), ("M5V", 3060.0, 14.15, 9.09, 8.20),
)
_KNOT_BANDS = ("V", "J", "Ks")
_SOLVE_STEPS = 30
_SOLVE_TOLERANCE_MAG = 1e-4


def sequence_colours(teff_k: float) -> tuple[float, float]:
    """(V - J, J - Ks) of the mean dwarf sequence at ``teff_k``, interpolated linearly in
    T_eff and held at the table's ends (3060-6050 K).

    Examples
    --------
    >>> [round(c, 2) for c in sequence_colours(5770.0)]
    [1.2, 0.36]
    """
    rows = sorted(MEAN_DWARF_SEQUENCE, key=lambda row: row[1])
    teff, v, j, ks = (np.array([row[i] for row in rows]) for i in range(1, 5))
    return float(np.interp(teff_k, teff, v - j)), float(np.interp(teff_k, teff, j - ks))


def blackbody_surface_flux_w_m2_um(wavelength_um, teff_k: float) -> np.ndarray:
    """Energy flux per unit wavelength leaving a blackbody surface, pi B_lambda (W m^-2 um^-1).

    Examples
    --------
    >>> f"{float(blackbody_surface_flux_w_m2_um(0.5, 5772.0)):.3e}"
    '8.243e+07'
    """
    wavelength_m = np.asarray(wavelength_um, dtype=float) * _M_PER_UM
    x = _H_J_S * _C_M_S / (wavelength_m * _K_B_J_K * teff_k)
    with np.errstate(over="ignore"):
        per_m = 2.0 * np.pi * _H_J_S * _C_M_S**2 / wavelength_m**5 / np.expm1(x)
    return per_m * _M_PER_UM


def _warp(knots: np.ndarray) -> np.ndarray:
    """exp(w) on GRID_UM for knot values at the knot bands' effective wavelengths."""
    at_um = [passbands.band(b).response.effective_wavelength.to_value(u.um) for b in _KNOT_BANDS]
    return np.exp(np.interp(np.log(GRID_UM), np.log(at_um), knots))


def _synthetic_colours(flux_w_m2_um: np.ndarray) -> np.ndarray:
    v, j, ks = (float(passbands.vega_magnitude(b, GRID_UM, flux_w_m2_um)) for b in _KNOT_BANDS)
    return np.array([v - j, j - ks])


@lru_cache(maxsize=256)
def colour_knots(teff_k: float) -> tuple[float, float, float]:
    """Knot values (w_V, w_J = 0, w_Ks) making the warped blackbody's V - J and J - Ks equal the
    mean dwarf sequence at ``teff_k`` (held at the table's ends); a damped fixed-point solve.

    Examples
    --------
    >>> round(colour_knots(3210.0)[0], 1) < 0  # M4: much less visible light than a blackbody
    True
    """
    rows_teff = [row[1] for row in MEAN_DWARF_SEQUENCE]
    solve_teff = float(np.clip(teff_k, min(rows_teff), max(rows_teff)))
    wanted = np.array(sequence_colours(solve_teff))
    blackbody = blackbody_surface_flux_w_m2_um(GRID_UM, solve_teff)
    knots = np.zeros(3)
    for _ in range(_SOLVE_STEPS):
        miss = wanted - _synthetic_colours(blackbody * _warp(knots))
        if np.all(np.abs(miss) < _SOLVE_TOLERANCE_MAG):
            break
        knots += 0.4 * np.log(10.0) * np.array([-miss[0], 0.0, miss[1]])  # redder V - J: less V
    return float(knots[0]), float(knots[1]), float(knots[2])


def surface_flux_w_m2_um(teff_k: float) -> np.ndarray:
    """Energy flux per unit wavelength leaving the star's surface on GRID_UM (W m^-2 um^-1):
    the blackbody with the colour correction of the module docstring."""
    return blackbody_surface_flux_w_m2_um(GRID_UM, teff_k) * _warp(np.array(colour_knots(float(teff_k))))


def flux_at_earth_w_m2_um(teff_k: float, radius_sun: float, magnitude: float | None = None,
                          band: str | None = None, distance_pc: float | None = None) -> np.ndarray:
    """F_lambda above the atmosphere on GRID_UM (W m^-2 um^-1), scaled to ``magnitude`` in
    ``band`` through the band's response, or by (R_* / d)^2 with ``distance_pc``.

    Examples
    --------
    >>> from vigil import passbands
    >>> flux = flux_at_earth_w_m2_um(3850.0, 0.59, magnitude=9.0, band="J")
    >>> round(float(passbands.vega_magnitude("J", GRID_UM, flux)), 3)
    9.0
    """
    surface = surface_flux_w_m2_um(teff_k)
    if distance_pc is not None:
        return surface * (radius_sun * _R_SUN_M / (distance_pc * _PC_M)) ** 2
    return scaled_to_magnitude(GRID_UM, surface, magnitude, band)


def scaled_to_magnitude(wavelength_um: np.ndarray, flux_w_m2_um: np.ndarray, magnitude: float,
                        band: str) -> np.ndarray:
    """``flux_w_m2_um`` (F_lambda at ``wavelength_um``, any scale) times the factor that gives it
    ``magnitude`` in ``band`` through the band's response (``passbands.vega_magnitude``); the
    samples must cover the band.

    Examples
    --------
    >>> w = np.geomspace(0.3, 3.0, 2000)
    >>> scaled = scaled_to_magnitude(w, np.ones(w.size), 5.0, "V")
    >>> round(float(passbands.vega_magnitude("V", w, scaled)), 6)
    5.0
    """
    unscaled = float(passbands.vega_magnitude(band, wavelength_um, flux_w_m2_um))
    return flux_w_m2_um * 10.0 ** (-0.4 * (magnitude - unscaled))


def flux_on_grid(wavelength_um: np.ndarray, flux_w_m2_um: np.ndarray) -> np.ndarray:
    """F_lambda on GRID_UM (W m^-2 um^-1) from samples at strictly increasing ``wavelength_um``.

    Each grid point inside the samples takes the mean, over its cell (bounded by the geometric
    midpoints to its neighbours and by the samples' ends), of the samples' linear interpolant:
    lines narrower than a cell are averaged, never aliased. The grid point just beyond each end
    takes that end's sample, so every wavelength inside the samples interpolates from them
    alone; farther out the flux is NaN (nothing is extrapolated).

    Examples
    --------
    >>> flux = flux_on_grid(np.array([0.5, 1.0]), np.array([2.0, 2.0]))
    >>> bool(np.allclose(flux[(GRID_UM >= 0.5) & (GRID_UM <= 1.0)], 2.0)), int(np.isfinite(flux).sum())
    (True, 488)
    """
    w, f = np.asarray(wavelength_um, dtype=float), np.asarray(flux_w_m2_um, dtype=float)
    edges = np.sqrt(GRID_UM[:-1] * GRID_UM[1:])
    low = np.clip(np.concatenate([[GRID_UM[0]], edges]), w[0], w[-1])
    high = np.clip(np.concatenate([edges, [GRID_UM[-1]]]), w[0], w[-1])
    cumulative = np.concatenate([[0.0], np.cumsum(np.diff(w) * (f[1:] + f[:-1]) / 2.0)])

    def integral_to(x):
        k = np.clip(np.searchsorted(w, x, side="right") - 1, 0, w.size - 2)
        return cumulative[k] + (x - w[k]) * (f[k] + np.interp(x, w, f)) / 2.0

    out = np.full(GRID_UM.size, np.nan)
    inside = (GRID_UM >= w[0]) & (GRID_UM <= w[-1])
    out[inside] = (integral_to(high[inside]) - integral_to(low[inside])) / (high[inside] - low[inside])
    below, above = np.searchsorted(GRID_UM, w[0]) - 1, np.searchsorted(GRID_UM, w[-1], side="right")
    if below >= 0:
        out[below] = f[0]
    if above < GRID_UM.size:
        out[above] = f[-1]
    return out


def photons_per_joule(wavelength_um):
    """Photons per joule at ``wavelength_um``, lambda / (h c).

    Examples
    --------
    >>> f"{float(photons_per_joule(1.0)):.4e}"
    '5.0341e+18'
    """
    return np.asarray(wavelength_um, dtype=float) * _M_PER_UM / (_H_J_S * _C_M_S)


def photon_flux(flux_w_m2_um: np.ndarray, wavelength_um) -> np.ndarray:
    """Photons s^-1 m^-2 um^-1 at ``wavelength_um`` from F_lambda on GRID_UM (interpolated
    in log-log).

    Examples
    --------
    >>> flat = np.full(GRID_UM.size, 1.0)
    >>> f"{float(photon_flux(flat, 1.0)):.4e}"
    '5.0341e+18'
    """
    wavelength_um = np.asarray(wavelength_um, dtype=float)
    energy = np.exp(np.interp(np.log(wavelength_um), np.log(GRID_UM), np.log(np.maximum(flux_w_m2_um, 1e-300))))
    return energy * photons_per_joule(wavelength_um)
