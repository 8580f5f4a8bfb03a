"""Photometric bands for stellar magnitudes: response curves and Vega-system zero points.

Response curves come from ``speclite`` (shipped with the package, no download): Johnson V as
``bessell-V``, 2MASS J, H, Ks as ``twomass-*``, Gaia G as ``gaiadr3-G``. TESS is not in
speclite: its response is approximated here by a flat top from 0.6 to 1.0 um (the published
passband edges, Ricker et al. 2015, JATIS 1, 014003; from memory) with 10 nm linear edges,
which ignores the detector's falling red response inside the band.

speclite integrates a spectrum through a band as photon counts (``int f_lambda lambda R
dlambda``) and gives AB magnitudes; catalogue magnitudes are Vega-system, so each band carries
the offset m_AB - m_Vega.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import speclite.filters
from astropy import units as u

from vigil.errors import InputError

#: Energy flux of a T = 0 star over the TESS band, erg s^-1 cm^-2 (Sullivan et al. 2015,
#: ApJ 809, 77, section 6.1; from memory).
TESS_ZERO_FLUX_ERG_S_CM2 = 4.03e-6
_TESS_EDGES_UM = (0.6, 1.0)
_TESS_RAMP_UM = 0.01


@dataclass(frozen=True)
class Band:
    """A band: speclite response and the offset m_AB - m_Vega (mag) with its source."""

    name: str
    response: speclite.filters.FilterResponse
    ab_minus_vega_mag: float
    source: str


def _tess_response() -> speclite.filters.FilterResponse:
    low, high = _TESS_EDGES_UM
    edges_um = [low - _TESS_RAMP_UM, low, high, high + _TESS_RAMP_UM]
    return speclite.filters.FilterResponse(
        wavelength=np.array(edges_um) * u.um, response=np.array([0.0, 1.0, 1.0, 0.0]),
        meta={"group_name": "vigil", "band_name": "TESS"})


def _tess_ab_offset(response: speclite.filters.FilterResponse) -> float:
    """AB magnitude of a T = 0 star, taken as flat in f_lambda across the band at the
    Sullivan et al. (2015) zero flux divided by the band's width."""
    low, high = _TESS_EDGES_UM
    level = TESS_ZERO_FLUX_ERG_S_CM2 / ((high - low) * 1e4) * u.erg / (u.s * u.cm**2 * u.AA)
    wavelength = np.linspace(low - 2 * _TESS_RAMP_UM, high + 2 * _TESS_RAMP_UM, 200) * u.um
    return float(response.get_ab_magnitude(np.full(wavelength.shape, level.value) * level.unit, wavelength))


@lru_cache(maxsize=1)
def bands() -> dict[str, Band]:
    """Every supported band by name (V, J, H, Ks, G, TESS).

    Examples
    --------
    >>> sorted(bands())
    ['G', 'H', 'J', 'Ks', 'TESS', 'V']
    """
    blanton = "Blanton & Roweis 2007, AJ 133, 734, Table 1 (from memory)"
    load = speclite.filters.load_filter
    tess = _tess_response()
    return {
        "V": Band("V", load("bessell-V"), 0.02, blanton),
        "J": Band("J", load("twomass-J"), 0.91, blanton),
        "H": Band("H", load("twomass-H"), 1.39, blanton),
        "Ks": Band("Ks", load("twomass-Ks"), 1.85, blanton),
        "G": Band("G", load("gaiadr3-G"), 25.8010 - 25.6874,
                  "Gaia DR3 G zero points, AB 25.8010 and Vega 25.6874 (Riello et al. 2021, A&A 649, A3; from memory)"),
        "TESS": Band("TESS", tess, _tess_ab_offset(tess),
                     "flat in f_lambda at the T = 0 band flux of Sullivan et al. 2015 (approximation)"),
    }


def band(name: str) -> Band:
    """The band called ``name``; a one-line InputError naming the choices otherwise."""
    known = bands()
    if name not in known:
        raise InputError(f"band: expected one of {', '.join(known)}, got {name!r}")
    return known[name]


def vega_magnitude(name: str, wavelength_um: np.ndarray, flux_w_m2_um: np.ndarray) -> np.ndarray:
    """Vega-system magnitude in band ``name`` of spectra F_lambda (W m^-2 um^-1) sampled at
    ``wavelength_um`` (last axis), integrated through the band's response as photon counts.

    Examples
    --------
    >>> w = np.geomspace(0.3, 3.0, 2000)
    >>> round(float(vega_magnitude("V", w, np.full(w.size, 3.63e-8))), 2)
    -0.03
    """
    chosen = band(name)
    flux = np.asarray(flux_w_m2_um, dtype=float) * (u.W / (u.m**2 * u.um))
    ab = chosen.response.get_ab_magnitude(flux, np.asarray(wavelength_um, dtype=float) * u.um)
    return np.asarray(ab) - chosen.ab_minus_vega_mag


def band_range_um(name: str) -> tuple[float, float]:
    """(shortest, longest) wavelength (um) of band ``name``'s tabulated response: what a
    spectrum must cover to be integrated through it.

    Examples
    --------
    >>> [round(edge, 6) for edge in band_range_um("V")]
    [0.47, 0.7]
    """
    wavelength_um = band(name).response.wavelength * u.AA.to(u.um)
    return float(wavelength_um[0]), float(wavelength_um[-1])
