"""Observing sites: on the ground (place, air for refraction, facility limits) or in space.

`catalog.read_sites` reads them from a TOML file; everything downstream takes these types.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from vigil.facility import Facility

# A field of regard typical of a Sun-shielded observatory far from the Earth (common practice, no source).
DEFAULT_SUN_ANGLE_MIN_DEG = 85.0
DEFAULT_SUN_ANGLE_MAX_DEG = 135.0
DEFAULT_INTERRUPTION_START_JD_UTC = 2451544.5  # 2000-01-01 0h UTC
DEFAULT_TEMPERATURE_C = 10.0


@dataclass(frozen=True)
class SpaceSettings:
    """What limits an observatory in space.

    The target is observable while its angle from the Sun lies in [sun_angle_min_deg,
    sun_angle_max_deg], except during regular interruptions (interruption_h hours every
    interruption_period_h hours, the first starting at interruption_start_jd_utc; none when
    the period is None) and during blackouts ((start, end) pairs, JD UTC, sorted by start).
    distance_from_earth_km (from the geocentre; None if not given) sizes the notes on the errors
    of taking the site at the geocentre, and beyond a low orbit leaves moon_sep_deg NaN.
    """

    sun_angle_min_deg: float = DEFAULT_SUN_ANGLE_MIN_DEG
    sun_angle_max_deg: float = DEFAULT_SUN_ANGLE_MAX_DEG
    interruption_period_h: float | None = None
    interruption_h: float = 0.0
    interruption_start_jd_utc: float = DEFAULT_INTERRUPTION_START_JD_UTC
    blackouts_jd_utc: tuple[tuple[float, float], ...] = ()
    distance_from_earth_km: float | None = None


@dataclass(frozen=True)
class Site:
    """An observatory: on the ground (longitude east positive, in (-180, 180]), or in space
    when `space` is set (then latitude, longitude and elevation are NaN)."""

    name: str
    latitude_deg: float
    longitude_deg: float
    elevation_m: float
    timezone: str | None = None
    pressure_hpa: float | None = None
    temperature_c: float = DEFAULT_TEMPERATURE_C
    defaults: dict = field(default_factory=dict)
    space: SpaceSettings | None = None
    facility: Facility = field(default_factory=Facility)

    @classmethod
    def in_space(cls, name: str, space: SpaceSettings, timezone: str | None = None,
                 defaults: dict | None = None) -> "Site":
        """A site of kind space: no place on the Earth."""
        return cls(name, math.nan, math.nan, math.nan, timezone=timezone, defaults=dict(defaults or {}), space=space)

    @property
    def kind(self) -> str:
        """'ground' or 'space'."""
        return "ground" if self.space is None else "space"

    @property
    def air_pressure_hpa(self) -> float:
        """Air pressure for refraction: given, or the standard atmosphere at the site's elevation."""
        if self.pressure_hpa is not None:
            return self.pressure_hpa
        return 1013.25 * (1.0 - 2.25577e-5 * self.elevation_m) ** 5.25588
