"""Photon-noise model of a stacked transmission spectrum.

The model, in SI units throughout:

* Feature amplitude. An atmosphere of scale height ``H = k_B T / (mu m_u g)`` adds an annulus
  ``n_H`` scale heights deep to the planet's silhouette, changing the transit depth by
  ``delta = 2 n_H H R_p / R_*^2`` (dimensionless; first order in ``H / R_p``). ``delta`` is
  taken as the same at every wavelength: it is the size of a typical molecular band.
* Stellar photons. A blackbody of the star's T_eff gives the photon flux per unit wavelength,
  scaled to Earth either by ``(R_* / d)^2`` or so that its energy flux density at a band's
  effective wavelength matches the band's zero point times ``10^(-0.4 m)``.
* Counts per bin. A bin at wavelength ``lambda`` and resolution ``R`` is ``lambda / R`` wide;
  the flux is taken as constant across it. Counts in ``t`` seconds are
  ``N = Phi_lambda (lambda / R) A tau t`` with ``A`` the collecting area and ``tau`` the
  throughput. Write ``N = k t_h / R`` with ``k`` the counts per hour at unit resolution.
* Noise on the depth in one bin (relative, photon-limited, plus a systematic floor ``f`` in
  quadrature that does not average down): ``sigma^2 = 1/N_in + 1/N_out + f^2``. With
  ``t_c = t_in t_out / (t_in + t_out)`` (hours) this is ``sigma^2 = R / (k t_c) + f^2`` and
  ``SNR = delta / sigma``. The small loss of light during transit is ignored.
* Summary over the instrument's range. "The spectrum" reaches an SNR when its weakest bin does.
  Photons per unit ln(lambda) of a blackbody go as ``x^3 / (e^x - 1)`` with
  ``x = h c / (lambda k_B T)``, which has a single maximum, so the weakest bin of any range is
  at one of its ends: the summary uses ``k = min(k(lambda_min), k(lambda_max))``, and every
  bin inside the range does at least as well. The inversions below are then exact:
  ``R = k t_c (delta^2 / SNR^2 - f^2)`` and ``SNR <= delta / f`` at any R.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np
from astropy import constants as const
from astropy import units as u

from vigil.errors import InputError

_H_J_S = const.h.si.value
_C_M_S = const.c.si.value
_K_B_J_K = const.k_B.si.value
_M_U_KG = const.u.si.value
_G_SI = const.G.si.value
_R_EARTH_M = const.R_earth.si.value
_M_EARTH_KG = const.M_earth.si.value
_R_SUN_M = const.R_sun.si.value
_PC_M = u.pc.to(u.m)
_SECONDS_PER_HOUR = 3600.0
_M_PER_UM = 1e-6

#: Radius (Earth radii) at and above which the default atmosphere is H2/He-dominated.
#: Convention: Rogers (2015, ApJ 801, 41) finds most planets above about 1.6 R_earth are not
#: rocky (from memory).
H2_ATMOSPHERE_RADIUS_EARTH = 1.6
#: Default mean molecular weight below that radius: Earth air (N2/O2), standing for a
#: high-mean-molecular-weight secondary atmosphere (convention).
MU_SECONDARY = 28.97
#: Default mean molecular weight at and above that radius: solar H2/He mix (convention).
MU_H2_DOMINATED = 2.3
#: Default feature amplitude in scale heights: a molecular band in a clear atmosphere spans a
#: few scale heights; 2 is a modest choice (common practice, no source).
DEFAULT_N_SCALE_HEIGHTS = 2.0


@dataclass(frozen=True)
class PhotometricBand:
    """A photometric band's zero point: energy flux density of a magnitude-0 star.

    ``wavelength_eff_um`` is the effective (or isophotal) wavelength in micrometres;
    ``zero_point_w_m2_um`` is F_lambda at that wavelength in W m^-2 um^-1.
    """

    name: str
    wavelength_eff_um: float
    zero_point_w_m2_um: float
    source: str


#: Supported bands. 1e-11 erg cm^-2 s^-1 A^-1 = 1e-10 W m^-2 um^-1;
#: 1e-13 W cm^-2 um^-1 = 1e-9 W m^-2 um^-1.
BANDS: dict[str, PhotometricBand] = {
    "V": PhotometricBand(
        "V", 0.545, 3.631e-8, "Johnson V; Bessell, Castelli & Plez 1998, A&A 333, 231, Table A2 (from memory)"
    ),
    "J": PhotometricBand(
        "J", 1.235, 3.129e-9, "2MASS J; Cohen, Wheaton & Megeath 2003, AJ 126, 1090, Table 2 (from memory)"
    ),
    "H": PhotometricBand(
        "H", 1.662, 1.133e-9, "2MASS H; Cohen, Wheaton & Megeath 2003, AJ 126, 1090, Table 2 (from memory)"
    ),
    "Ks": PhotometricBand(
        "Ks", 2.159, 4.283e-10, "2MASS Ks; Cohen, Wheaton & Megeath 2003, AJ 126, 1090, Table 2 (from memory)"
    ),
}


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
    brightness, given either as ``magnitude`` in ``band`` (a key of ``BANDS``) or as
    ``distance_pc`` (blackbody of radius and T_eff at that distance). Give exactly one."""

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
        if self.band not in BANDS:
            raise InputError(f"star band: expected one of {', '.join(BANDS)}, got {self.band!r}")
        if not _is_finite_number(self.magnitude):
            raise InputError(f"star magnitude: expected a finite number, got {self.magnitude!r}")


@dataclass(frozen=True)
class Planet:
    """Planet: radius (Earth radii, IAU nominal equatorial 6.3781e6 m); exactly one of
    ``mass_earth`` (Earth masses) or ``surface_gravity_m_s2``; exactly one of ``teq_k`` or
    ``a_over_rstar`` (orbital semi-major axis over stellar radius, T_eq then follows from the
    star); ``mu`` mean molecular weight (default by radius, see ``mean_molecular_weight``);
    ``n_scale_heights`` feature amplitude in scale heights (default 2)."""

    radius_earth: float
    mass_earth: float | None = None
    surface_gravity_m_s2: float | None = None
    teq_k: float | None = None
    a_over_rstar: float | None = None
    mu: float | None = None
    n_scale_heights: float = DEFAULT_N_SCALE_HEIGHTS

    def __post_init__(self) -> None:
        _require_positive("planet radius_earth", self.radius_earth)
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
        _require_positive("instrument aperture_m", self.aperture_m)
        _require_positive("instrument throughput", self.throughput)
        _require_positive("instrument wavelength_min_um", self.wavelength_min_um)
        _require_positive("instrument wavelength_max_um", self.wavelength_max_um)
        if not (_is_finite_number(self.central_obstruction) and 0 <= self.central_obstruction < 1):
            raise InputError(
                f"instrument central_obstruction: expected a diameter fraction in [0, 1), got {self.central_obstruction!r}"
            )
        if self.throughput > 1:
            raise InputError(f"instrument throughput: expected a fraction in (0, 1], got {self.throughput!r}")
        if self.wavelength_max_um <= self.wavelength_min_um:
            raise InputError(
                "instrument wavelength_max_um: expected > wavelength_min_um, "
                f"got {self.wavelength_max_um!r} <= {self.wavelength_min_um!r}"
            )
        if not (_is_finite_number(self.noise_floor_ppm) and self.noise_floor_ppm >= 0):
            raise InputError(f"instrument noise_floor_ppm: expected a finite number >= 0, got {self.noise_floor_ppm!r}")


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


def mean_molecular_weight(planet: Planet) -> float:
    """Mean molecular weight (atomic mass units): the given ``mu``, else the convention
    2.3 (H2/He) at radius >= 1.6 R_earth and 28.97 (Earth air) below."""
    if planet.mu is not None:
        return float(planet.mu)
    return MU_H2_DOMINATED if planet.radius_earth >= H2_ATMOSPHERE_RADIUS_EARTH else MU_SECONDARY


def scale_height_m(temperature_k, mu, gravity_m_s2):
    """Isothermal scale height H = k_B T / (mu m_u g) in metres (numpy-vectorised)."""
    temperature_k = _require_array("temperature_k", temperature_k, 0.0, strict=True)
    mu = _require_array("mu", mu, 0.0, strict=True)
    gravity_m_s2 = _require_array("gravity_m_s2", gravity_m_s2, 0.0, strict=True)
    return _K_B_J_K * temperature_k / (mu * _M_U_KG * gravity_m_s2)


def feature_depth(planet: Planet, star: Star) -> float:
    """Transit-depth change of a spectral feature, delta = 2 n_H H R_p / R_*^2 (dimensionless),
    with H at the planet's equilibrium temperature."""
    height_m = scale_height_m(
        equilibrium_temperature_k(planet, star), mean_molecular_weight(planet), surface_gravity_m_s2(planet)
    )
    radius_planet_m = planet.radius_earth * _R_EARTH_M
    radius_star_m = star.radius_sun * _R_SUN_M
    return float(2.0 * planet.n_scale_heights * height_m * radius_planet_m / radius_star_m**2)


# --- stellar photons ---------------------------------------------------------------------


def surface_photon_flux(wavelength_um, teff_k: float):
    """Photon flux per unit wavelength leaving a blackbody surface at ``teff_k``
    (photons s^-1 m^-2 um^-1): pi B_lambda / (h c / lambda) = 2 pi c lambda^-4 / (e^x - 1),
    x = h c / (lambda k_B T)."""
    wavelength_m = _require_array("wavelength_um", wavelength_um, 0.0, strict=True) * _M_PER_UM
    _require_positive("teff_k", teff_k)
    x = _H_J_S * _C_M_S / (wavelength_m * _K_B_J_K * teff_k)
    with np.errstate(over="ignore"):
        per_m = 2.0 * np.pi * _C_M_S / wavelength_m**4 / np.expm1(x)
    return per_m * _M_PER_UM


def _photon_energy_j(wavelength_um):
    return _H_J_S * _C_M_S / (np.asarray(wavelength_um, dtype=float) * _M_PER_UM)


def blackbody_magnitude(teff_k: float, radius_sun: float, distance_pc: float, band: str) -> float:
    """Magnitude in ``band`` of a blackbody star of ``teff_k`` (K) and ``radius_sun`` at
    ``distance_pc``: -2.5 log10 of its F_lambda at the band's effective wavelength over the
    band's zero point (monochromatic, no band-pass integration)."""
    if band not in BANDS:
        raise InputError(f"band: expected one of {', '.join(BANDS)}, got {band!r}")
    star = Star(radius_sun=radius_sun, teff_k=teff_k, distance_pc=distance_pc)
    zero = BANDS[band]
    flux_w_m2_um = stellar_photon_flux(star, zero.wavelength_eff_um) * _photon_energy_j(zero.wavelength_eff_um)
    return float(-2.5 * np.log10(flux_w_m2_um / zero.zero_point_w_m2_um))


def stellar_photon_flux(star: Star, wavelength_um):
    """Photon flux per unit wavelength at Earth, above the atmosphere
    (photons s^-1 m^-2 um^-1; numpy-vectorised in ``wavelength_um``).

    Distance path: surface flux times (R_* / d)^2. Magnitude path: the blackbody shape scaled
    so that its energy flux density at the band's effective wavelength is
    F_0 10^(-0.4 m), F_0 the band's zero point."""
    surface = surface_photon_flux(wavelength_um, star.teff_k)
    if star.distance_pc is not None:
        return surface * (star.radius_sun * _R_SUN_M / (star.distance_pc * _PC_M)) ** 2
    zero = BANDS[star.band]
    surface_w_m2_um = surface_photon_flux(zero.wavelength_eff_um, star.teff_k) * _photon_energy_j(zero.wavelength_eff_um)
    return surface * (zero.zero_point_w_m2_um * 10.0 ** (-0.4 * star.magnitude) / surface_w_m2_um)


# --- counts and noise --------------------------------------------------------------------


def collecting_area_m2(instrument: Instrument) -> float:
    """Unobstructed collecting area pi/4 D^2 (1 - obstruction^2) in m^2."""
    return math.pi / 4.0 * instrument.aperture_m**2 * (1.0 - instrument.central_obstruction**2)


def counts_per_hour_unit_resolution(star: Star, instrument: Instrument, wavelength_um):
    """k(lambda): detected photons per hour in a bin of width lambda / R, times R
    (so counts in a bin are k t_h / R); numpy-vectorised in ``wavelength_um``."""
    wavelength_um = np.asarray(wavelength_um, dtype=float)
    return (
        stellar_photon_flux(star, wavelength_um)
        * wavelength_um
        * collecting_area_m2(instrument)
        * instrument.throughput
        * _SECONDS_PER_HOUR
    )


def photons_per_bin(star: Star, instrument: Instrument, wavelength_um, resolution, hours):
    """Detected stellar photons in a bin of width lambda / R at ``wavelength_um`` over
    ``hours`` of exposure (numpy-broadcast over all array arguments)."""
    resolution = _require_array("resolution", resolution, 0.0, strict=True)
    hours = _require_array("hours", hours, 0.0, strict=False)
    return counts_per_hour_unit_resolution(star, instrument, wavelength_um) * hours / resolution


def _combined_hours(hours_in, hours_out):
    """t_c = t_in t_out / (t_in + t_out) in hours, so that 1/N_in + 1/N_out = R / (k t_c);
    zero if either is zero."""
    hours_in = _require_array("hours_in", hours_in, 0.0, strict=False)
    hours_out = _require_array("hours_out", hours_out, 0.0, strict=False)
    total = hours_in + hours_out
    return np.divide(hours_in * hours_out, total, out=np.zeros(np.broadcast(hours_in, hours_out).shape), where=total > 0)


def _snr(delta: float, floor: float, k, resolution, hours_in, hours_out):
    """delta / sqrt(R / (k t_c) + f^2), written to give 0 rather than 0/0 at t_c = 0."""
    resolution = _require_array("resolution", resolution, 0.0, strict=True)
    signal_counts = k * _combined_hours(hours_in, hours_out)
    return delta * np.sqrt(signal_counts) / np.sqrt(resolution + floor**2 * signal_counts)


def _floor(instrument: Instrument) -> float:
    return instrument.noise_floor_ppm * 1e-6


def _weakest_k(star: Star, instrument: Instrument) -> float:
    """k at whichever end of the range collects fewer photons per bin (see module docstring)."""
    ends_um = [instrument.wavelength_min_um, instrument.wavelength_max_um]
    return float(np.min(counts_per_hour_unit_resolution(star, instrument, ends_um)))


def snr_per_bin(planet: Planet, star: Star, instrument: Instrument, wavelength_um, resolution, hours_in, hours_out):
    """SNR of the feature in a bin at ``wavelength_um`` (um) and resolution R, from stacked
    ``hours_in`` in transit and ``hours_out`` out of transit (numpy-broadcast)."""
    wavelength_um = _require_array("wavelength_um", wavelength_um, 0.0, strict=True)
    k = counts_per_hour_unit_resolution(star, instrument, wavelength_um)
    return _snr(feature_depth(planet, star), _floor(instrument), k, resolution, hours_in, hours_out)


def bin_centres_um(instrument: Instrument, resolution: float):
    """Centres (um) of consecutive bins of width lambda / R (equal steps of 1/R in ln lambda)
    that fit inside the instrument's range; empty if none fits."""
    _require_positive("resolution", resolution)
    count = int(math.floor(resolution * math.log(instrument.wavelength_max_um / instrument.wavelength_min_um)))
    return instrument.wavelength_min_um * np.exp((np.arange(count) + 0.5) / resolution)


def spectrum_snr(planet: Planet, star: Star, instrument: Instrument, resolution, hours_in, hours_out):
    """SNR per bin of the spectrum at resolution R: that of its weakest bin, so every bin in
    the instrument's range does at least as well (numpy-broadcast over R and hours)."""
    k = _weakest_k(star, instrument)
    return _snr(feature_depth(planet, star), _floor(instrument), k, resolution, hours_in, hours_out)


def snr_cap(planet: Planet, star: Star, instrument: Instrument) -> float:
    """Highest SNR per bin reachable at any resolution and time: delta / floor (inf with no floor)."""
    floor = _floor(instrument)
    return math.inf if floor == 0 else feature_depth(planet, star) / floor


def achievable_resolution(planet: Planet, star: Star, instrument: Instrument, goal_snr, hours_in, hours_out):
    """Resolution R at which the spectrum's weakest bin reaches ``goal_snr``:
    R = k t_c (delta^2 / goal^2 - f^2). Returns 0.0 where the goal is unreachable at any R
    (goal >= delta / f) or no time has been stacked (numpy-broadcast)."""
    goal_snr = _require_array("goal_snr", goal_snr, 0.0, strict=True)
    delta = feature_depth(planet, star)
    margin = delta**2 / goal_snr**2 - _floor(instrument) ** 2
    resolution = _weakest_k(star, instrument) * _combined_hours(hours_in, hours_out) * margin
    return np.maximum(resolution, 0.0)


def hours_in_transit_needed(
    planet: Planet, star: Star, instrument: Instrument, resolution, goal_snr, out_per_in: float = 1.0
):
    """Stacked in-transit hours for the weakest bin to reach ``goal_snr`` at ``resolution``,
    with ``out_per_in`` hours out of transit per hour in transit:
    t_in = (1 + 1/rho) R / (k (delta^2 / goal^2 - f^2)). inf where the floor forbids the goal."""
    resolution = _require_array("resolution", resolution, 0.0, strict=True)
    goal_snr = _require_array("goal_snr", goal_snr, 0.0, strict=True)
    _require_positive("out_per_in", out_per_in)
    delta = feature_depth(planet, star)
    margin = delta**2 / goal_snr**2 - _floor(instrument) ** 2
    combined = np.divide(
        resolution / _weakest_k(star, instrument),
        margin,
        out=np.full(np.broadcast(resolution, margin).shape, np.inf),
        where=margin > 0,
    )
    return combined * (1.0 + 1.0 / out_per_in)
