"""Observing constraints: what makes a moment observable at a site, and how wide each window is.

The built-in defaults are overridden by a site's own defaults (sites file), which are
overridden by the command line or the campaign file (`resolve_constraints`).
"""

from __future__ import annotations

from dataclasses import dataclass, fields

from vigil.errors import InputError
from vigil.textfile import number_in_range

# Sun's geometric centre at these altitudes ends each twilight (common practice, no source).
TWILIGHT_SUN_ALT_DEG = {"civil": -6.0, "nautical": -12.0, "astronomical": -18.0}
CONSTRAINT_KEYS = ("min_altitude_deg", "twilight", "baseline_h", "sigma_k", "moon_sep_deg")


@dataclass(frozen=True)
class Constraints:
    """What makes a moment observable at a site, and how wide each window is.

    min_altitude_deg: lowest apparent target altitude; twilight: civil, nautical or
    astronomical (Sun's centre below -6, -12, -18 deg); baseline_h: out-of-transit time wanted
    on each side; sigma_k: pad each side by k times the mid-time's 1-sigma (0 disables);
    moon_sep_deg: least Moon-target angle (0 disables).
    """

    min_altitude_deg: float = 30.0
    twilight: str = "astronomical"
    baseline_h: float = 1.0
    sigma_k: float = 1.0
    moon_sep_deg: float = 0.0

    def __post_init__(self):
        if isinstance(self.twilight, str):  # keywords in any case: Astronomical, NAUTICAL
            object.__setattr__(self, "twilight", self.twilight.strip().lower())
        if self.twilight not in TWILIGHT_SUN_ALT_DEG:
            raise InputError(f"twilight: expected civil, nautical or astronomical, got {self.twilight!r}")
        number_in_range("min_altitude_deg", self.min_altitude_deg, -5.0, 89.0, "degrees")
        number_in_range("baseline_h", self.baseline_h, 0.0, 48.0, "hours")
        number_in_range("sigma_k", self.sigma_k, 0.0, 10.0, "(a multiple of sigma)")
        number_in_range("moon_sep_deg", self.moon_sep_deg, 0.0, 180.0, "degrees")

    @property
    def sun_altitude_deg(self) -> float:
        """The Sun's altitude (deg, geometric centre) below which it is dark enough."""
        return TWILIGHT_SUN_ALT_DEG[self.twilight]


def resolve_constraints(site_defaults: dict, overrides: dict) -> Constraints:
    """Constraints for one site: command-line overrides, then the site's defaults, then built-ins.

    Examples
    --------
    >>> resolve_constraints({"min_altitude_deg": 40}, {"min_altitude_deg": None, "sigma_k": 2}).min_altitude_deg
    40
    """
    names = {f.name for f in fields(Constraints)}
    chosen = {k: v for k, v in site_defaults.items() if k in names}
    chosen.update({k: v for k, v in overrides.items() if k in names and v is not None})
    return Constraints(**chosen)


def checked_constraints(prefix: str, values: dict) -> dict:
    """`values` (constraint keys only) if they make valid Constraints; else an error after `prefix`
    (the file and table they were read from)."""
    twilight = values.get("twilight", "astronomical")
    if not isinstance(twilight, str):
        raise InputError(f"{prefix} twilight: expected civil, nautical or astronomical, got {twilight!r}")
    try:
        Constraints(**values)
    except InputError as exc:
        raise InputError(f"{prefix} {exc}") from None
    return values
