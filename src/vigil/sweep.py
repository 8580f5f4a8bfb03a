"""Catalog-scale windows: `windows.plan_windows` over chunks of targets, optionally in processes.

Each chunk of consecutive targets is planned on its own (so working memory is bounded by
the chunk, not by the catalog times the horizon; the result itself is of course whole); the
chunk tables are then merged into the order that `plan_windows` gives the whole catalog: by
mid-time, then target, then site. Every row is computed from its own transit alone (see
vigil.engines.fast), so the numbers are the same bit for bit. Worker processes are started
with the "spawn" method, so this works where fork is unavailable or unsafe (macOS, Windows,
threads in the parent); each worker pays once for importing vigil (about a second or two).
"""

from __future__ import annotations

import multiprocessing
from concurrent.futures import ProcessPoolExecutor
from typing import Callable

import numpy as np
import pandas as pd
from astropy.time import Time

from vigil import windows
from vigil.sites import Site
from vigil.errors import InputError

# With chunk_targets=None, consecutive targets are grouped until their expected transits
# (horizon / period, each) reach this many; each transit then makes one row per site.
CHUNK_TRANSITS = 100_000


def plan_windows_chunked(targets: pd.DataFrame, sites: dict[str, Site], overrides: dict, start: Time, end: Time,
                         jobs: int = 1, chunk_targets: int | None = None, engine: str = "fast",
                         include_unobservable: bool = False,
                         on_chunk: Callable[[pd.DataFrame, int, int], None] | None = None,
                         event: str = "transit") -> pd.DataFrame:
    """The table `windows.plan_windows` returns (same rows, columns and order), chunk by chunk.

    engine, include_unobservable and event are passed on to plan_windows.
    jobs: worker processes (1 plans in this process). chunk_targets: targets per chunk, or
    None to size chunks by their expected transit count (CHUNK_TRANSITS). on_chunk, if given,
    is called in this process after each chunk, in target order, as
    on_chunk(chunk_table, targets_done, targets_total); chunk_table is that chunk's part of
    the result, sorted like it. Target names must be unique (the merge orders rows by name).
    """
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1:
        raise InputError(f"jobs: expected a whole number of processes >= 1, got {jobs!r}")
    if chunk_targets is not None and (isinstance(chunk_targets, bool) or not isinstance(chunk_targets, int)
                                      or chunk_targets < 1):
        raise InputError(f"chunk_targets: expected a whole number of targets >= 1 or None, got {chunk_targets!r}")
    if targets["name"].duplicated().any():
        first = targets["name"][targets["name"].duplicated()].iloc[0]
        raise InputError(f"name: target {first!r} appears twice; chunked planning needs unique target names")
    settings = {"engine": engine, "include_unobservable": include_unobservable, "event": event}
    if not end > start or targets.empty:
        return windows.plan_windows(targets, sites, overrides, start, end, **settings)
    bounds = _chunk_bounds(targets, start, end, chunk_targets)
    arguments = [(targets.iloc[a:b], sites, overrides, start, end, settings) for a, b in bounds]
    if jobs == 1:
        tables = _collect(map(_plan_chunk, arguments), bounds, len(targets), on_chunk)
    else:
        context = multiprocessing.get_context("spawn")
        with ProcessPoolExecutor(max_workers=min(jobs, len(bounds)), mp_context=context) as pool:
            tables = _collect(pool.map(_plan_chunk, arguments), bounds, len(targets), on_chunk)
    return _merge(tables)


def _chunk_bounds(targets: pd.DataFrame, start: Time, end: Time, chunk_targets: int | None) -> list[tuple[int, int]]:
    """(first, stop) row positions of each chunk of consecutive targets."""
    n = len(targets)
    if chunk_targets is not None:
        return [(a, min(a + chunk_targets, n)) for a in range(0, n, chunk_targets)]
    span_d = (end.tdb.jd - start.tdb.jd)
    expected = np.cumsum(span_d / targets["period_d"].to_numpy(dtype=float) + 1.0)
    cuts = np.searchsorted(expected, np.arange(CHUNK_TRANSITS, expected[-1], CHUNK_TRANSITS), side="right")
    edges = np.unique(np.concatenate([[0], np.maximum(cuts, 1), [n]]))
    return list(zip(edges[:-1].tolist(), edges[1:].tolist()))


def _plan_chunk(arguments) -> pd.DataFrame:
    """One chunk through `windows.plan_windows` (module level, so that spawned workers can run it)."""
    *positional, settings = arguments
    return windows.plan_windows(*positional, **settings)


def _collect(results, bounds, total: int, on_chunk) -> list[pd.DataFrame]:
    tables = []
    for table, (_, stop) in zip(results, bounds):
        tables.append(table)
        if on_chunk is not None:
            on_chunk(table, stop, total)
    return tables


def _merge(tables: list[pd.DataFrame]) -> pd.DataFrame:
    """Chunk tables into one table in plan_windows' order (windows.in_time_order)."""
    filled = [t for t in tables if len(t)]
    if not filled:
        typed = [t for t in tables if "ra_deg" in t.columns]
        return (typed or tables)[0]
    return windows.in_time_order(pd.concat(filled, ignore_index=True) if len(filled) > 1 else filled[0])
