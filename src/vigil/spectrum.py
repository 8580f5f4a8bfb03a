"""Planet, star and instrument of a transmission-spectrum forecast, and the feature size.

Feature amplitude: an atmosphere of scale height ``H = k_B T / (mu m_u g)`` adds an annulus
``n_H`` scale heights deep to the planet's silhouette, changing the transit depth by
``delta = 2 n_H H R_p / R_*^2`` (dimensionless; first order in ``H / R_p``), taken as the same
at every wavelength: it is the size of a typical molecular band. mu and n_H come from an
atmosphere scenario (``scenarios``); the star's light from ``stars``; the noise of a visit from
``visit_budget``.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np
from astropy import constants as const

from vigil import passbands
from vigil.errors import ArgumentError, InputError
from vigil.textfile import number_in_range

_K_B_J_K = const.k_B.si.value
_M_U_KG = const.u.si.value
_G_SI = const.G.si.value
_R_EARTH_M = const.R_earth.si.value
_M_EARTH_KG = const.M_earth.si.value
_R_SUN_M = const.R_sun.si.value

#: Default feature amplitude in scale heights: a molecular band in a clear atmosphere spans a
#: few scale heights; 2 is a modest choice (common practice, no source).
DEFAULT_N_SCALE_HEIGHTS = 2.0


def _is_finite_number(value) -> bool:
    return isinstance(value, numbers.Real) and not isinstance(value, bool) and math.isfinite(value)


def _require_positive(field: str, value: float) -> None:
    if not (_is_finite_number(value) and value > 0):
        raise InputError(f"{field}: expected a finite number > 0, got {value!r}")


def _require_array(field: str, value, minimum: float, strict: bool) -> np.ndarray:
    """Return ``value`` as a float array, raising InputError unless all entries are finite and
    above ``minimum`` (or at least ``minimum`` when not ``strict``)."""
    try:
        array = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{field}: expected a number or array of numbers, got {value!r}") from None
    above = array > minimum if strict else array >= minimum
    bad = ~(np.isfinite(array) & above)
    if np.any(bad):
        relation = ">" if strict else ">="
        raise InputError(f"{field}: expected finite values {relation} {minimum:g}, got {float(array[bad].flat[0])!r}")
    return array


@dataclass(frozen=True)
class Star:
    """Host star: radius (solar radii, IAU nominal 6.957e8 m), effective temperature (K) and
    brightness, given either as ``magnitude`` in ``band`` (V, J, H, Ks, G or TESS, see
    ``passbands``) or as ``distance_pc`` (radius and spectrum at that distance, see ``stars``).
    Give exactly one."""

    radius_sun: float
    teff_k: float
    magnitude: float | None = None
    band: str | None = None
    distance_pc: float | None = None

    def __post_init__(self) -> None:
        _require_positive("star radius_sun", self.radius_sun)
        _require_positive("star teff_k", self.teff_k)
        by_magnitude = self.magnitude is not None or self.band is not None
        if by_magnitude == (self.distance_pc is not None):
            raise InputError("star brightness: expected either magnitude and band, or distance_pc (exactly one)")
        if self.distance_pc is not None:
            _require_positive("star distance_pc", self.distance_pc)
            return
        if self.band not in passbands.bands():
            raise InputError(f"star band: expected one of {', '.join(passbands.bands())}, got {self.band!r}")
        if not _is_finite_number(self.magnitude):
            raise InputError(f"star magnitude: expected a finite number, got {self.magnitude!r}")


@dataclass(frozen=True)
class Planet:
    """Planet: radius (Earth radii, IAU nominal equatorial 6.3781e6 m); exactly one of
    ``mass_earth`` (Earth masses) or ``surface_gravity_m_s2``; exactly one of ``teq_k`` or
    ``a_over_rstar`` (orbital semi-major axis over stellar radius, T_eq then follows from the
    star); optional ``mu`` mean molecular weight (without it the atmosphere scenarios decide)
    and ``n_scale_heights`` feature amplitude in scale heights (default 2); optional
    ``impact_parameter`` in [0, 1) for the transit's shape."""

    radius_earth: float
    mass_earth: float | None = None
    surface_gravity_m_s2: float | None = None
    teq_k: float | None = None
    a_over_rstar: float | None = None
    mu: float | None = None
    n_scale_heights: float = DEFAULT_N_SCALE_HEIGHTS
    impact_parameter: float | None = None

    def __post_init__(self) -> None:
        _require_positive("planet radius_earth", self.radius_earth)
        if self.impact_parameter is not None and not (_is_finite_number(self.impact_parameter)
                                                      and 0 <= self.impact_parameter < 1):
            raise InputError(f"planet impact_parameter: expected a number from 0 to below 1, got {self.impact_parameter!r}")
        if (self.mass_earth is None) == (self.surface_gravity_m_s2 is None):
            raise InputError("planet: expected either mass_earth or surface_gravity_m_s2 (exactly one)")
        if (self.teq_k is None) == (self.a_over_rstar is None):
            raise InputError("planet: expected either teq_k or a_over_rstar (exactly one)")
        for field in ("mass_earth", "surface_gravity_m_s2", "teq_k", "mu"):
            if getattr(self, field) is not None:
                _require_positive(f"planet {field}", getattr(self, field))
        if self.a_over_rstar is not None and not (_is_finite_number(self.a_over_rstar) and self.a_over_rstar > 1):
            raise InputError(f"planet a_over_rstar: expected a finite number > 1, got {self.a_over_rstar!r}")
        _require_positive("planet n_scale_heights", self.n_scale_heights)


@dataclass(frozen=True)
class Instrument:
    """Telescope and spectrograph: aperture diameter (m), central obstruction as a fraction of
    the diameter in [0, 1), total throughput (photons detected per photon at the aperture) in
    (0, 1], wavelength range (um), and a systematic noise floor per spectral bin (ppm of the
    stellar flux, added in quadrature, does not average down)."""

    aperture_m: float
    central_obstruction: float
    throughput: float
    wavelength_min_um: float
    wavelength_max_um: float
    noise_floor_ppm: float = 0.0

    def __post_init__(self) -> None:
        for field, (low, high, unit) in INSTRUMENT_RANGES.items():
            try:
                number_in_range(field, getattr(self, field), low, high, unit)
            except InputError as exc:
                raise ArgumentError(field, str(exc).split(": ", 1)[1]) from None
        if self.wavelength_max_um <= self.wavelength_min_um:
            raise ArgumentError("wavelength_max_um", f"expected > wavelength_min_um, got {self.wavelength_max_um!r} "
                                                     f"<= {self.wavelength_min_um!r}")


#: Instrument fields: the (low, high, unit) a value must lie in (wide limits of real instruments,
#: common practice, no source); bad values are an ArgumentError naming the field.
INSTRUMENT_RANGES = {"aperture_m": (0.01, 100.0, "m"), "central_obstruction": (0.0, 0.99, ""),
                     "throughput": (1e-6, 1.0, ""), "wavelength_min_um": (0.1, 30.0, "um"),
                     "wavelength_max_um": (0.1, 30.0, "um"), "noise_floor_ppm": (0.0, 1e5, "ppm")}


# --- planet and atmosphere ---------------------------------------------------------------


def surface_gravity_m_s2(planet: Planet) -> float:
    """Surface gravity g = G M_p / R_p^2 (m s^-2), or the given value."""
    if planet.surface_gravity_m_s2 is not None:
        return float(planet.surface_gravity_m_s2)
    radius_m = planet.radius_earth * _R_EARTH_M
    return _G_SI * planet.mass_earth * _M_EARTH_KG / radius_m**2


def equilibrium_temperature_k(planet: Planet, star: Star) -> float:
    """Equilibrium temperature (K): the given value, or T_eq = T_eff sqrt(R_* / (2 a)),
    i.e. zero Bond albedo and full day-night heat redistribution."""
    if planet.teq_k is not None:
        return float(planet.teq_k)
    return star.teff_k * math.sqrt(1.0 / (2.0 * planet.a_over_rstar))


def scale_height_m(temperature_k, mu, gravity_m_s2):
    """Isothermal scale height H = k_B T / (mu m_u g) in metres (numpy-vectorised)."""
    temperature_k = _require_array("temperature_k", temperature_k, 0.0, strict=True)
    mu = _require_array("mu", mu, 0.0, strict=True)
    gravity_m_s2 = _require_array("gravity_m_s2", gravity_m_s2, 0.0, strict=True)
    return _K_B_J_K * temperature_k / (mu * _M_U_KG * gravity_m_s2)


def _mean_molecular_weight(planet: Planet) -> float:
    if planet.mu is None:
        raise InputError("planet mu: needed for a feature depth; give it or use an atmosphere scenario")
    return float(planet.mu)


def feature_depth(planet: Planet, star: Star) -> float:
    """Transit-depth change of a spectral feature, delta = 2 n_H H R_p / R_*^2 (dimensionless),
    with H at the planet's equilibrium temperature."""
    height_m = scale_height_m(
        equilibrium_temperature_k(planet, star), _mean_molecular_weight(planet), surface_gravity_m_s2(planet)
    )
    radius_planet_m = planet.radius_earth * _R_EARTH_M
    radius_star_m = star.radius_sun * _R_SUN_M
    return float(2.0 * planet.n_scale_heights * height_m * radius_planet_m / radius_star_m**2)


# --- counts and noise --------------------------------------------------------------------


def collecting_area_m2(instrument: Instrument) -> float:
    """Unobstructed collecting area pi/4 D^2 (1 - obstruction^2) in m^2."""
    return math.pi / 4.0 * instrument.aperture_m**2 * (1.0 - instrument.central_obstruction**2)
