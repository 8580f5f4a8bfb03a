"""Python values in the ecosystem's terms, turned into vigil's plain units.

Dates may be an astropy `Time`, an ISO 8601 string (read as UTC), a timezone-aware
`datetime` or a `date` (midnight UTC). Angles, durations and other amounts may be an astropy
`Quantity` or a plain number already in the unit the name states (`_deg`, `_h`, `_m`, ...).
Every problem is one `ArgumentError` (an `InputError`) naming the argument, like the readers' messages.
"""

from __future__ import annotations

import datetime
import numbers

import astropy.units as u
import numpy as np
from astropy.time import Time

from vigil.errors import ArgumentError
from vigil.field_units import field_unit
from vigil.textfile import did_you_mean

# Units of names beyond the targets' fields (vigil.field_units): site and campaign keys.
_MORE_SUFFIXES = (("_m_s2", u.m / u.s**2), ("_km", u.km), ("_m", u.m), ("_hpa", u.hPa), ("_c", u.deg_C),
                  ("_k", u.K), ("_um", u.um), ("_years", u.year))


def unit_of(name: str) -> u.UnitBase | None:
    """The unit a plain number under `name` is in, from its ending (None: no unit known).

    Examples
    --------
    >>> unit_of("baseline_h"), unit_of("elevation_m")
    (Unit("h"), Unit("m"))
    """
    unit = field_unit(name)
    if unit is not None:
        return unit
    return next((unit for suffix, unit in _MORE_SUFFIXES if name.endswith(suffix)), None)


def as_time(value, name: str) -> Time:
    """A date or instant as an astropy Time (UTC).

    Parameters
    ----------
    value : Time, str, datetime.datetime (timezone-aware) or datetime.date
        ISO 8601 strings are read as UTC; a date is its midnight UTC. A datetime without a
        time zone is refused, since it may be meant as local time.
    name : str
        The argument's name, for the error message.

    Examples
    --------
    >>> as_time("2027-01-01", "start").isot
    '2027-01-01T00:00:00.000'
    """
    if isinstance(value, Time):
        if value.isscalar:
            return value.utc
        raise ArgumentError(name, f"expected one instant, got a Time array of shape {value.shape}")
    if isinstance(value, datetime.datetime):
        if value.tzinfo is None or value.utcoffset() is None:
            raise ArgumentError(name, "a datetime without a time zone is ambiguous; give tzinfo (e.g. "
                                      "datetime.timezone.utc), an ISO string read as UTC, or an astropy Time")
        value = value.astimezone(datetime.timezone.utc).replace(tzinfo=None).isoformat()
    elif isinstance(value, datetime.date):
        value = value.isoformat()
    if isinstance(value, str):
        try:
            return Time(value, scale="utc")
        except ValueError:
            pass
    raise ArgumentError(name, f"expected a UTC date such as 2027-01-01 or 2027-01-01T18:00, got {value!r}")


def as_number(value, unit: u.UnitBase | None, name: str):
    """A plain number in `unit` from a Quantity (converted) or a number (taken as in `unit`).

    Anything else is returned unchanged, for the readers' checks to refuse with their message.

    Examples
    --------
    >>> as_number(90 * u.min, u.hour, "baseline")
    1.5
    """
    if isinstance(value, u.Quantity):
        if unit is None or not value.isscalar:
            raise ArgumentError(name, f"expected a plain number, got {value!r}")
        try:
            return float(value.to_value(unit, equivalencies=u.temperature()))
        except u.UnitConversionError:
            raise ArgumentError(name, f"expected a quantity in {unit} (or convertible), got {value}") from None
    if isinstance(value, numbers.Real) and not isinstance(value, bool):
        return float(value) if isinstance(value, (float, np.floating)) else int(value)
    return value


def unknown_name_error(kind: str, name: str, known) -> TypeError:
    """TypeError for an unknown keyword, with the closest known names as a suggestion.

    Examples
    --------
    >>> str(unknown_name_error("constraint", "min_alt", ["min_altitude", "twilight"]))
    "unknown constraint 'min_alt'; did you mean 'min_altitude'? (known: min_altitude, twilight)"
    """
    return TypeError(f"unknown {kind} {name!r}{did_you_mean(name, known)} (known: {', '.join(known)})")
