"""Visibility engines: reference (astropy, the truth in tests), fast (the default), space.

Each implements `vigil.engines.protocol.Engine`; `engine_for` picks the one for a site.
"""

from __future__ import annotations

from vigil.engines import fast, reference, space
from vigil.engines.protocol import Engine
from vigil.errors import InputError
from vigil.sites import Site

GROUND_ENGINES = {"reference": reference, "fast": fast}


def engine_for(site: Site, name: str = "fast") -> Engine:
    """The engine for a site: the space engine for a site of kind space, else the ground
    engine named `name` ("fast" or "reference").

    Examples
    --------
    >>> engine_for(Site("Ridge", -30.0, -70.0, 2000.0)).__name__
    'vigil.engines.fast'
    """
    if site.kind == "space":
        return space
    if name not in GROUND_ENGINES:
        raise InputError(f"engine: expected one of {', '.join(GROUND_ENGINES)}, got {name!r}")
    return GROUND_ENGINES[name]
