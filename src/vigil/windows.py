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
from vigil.errors import ArgumentError
from vigil.sites import Site
from vigil.timescales import outside_earth_series_notes

# Light from a target reaches the Earth up to 8.3 min before or after the barycentre;
# transits are projected with this margin, then kept by their mid-time at the site.
_LIGHT_TIME_MARGIN_D = 0.01


def at_site(transits: pd.DataFrame, site: Site, start: Time, end: Time, engine: Engine = reference) -> pd.DataFrame:
    """Add the site's name and the mid-time seen there (JD UTC); keep mids inside [start, end]."""
    out = transits.assign(site=site.name, mid_jd_utc=engine.site_mid_jd_utc(transits, site))
    inside = (out[schema.MID_JD_UTC] >= start.utc.jd) & (out[schema.MID_JD_UTC] <= end.utc.jd)
    return out[inside].reset_index(drop=True)


def site_windows(transits: pd.DataFrame, site: Site, constraints: Constraints, start: Time, end: Time,
                 engine: str = "fast", include_unobservable: bool = True) -> pd.DataFrame | None:
    """Windows table for one site: padded windows, coverage, conditions at mid (only of the rows
    kept: every row, or those with some coverage), carrying the engine's notes
    (`vigil.notes.of`); None if no transit falls at the site (no window, no note). A site of
    kind space always goes to the space engine; `engine` chooses for ground sites."""
    engine_module = engine_for(site, engine)
    padded = visibility.pad_windows(at_site(transits, site, start, end, engine_module), constraints)
    if padded.empty:
        return None
    # Once K sigma exceeds half a period the transit's phase is lost: it cannot be planned
    # (coverage none), and its days-wide window is not handed to the engine.
    timed = (constraints.sigma_k * padded[schema.MID_SIGMA_D] < 0.5 * padded["period_d"]).to_numpy()
    observable, conditions_of, found = engine_module.evaluate(padded, site, constraints, timed)
    classified = visibility.classify(padded, observable, constraints.sigma_k)
    if include_unobservable:
        rows = np.arange(len(classified))
    else:
        rows = np.flatnonzero((classified["coverage"] != "none").to_numpy())
        classified = classified.take(rows).reset_index(drop=True)
    lo, hi = visibility.window_bounds(padded)
    found = notes.merged(found, _lost_phase_notes(padded[~timed], constraints.sigma_k),
                         outside_earth_series_notes(float(lo.min()), float(hi.max())))
    out = pd.concat([classified, conditions_of(rows)], axis=1)
    out[schema.MERIDIAN_IN_TRANSIT] = visibility.meridian_in_transit(out)
    return notes.attach(out, found)


def _lost_phase_notes(untimed: pd.DataFrame, sigma_k: float) -> list[notes.Note]:
    """One note per target whose K-sigma timing uncertainty exceeds half its period: its phase is lost."""
    found = []
    for target, rows in untimed.groupby("target", sort=False):
        name = str(target).replace("{", "{{").replace("}", "}}")  # the template is formatted with the dates
        found.append(notes.Note(
            ("lost phase", target),
            f"{name!r}: from {{start}} to {{end}} {sigma_k:g} sigma of its predicted mid-time exceeds half its "
            "period, so its phase is lost and those transits are listed as none; refresh its ephemeris (vigil refit)",
            float(rows["mid_jd_utc"].min()), float(rows["mid_jd_utc"].max())))
    return found


def plan_windows(targets: pd.DataFrame, sites: dict[str, Site], overrides: dict, start: Time, end: Time,
                 engine: str = "fast", include_unobservable: bool = False, event: str = "transit",
                 ordered: bool = True) -> pd.DataFrame:
    """All windows of one event type (transit or occultation) of all targets at all sites in
    [start, end], sorted by time then target then site (`in_time_order`); with ordered=False
    by site, then target, then time (for callers that merge several tables and sort once). The
    table carries the engines' notes (`vigil.notes.of`), for the caller to report."""
    if not end > start:
        raise ArgumentError("end", f"{end.utc.iso[:16]} must come after start {start.utc.iso[:16]}")
    transits = schema.TRANSITS.check(project_transits(targets, start.tdb.jd - _LIGHT_TIME_MARGIN_D,
                                                      end.tdb.jd + _LIGHT_TIME_MARGIN_D, event))
    tables = [site_windows(transits, site, resolve_constraints(site.defaults, overrides), start, end, engine,
                           include_unobservable) for site in sites.values() if not transits.empty]
    tables = [t for t in tables if t is not None]
    found = notes.merged(*(notes.of(t) for t in tables))
    if not tables:
        return notes.attach(schema.WINDOWS.empty(), found)
    filled = [t for t in tables if not t.empty] or tables[:1]
    table = pd.concat(filled, ignore_index=True) if len(filled) > 1 else filled[0]
    return notes.attach(schema.WINDOWS.check(in_time_order(table) if ordered else table.reset_index(drop=True)), found)


def in_time_order(table: pd.DataFrame) -> pd.DataFrame:
    """Rows sorted by mid-time, then target, then site (stable; names compared as strings).

    Examples
    --------
    >>> rows = pd.DataFrame({schema.MID_JD_UTC: [2.0, 1.0, 1.0], "target": ["a", "b", "a"], "site": ["x", "x", "y"]})
    >>> in_time_order(rows)["target"].tolist()
    ['a', 'b', 'a']
    """
    order = np.lexsort((_name_ranks(table["site"]), _name_ranks(table["target"]), table[schema.MID_JD_UTC].to_numpy()))
    if np.all(order[1:] > order[:-1]):
        return table.reset_index(drop=True)
    return table.take(order).reset_index(drop=True)


def _name_ranks(names: pd.Series) -> np.ndarray:
    """Each name's rank among the distinct names (hashing, then sorting only the distinct ones)."""
    codes, distinct = pd.factorize(names)
    ranks = np.empty(len(distinct), dtype=np.intp)
    ranks[np.argsort(np.asarray(distinct, dtype=object), kind="stable")] = np.arange(len(distinct))
    return ranks[codes]
