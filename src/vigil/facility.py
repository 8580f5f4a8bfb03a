"""What a ground facility adds to the sky: horizon mask, mount limits, Moon rules by phase.

All optional, set in a site's TOML table:
  horizon_mask = [[az_deg, alt_deg], ...]   least apparent altitude by azimuth (north 0, east 90),
                                            interpolated linearly and around 360
  hour_angle_limits_h = [min, max]          equatorial mount reach in hour angle (hours, west positive)
  declination_limits_deg = [min, max]       mount reach in declination
  zenith_keepout_deg = X                    alt-azimuth mount: no tracking within X of the zenith
  moon_sep_by_illumination = [[fraction, deg], ...]
                                            least Moon separation by the Moon's illuminated fraction,
                                            interpolated; the larger of it and moon_sep_deg applies
Every engine evaluates them through `margin_deg` and `moon_limit_deg`, so the rules live once.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from vigil.errors import InputError

FACILITY_KEYS = ("horizon_mask", "hour_angle_limits_h", "declination_limits_deg", "zenith_keepout_deg",
                 "moon_sep_by_illumination")
DEG_PER_HOUR = 15.0


@dataclass(frozen=True)
class Facility:
    """Optional limits of one ground site (see the module docstring for units)."""

    mask_az_deg: tuple = ()
    mask_alt_deg: tuple = ()
    hour_angle_limits_h: tuple | None = None
    declination_limits_deg: tuple | None = None
    zenith_keepout_deg: float = 0.0
    moon_table: tuple = ()  # ((illuminated fraction, least separation deg), ...)

    @property
    def limits_sky_position(self) -> bool:
        """True when altitude, azimuth, hour angle or declination limits beyond the altitude limit apply."""
        return bool(self.mask_az_deg or self.hour_angle_limits_h or self.declination_limits_deg
                    or self.zenith_keepout_deg)

    def mask_alt_at(self, az_deg) -> np.ndarray:
        """Least apparent altitude (deg) at azimuths az_deg; -90 where there is no mask."""
        if not self.mask_az_deg:
            return np.full(np.shape(az_deg), -90.0)
        return np.interp(np.mod(az_deg, 360.0), self.mask_az_deg, self.mask_alt_deg, period=360.0)

    def margin_deg(self, alt_deg, az_deg, ha_deg, dec_deg) -> np.ndarray:
        """Smallest margin (deg; >= 0 allowed) over mask, zenith keep-out, hour-angle and
        declination limits, from apparent altitude, azimuth, hour angle (-180..180) and declination."""
        margin = np.asarray(alt_deg, dtype=float) - self.mask_alt_at(az_deg)
        if self.zenith_keepout_deg:
            margin = np.minimum(margin, 90.0 - self.zenith_keepout_deg - alt_deg)
        if self.hour_angle_limits_h:
            low, high = (DEG_PER_HOUR * h for h in self.hour_angle_limits_h)
            margin = np.minimum(margin, np.minimum(ha_deg - low, high - ha_deg))
        if self.declination_limits_deg:
            low, high = self.declination_limits_deg
            margin = np.minimum(margin, np.minimum(dec_deg - low, high - dec_deg))
        return margin

    def moon_limit_deg(self, illuminated_fraction, base_deg: float) -> np.ndarray:
        """Least Moon separation (deg) for the Moon's illuminated fraction: the table or base, the larger."""
        if not self.moon_table:
            return np.full(np.shape(illuminated_fraction), float(base_deg))
        fractions, separations = zip(*self.moon_table)
        return np.maximum(base_deg, np.interp(illuminated_fraction, fractions, separations))

    @property
    def moon_limit_max_deg(self) -> float:
        return max((s for _, s in self.moon_table), default=0.0)


def _pairs(where: str, value, first_range, second_range, what: str) -> list[tuple[float, float]]:
    ok = isinstance(value, list) and value and all(
        isinstance(p, list) and len(p) == 2 and all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in p)
        for p in value)
    if ok:
        ok = all(first_range[0] <= a <= first_range[1] and second_range[0] <= b <= second_range[1] for a, b in value)
    if not ok:
        raise InputError(f"{where}: expected a list of [{what}] pairs, {first_range[0]:g}..{first_range[1]:g} and "
                         f"{second_range[0]:g}..{second_range[1]:g}, got {value!r}")
    return sorted((float(a), float(b)) for a, b in value)


def _range(where: str, value, low: float, high: float, unit: str) -> tuple[float, float]:
    if (not isinstance(value, list) or len(value) != 2
            or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in value)
            or not low <= value[0] < value[1] <= high):
        raise InputError(f"{where}: expected [min, max] with {low:g} <= min < max <= {high:g} {unit}, got {value!r}")
    return float(value[0]), float(value[1])


def read_facility(where: str, entry: dict) -> Facility:
    """Facility limits from a site's TOML table; `where` is '<file>: [sites.NAME]'."""
    mask = _pairs(f"{where} horizon_mask", entry["horizon_mask"], (0, 360), (-5, 90), "az_deg, alt_deg") \
        if "horizon_mask" in entry else []
    moon = _pairs(f"{where} moon_sep_by_illumination", entry["moon_sep_by_illumination"], (0, 1), (0, 180),
                  "fraction, deg") if "moon_sep_by_illumination" in entry else []
    keepout = entry.get("zenith_keepout_deg", 0.0)
    if isinstance(keepout, bool) or not isinstance(keepout, (int, float)) or not 0 <= keepout < 45:
        raise InputError(f"{where} zenith_keepout_deg: expected degrees from 0 to 45, got {keepout!r}")
    return Facility(
        mask_az_deg=tuple(a for a, _ in mask), mask_alt_deg=tuple(b for _, b in mask),
        hour_angle_limits_h=_range(f"{where} hour_angle_limits_h", entry["hour_angle_limits_h"], -12, 12, "hours")
        if "hour_angle_limits_h" in entry else None,
        declination_limits_deg=_range(f"{where} declination_limits_deg", entry["declination_limits_deg"], -90, 90,
                                      "degrees") if "declination_limits_deg" in entry else None,
        zenith_keepout_deg=float(keepout), moon_table=tuple(moon))
