"""Sites built in Python: from keyword fields, an astropy EarthLocation or an astroplan Observer.

A site built here goes through the sites file's own checks (same messages, with `sites`
in place of the file name), so a value the file would refuse is refused here too.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import astropy.units as u
from astropy.coordinates import EarthLocation

from vigil import catalog
from vigil.sites import Site
from vigil.errors import InputError
from vigil.inputs import as_number, unit_of, unknown_name_error

SOURCE = "sites"  # stands for the file name in messages about sites built in Python


def make_site(name: str, location=None, **fields) -> Site:
    """A site from keyword fields named like the sites file's keys, checked like the file.

    Parameters
    ----------
    name : str
        The site's name (a key of the windows table's `site` column).
    location : EarthLocation or astroplan Observer, optional
        Gives latitude, longitude and elevation (and, for an Observer, its time zone, pressure
        and temperature where set). Otherwise pass `latitude_deg`, `longitude_deg` (east
        positive) and `elevation_m`.
    **fields
        Any key of a `[sites.NAME]` table, e.g. `timezone`, `min_altitude_deg`, `twilight`,
        `horizon_mask`, or `kind="space"` with its keys. Values with a unit in the name may be
        Quantities (`latitude_deg=-30.5 * u.deg`, `elevation_m=2.4 * u.km`).

    Examples
    --------
    >>> import astropy.units as u
    >>> make_site("ridge", latitude_deg=-30.5 * u.deg, longitude_deg=-70.8, elevation_m=2400).latitude_deg
    -30.5
    """
    entry = {**_location_fields(location), **fields}
    known = catalog.SPACE_SITE_KEYS if entry.get("kind") == "space" else catalog.SITE_KEYS
    for key in entry:
        if key not in known:
            raise unknown_name_error("site field", key, sorted(known))
    entry = {key: as_number(value, unit_of(key), f"{SOURCE}: [sites.{name}] {key}") for key, value in entry.items()}
    return catalog.site_from_entry(SOURCE, name, entry)


def _location_fields(location) -> dict:
    """Site fields from an EarthLocation or an astroplan Observer (None: no fields)."""
    if location is None:
        return {}
    fields = {}
    observer = location
    if hasattr(observer, "location") and isinstance(observer.location, EarthLocation):  # astroplan Observer
        location = observer.location
        zone = getattr(observer.timezone, "zone", None)
        if zone and zone != "UTC":
            fields["timezone"] = zone
        for key, attribute in (("pressure_hpa", "pressure"), ("temperature_c", "temperature")):
            value = getattr(observer, attribute, None)
            if value is not None and value.value != 0:
                fields[key] = value
    if not isinstance(location, EarthLocation):
        raise InputError(f"{SOURCE}: expected an astropy EarthLocation or an astroplan Observer, got "
                         f"{type(location).__name__}")
    geodetic = location.to_geodetic()
    return {"latitude_deg": geodetic.lat.to(u.deg), "longitude_deg": geodetic.lon.wrap_at(180 * u.deg).to(u.deg),
            "elevation_m": geodetic.height.to(u.m), **fields}


def as_sites(sites) -> dict[str, Site]:
    """Sites in every form the API takes, as {name: Site} in the given order.

    A sites TOML path; a Site; an EarthLocation or Observer (named by its `name`, else
    "site"); a dict {name: Site, EarthLocation or Observer}; or a list of these.

    Examples
    --------
    >>> from astropy.coordinates import EarthLocation
    >>> list(as_sites({"ridge": EarthLocation.from_geodetic(-70.8, -30.5, 2400)}))
    ['ridge']
    """
    if isinstance(sites, (str, Path)):
        return catalog.read_sites(sites)
    if isinstance(sites, dict):
        return {str(name): _one_site(value, str(name)) for name, value in sites.items()}
    if isinstance(sites, (list, tuple)):
        found = {}
        for value in sites:
            found.update(as_sites(value) if isinstance(value, (dict, list, tuple, str, Path)) else _named(value))
        return found
    return _named(sites)


def _named(value) -> dict[str, Site]:
    site = _one_site(value, getattr(value, "name", None) or "site")
    return {site.name: site}


def _one_site(value, name: str) -> Site:
    if isinstance(value, Site):
        return value if value.name == name else replace(value, name=name)
    return make_site(name, value)
