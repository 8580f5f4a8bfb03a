"""The windows stage: targets and sites in, one row per transit per site out.

ephemeris (BJD_TDB) -> timescales (UTC at the site) -> padding -> visibility engine ->
coverage classes and conditions at mid-transit.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from astropy.time import Time

from vigil import notes, schema, visibility
from vigil.constraints import Constraints, resolve_constraints
from vigil.engines import engine_for, reference
from vigil.engines.protocol import Engine
from vigil.ephemeris.projection import project_transits
from vigil.errors import InputError
from vigil.sites import Site

# Light from a target reaches the Earth up to 8.3 min before or after the barycentre;
# transits are projected with this margin, then kept by their mid-time at the site.
_LIGHT_TIME_MARGIN_D = 0.01


def at_site(transits: pd.DataFrame, site: Site, start: Time, end: Time, engine: Engine = reference) -> pd.DataFrame:
    """Add the site's name and the mid-time seen there (JD UTC); keep mids inside [start, end]."""
    out = transits.assign(site=site.name, mid_jd_utc=engine.site_mid_jd_utc(transits, site))
    inside = (out["mid_jd_utc"] >= start.utc.jd) & (out["mid_jd_utc"] <= end.utc.jd)
    return out[inside].reset_index(drop=True)


def site_windows(transits: pd.DataFrame, site: Site, constraints: Constraints,
                 start: Time, end: Time, engine: str = "fast") -> pd.DataFrame:
    """Windows table for one site: padded windows, coverage, conditions at mid, carrying the
    engine's notes (`vigil.notes.of`). A site of kind space always goes to the space engine;
    `engine` chooses for ground sites."""
    engine_module = engine_for(site, engine)
    padded = visibility.pad_windows(at_site(transits, site, start, end, engine_module), constraints)
    # Once K sigma exceeds half a period the transit's phase is lost: it cannot be planned
    # (coverage none), and its days-wide window is not handed to the engine.
    timed = (constraints.sigma_k * padded["mid_sigma_d"] < 0.5 * padded["period_d"]).to_numpy()
    observable, conditions, found = engine_module.evaluate(padded, site, constraints, timed)
    table = pd.concat([visibility.classify(padded, observable, constraints.sigma_k), conditions], axis=1)
    return notes.attach(table, found)


def plan_windows(targets: pd.DataFrame, sites: dict[str, Site], overrides: dict, start: Time, end: Time,
                 engine: str = "fast", include_unobservable: bool = False, event: str = "transit") -> pd.DataFrame:
    """All windows of one event type (transit or occultation) of all targets at all sites in
    [start, end], sorted by time then target; the table carries the engines' notes
    (`vigil.notes.of`), for the caller to report."""
    if not end > start:
        raise InputError(f"--end {end.utc.iso[:10]} must come after --start {start.utc.iso[:10]}")
    transits = schema.TRANSITS.check(project_transits(targets, start.tdb.jd - _LIGHT_TIME_MARGIN_D,
                                                      end.tdb.jd + _LIGHT_TIME_MARGIN_D, event))
    tables = [site_windows(transits, site, resolve_constraints(site.defaults, overrides), start, end, engine)
              for site in sites.values() if not transits.empty]
    found = notes.merged(*(notes.of(t) for t in tables))
    tables = [t for t in tables if not t.empty]
    if not tables:
        return notes.attach(schema.WINDOWS.empty(), found)
    table = pd.concat(tables, ignore_index=True)
    if not include_unobservable:
        table = table[table[schema.COVERAGE] != "none"]
    return notes.attach(schema.WINDOWS.check(in_time_order(table)), found)


def in_time_order(table: pd.DataFrame) -> pd.DataFrame:
    """Rows sorted by mid-time, then target, then site (the three-key sort only if mid-times tie)."""
    mid = table["mid_jd_utc"].to_numpy()
    order = np.argsort(mid, kind="stable")
    if np.any(np.diff(mid[order]) == 0):
        return table.sort_values(["mid_jd_utc", "target", "site"], kind="stable").reset_index(drop=True)
    if np.all(order[1:] > order[:-1]):
        return table.reset_index(drop=True)
    return table.take(order).reset_index(drop=True)
