"""Atmosphere scenarios: the feature size a target is planned against.

The expected feature amplitude hangs on the mean molecular weight mu and on how many scale
heights a feature spans; neither is known before the spectrum is taken, so each target is
forecast under a small set of named scenarios, each with its own verdict. A target's own
``mu`` (and ``n_scale_heights``) column adds a scenario named ``catalog``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from vigil import spectrum
from vigil.errors import InputError


@dataclass(frozen=True)
class Scenario:
    """A named atmosphere: mean molecular weight (atomic mass units) and feature amplitude in
    scale heights."""

    name: str
    mu: float
    n_scale_heights: float

    def __post_init__(self) -> None:
        for field in ("mu", "n_scale_heights"):
            value = getattr(self, field)
            if not (isinstance(value, (int, float)) and math.isfinite(value) and value > 0):
                raise InputError(f"scenario {self.name}: {field}: expected a number > 0, got {value!r}")


#: Default scenarios (conventions, common practice, no source): a clear hydrogen-rich
#: atmosphere (solar H2/He, mu 2.3, features of 2 scale heights); a high-mu one (water-dominated,
#: mu 18); a hydrogen-rich one muted by clouds or haze to a quarter of the clear amplitude.
DEFAULT_SCENARIOS = (Scenario("h2_clear", 2.3, 2.0), Scenario("high_mu", 18.0, 2.0), Scenario("h2_muted", 2.3, 0.5))


def target_scenarios(planet: spectrum.Planet, configured: tuple[Scenario, ...]) -> tuple[Scenario, ...]:
    """The scenarios of one target: ``catalog`` first when the planet gives mu, then the
    configured ones.

    Examples
    --------
    >>> planet = spectrum.Planet(radius_earth=2.0, mass_earth=5.0, teq_k=600.0, mu=5.0)
    >>> [s.name for s in target_scenarios(planet, DEFAULT_SCENARIOS)]
    ['catalog', 'h2_clear', 'high_mu', 'h2_muted']
    """
    if planet.mu is None:
        return configured
    return (Scenario("catalog", planet.mu, planet.n_scale_heights), *configured)


def feature_depth(planet: spectrum.Planet, star: spectrum.Star, scenario: Scenario) -> float:
    """Feature amplitude (transit-depth change) of ``planet`` under ``scenario``.

    Examples
    --------
    >>> planet = spectrum.Planet(radius_earth=2.0, mass_earth=5.0, teq_k=600.0)
    >>> star = spectrum.Star(radius_sun=0.5, teff_k=3800.0, magnitude=9.0, band="J")
    >>> clear, heavy = (feature_depth(planet, star, s) for s in DEFAULT_SCENARIOS[:2])
    >>> round(clear / heavy, 2)
    7.83
    """
    return spectrum.feature_depth(replace(planet, mu=scenario.mu, n_scale_heights=scenario.n_scale_heights), star)
