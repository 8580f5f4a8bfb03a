"""Catalog-scale windows: `windows.plan_windows` over pieces of the span and of the catalog, on any executor.

The span is cut into consecutive time segments and the catalog into chunks of consecutive
targets; each (segment, chunk) task is planned on its own, and a segment's chunk tables are
merged into the order that `plan_windows` gives: by mid-time, then target, then site.
Segments come out in time order as soon as their tasks are done (`iter_windows`), so a
caller that consumes them one by one holds one segment, not the catalog times the horizon.
Every row is computed from its own transit alone (see vigil.engines.fast), so the numbers are
the same bit for bit however the work is cut.

Tasks run in this process (jobs=1), in `jobs` worker processes started with "spawn" (so this
works where fork is unavailable or unsafe; each worker pays once for importing vigil, about
a second), or on any `concurrent.futures.Executor`, such as a dask.distributed client's
(vigil.cluster). With `chunk_dir`, each task writes its table as a Parquet file there and
hands back only the path, so tables never travel through the executor: on a cluster it must
be a folder that this process and every worker see.
"""

from __future__ import annotations

import multiprocessing
import uuid
from collections import deque
from concurrent.futures import Executor, ProcessPoolExecutor
from pathlib import Path
from typing import Callable, Iterable, Iterator, NamedTuple

import numpy as np
import pandas as pd
from astropy.time import Time

from vigil import notes, schema, windows
from vigil.sites import Site
from vigil.errors import ArgumentError, InputError
from vigil.notes import Note

# With chunk_targets=None, consecutive targets are grouped until their expected transits
# (segment length / period, each) reach CHUNK_TRANSITS; each transit makes one row per site.
# With segment_days=None, the span is cut so that a segment holds about SEGMENT_TRANSITS.
CHUNK_TRANSITS = 100_000
SEGMENT_TRANSITS = 400_000
IN_FLIGHT_PER_WORKER = 2  # tasks handed to an executor ahead of the one awaited, per worker


class _Task(NamedTuple):
    """One (segment, chunk) of the work; rows whose mid-time is at or after cut_jd_utc belong
    to the next segment (None for the last). chunk_path: where to write the table, if anywhere."""

    targets: pd.DataFrame
    sites: dict
    overrides: dict
    start: Time
    end: Time
    cut_jd_utc: float | None
    settings: dict
    chunk_path: str | None


def plan_windows_chunked(targets: pd.DataFrame, sites: dict[str, Site], overrides: dict, start: Time, end: Time,
                         jobs: int = 1, chunk_targets: int | None = None, engine: str = "fast",
                         include_unobservable: bool = False,
                         on_chunk: Callable[[pd.DataFrame, int, int], None] | None = None,
                         event: str = "transit", executor: Executor | None = None,
                         chunk_dir: str | Path | None = None, segment_days: float | None = None) -> pd.DataFrame:
    """The table `windows.plan_windows` returns (same rows, columns and order), piece by piece.

    Takes the arguments of `iter_windows` and joins its pieces.

    Examples
    --------
    >>> table = plan_windows_chunked(targets, sites, {}, Time("2027-01-01"), Time("2028-01-01"), jobs=2)  # doctest: +SKIP
    """
    pieces = list(iter_windows(targets, sites, overrides, start, end, jobs=jobs, chunk_targets=chunk_targets,
                               engine=engine, include_unobservable=include_unobservable, on_chunk=on_chunk,
                               event=event, executor=executor, chunk_dir=chunk_dir, segment_days=segment_days))
    return _joined(pieces, sort=False)


def iter_windows(targets: pd.DataFrame, sites: dict[str, Site], overrides: dict, start: Time, end: Time, *,
                 jobs: int = 1, chunk_targets: int | None = None, engine: str = "fast",
                 include_unobservable: bool = False,
                 on_chunk: Callable[[pd.DataFrame, int, int], None] | None = None, event: str = "transit",
                 executor: Executor | None = None, chunk_dir: str | Path | None = None,
                 segment_days: float | None = None) -> Iterator[pd.DataFrame]:
    """`windows.plan_windows`' table as consecutive pieces, one per time segment, in its order.

    Parameters
    ----------
    targets, sites, overrides, start, end, engine, include_unobservable, event
        As for `windows.plan_windows`. Target names must be unique (the merge orders rows by name).
    jobs : int
        Worker processes to start (1: plan in this process); with `executor`, the number of its
        workers (it sets how many tasks are handed out ahead).
    chunk_targets : int or None
        Targets per chunk, or None to size chunks by their expected transits (CHUNK_TRANSITS).
    on_chunk : callable or None
        Called here after each task, in order, as on_chunk(chunk_table, tasks_done, tasks_total).
    executor : concurrent.futures.Executor or None
        Runs the tasks instead of `jobs` processes (e.g. vigil.cluster's dask executor).
    chunk_dir : str, Path or None
        Folder where tasks leave their tables as Parquet (pyarrow) for this process to read;
        None hands the tables back through the executor.
    segment_days : float or None
        Length of the time segments (days), or None to size them by SEGMENT_TRANSITS.

    Examples
    --------
    >>> for piece in iter_windows(targets, sites, {}, Time("2027-01-01"), Time("2057-01-01")):  # doctest: +SKIP
    ...     piece.to_csv(stream, header=False)
    """
    _check(targets, jobs, chunk_targets, segment_days)
    settings = {"engine": engine, "include_unobservable": include_unobservable, "event": event}
    if not end > start or targets.empty:
        yield windows.plan_windows(targets, sites, overrides, start, end, **settings)
        return
    tasks = _tasks(targets, sites, overrides, start, end, settings, chunk_targets, segment_days, chunk_dir)
    segment_tables, last_cut = [], tasks[0].cut_jd_utc
    for done, (task, table) in enumerate(zip(tasks, _results(tasks, jobs, executor)), start=1):
        if task.cut_jd_utc != last_cut:
            yield _joined(segment_tables, sort=True)
            segment_tables, last_cut = [], task.cut_jd_utc
        segment_tables.append(table)
        if on_chunk is not None:
            on_chunk(table, done, len(tasks))
    yield _joined(segment_tables, sort=True)


def _check(targets: pd.DataFrame, jobs, chunk_targets, segment_days) -> None:
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1:
        raise ArgumentError("jobs", f"expected a whole number of processes >= 1, got {jobs!r}")
    if chunk_targets is not None and (isinstance(chunk_targets, bool) or not isinstance(chunk_targets, int)
                                      or chunk_targets < 1):
        raise InputError(f"chunk_targets: expected a whole number of targets >= 1 or None, got {chunk_targets!r}")
    if segment_days is not None and not (np.isfinite(segment_days) and segment_days > 0):
        raise InputError(f"segment_days: expected a positive number of days or None, got {segment_days!r}")
    if targets["name"].duplicated().any():
        first = targets["name"][targets["name"].duplicated()].iloc[0]
        raise InputError(f"name: target {first!r} appears twice; chunked planning needs unique target names")


def _tasks(targets, sites, overrides, start: Time, end: Time, settings: dict, chunk_targets, segment_days,
           chunk_dir) -> list[_Task]:
    """Every (segment, chunk) task, segments in time order and chunks in target order."""
    run = uuid.uuid4().hex[:12]
    tasks = []
    segments = _segments(targets, start, end, segment_days)
    for s, (lo, hi) in enumerate(segments):
        cut = hi.utc.jd if s < len(segments) - 1 else None
        for c, (a, b) in enumerate(_chunk_bounds(targets, lo, hi, chunk_targets)):
            path = None if chunk_dir is None else str(Path(chunk_dir) / f"vigil-{run}-{s:05d}-{c:05d}.parquet")
            tasks.append(_Task(targets.iloc[a:b], sites, overrides, lo, hi, cut, settings, path))
    return tasks


def _segments(targets: pd.DataFrame, start: Time, end: Time, segment_days: float | None) -> list[tuple[Time, Time]]:
    """Consecutive (start, end) Times covering [start, end]."""
    start_jd, end_jd = start.utc.jd, end.utc.jd
    if segment_days is None:
        expected = float(np.sum((end_jd - start_jd) / targets["period_d"].to_numpy(dtype=float) + 1.0))
        count = int(np.ceil(expected / SEGMENT_TRANSITS))
    else:
        count = int(np.ceil((end_jd - start_jd) / segment_days))
    inner = [Time(jd, format="jd", scale="utc") for jd in start_jd + (end_jd - start_jd) * np.arange(1, count) / count]
    edges = [start, *inner, end]
    return list(zip(edges[:-1], edges[1:]))


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


def _plan_chunk(task: _Task) -> tuple[pd.DataFrame | str, tuple[Note, ...]]:
    """One task through `windows.plan_windows`: its table, or the path of the Parquet file it
    was written to, and its notes (module level, so that spawned and remote workers can run it).
    The notes travel beside the table: Parquet files do not keep them."""
    with notes.warnings_as_notes(task.start.utc.jd, task.end.utc.jd) as warned:  # also from worker processes
        table = windows.plan_windows(task.targets, task.sites, task.overrides, task.start, task.end, **task.settings,
                                     ordered=False)
    found = notes.merged(notes.of(table), warned)
    if task.cut_jd_utc is not None:
        table = table[table[schema.MID_JD_UTC].to_numpy(dtype=float) < task.cut_jd_utc].reset_index(drop=True)
    if task.chunk_path is None:
        return table, found
    table.attrs.clear()  # the notes go back beside the file
    table.to_parquet(task.chunk_path, index=False)
    return task.chunk_path, found


def _results(tasks: list[_Task], jobs: int, executor: Executor | None) -> Iterator[pd.DataFrame]:
    """The tasks' tables in task order, read back (and removed) where they went through files."""
    if executor is not None:
        outputs = _in_order(executor, tasks, IN_FLIGHT_PER_WORKER * jobs)
    elif jobs == 1:
        outputs = map(_plan_chunk, tasks)
    else:
        outputs = _in_processes(tasks, jobs)
    try:
        for output, found in outputs:
            yield notes.attach(_read_chunk(output) if isinstance(output, str) else output, found)
    finally:
        for task in tasks:  # whatever a failed or abandoned run left behind
            if task.chunk_path is not None:
                Path(task.chunk_path).unlink(missing_ok=True)


def _in_processes(tasks: list[_Task], jobs: int) -> Iterator[tuple[pd.DataFrame | str, tuple[Note, ...]]]:
    context = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=min(jobs, len(tasks)), mp_context=context) as pool:
        yield from _in_order(pool, tasks, IN_FLIGHT_PER_WORKER * jobs)


def _in_order(executor: Executor, tasks: Iterable[_Task], in_flight: int) -> Iterator[tuple[pd.DataFrame | str, tuple[Note, ...]]]:
    """Results of _plan_chunk over the tasks, in order, with at most in_flight tasks handed out
    beyond the one awaited (so finished tables do not pile up here)."""
    pending = deque()
    try:
        for task in tasks:
            if len(pending) > in_flight:
                yield pending.popleft().result()
            pending.append(executor.submit(_plan_chunk, task))
        while pending:
            yield pending.popleft().result()
    finally:
        for future in pending:
            future.cancel()


def _read_chunk(path: str) -> pd.DataFrame:
    table = pd.read_parquet(path)
    Path(path).unlink()
    return table


def _joined(tables: list[pd.DataFrame], sort: bool) -> pd.DataFrame:
    """Tables into one, in plan_windows' order (windows.in_time_order) if sort; an empty result
    keeps the typed columns of an empty table that had them."""
    found = notes.merged(*(notes.of(t) for t in tables))
    filled = [t for t in tables if len(t)]
    if not filled:
        return notes.attach(schema.WINDOWS.empty(), found)
    joined = pd.concat(filled, ignore_index=True) if len(filled) > 1 else filled[0]
    return notes.attach(windows.in_time_order(joined) if sort else joined.reset_index(drop=True), found)
