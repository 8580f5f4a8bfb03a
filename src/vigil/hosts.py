"""Planets of one star: which targets share a host, and which of their windows share a pointing.

A target's host is its `host` column where the catalogue has one; without that column,
targets within HOST_RADIUS_ARCSEC of each other are taken as planets of one star and a note
says so. Windows (or campaign visits) of one host at one site that overlap in time form one
pointing: the telescope observes both transits at once.
"""

from __future__ import annotations

import logging

import numpy as np
import pandas as pd

log = logging.getLogger("vigil")

# Two catalogue entries this close are one star (common practice, no source: catalogue
# positions of one star agree to well under an arcsecond; distinct bright stars are rarely closer).
HOST_RADIUS_ARCSEC = 2.0


def host_of(targets: pd.DataFrame) -> dict[str, str]:
    """Target name -> host name: the `host` column where filled, else close neighbours grouped.

    Examples
    --------
    >>> t = pd.DataFrame({"name": ["A b", "A c", "B b"], "ra_deg": [10.0, 10.0, 50.0],
    ...                   "dec_deg": [-5.0, -5.0001, 20.0]})
    >>> host_of(t)
    {'A b': 'A b', 'A c': 'A b', 'B b': 'B b'}
    """
    names = targets["name"].astype(str).tolist()
    if "host" in targets.columns:
        given = targets["host"].fillna("").astype(str).str.strip().tolist()
        return {n: h or n for n, h in zip(names, given)}
    group = _close_groups(targets["ra_deg"].to_numpy(float), targets["dec_deg"].to_numpy(float))
    first = {}
    for name, g in zip(names, group):
        first.setdefault(g, name)
    hosts = {name: first[g] for name, g in zip(names, group)}
    for g, lead in first.items():
        members = [n for n, k in zip(names, group) if k == g]
        if len(members) > 1:
            log.info("targets %s lie within %g arcsec of each other: planned as planets of one star "
                     "(add a host column to say otherwise)", ", ".join(members), HOST_RADIUS_ARCSEC)
    return hosts


def _close_groups(ra_deg: np.ndarray, dec_deg: np.ndarray) -> np.ndarray:
    """Group number of each position; positions within HOST_RADIUS_ARCSEC are joined (transitively)."""
    import astropy.units as u
    from astropy.coordinates import SkyCoord

    group = np.arange(ra_deg.size)
    if ra_deg.size < 2:
        return group
    sky = SkyCoord(ra_deg * u.deg, dec_deg * u.deg)
    first, second, _, _ = sky.search_around_sky(sky, HOST_RADIUS_ARCSEC * u.arcsec)
    for i, j in zip(first[first < second], second[first < second]):
        a, b = _root(group, i), _root(group, j)
        group[max(a, b)] = min(a, b)
    return np.array([_root(group, i) for i in range(group.size)])


def _root(parent: np.ndarray, i: int) -> int:
    while parent[i] != i:
        i = parent[i]
    return int(i)


def overlap_groups(keys, start, end) -> np.ndarray:
    """Group id per row: rows with the same key whose [start, end] intervals overlap (chained).

    Examples
    --------
    >>> overlap_groups(["s", "s", "s", "t"], [0.0, 0.5, 2.0, 0.2], [1.0, 1.5, 3.0, 0.9]).tolist()
    [0, 0, 1, 2]
    """
    keys = pd.Series(list(keys)).astype(str).to_numpy()
    start, end = np.asarray(start, float), np.asarray(end, float)
    order = np.lexsort((start, keys))
    group = np.empty(keys.size, dtype=np.int64)
    current, reach, last_key = -1, -np.inf, None
    for i in order:
        if keys[i] != last_key or start[i] >= reach:
            current += 1
            reach = end[i]
        reach = max(reach, end[i])
        last_key = keys[i]
        group[i] = current
    # numbered by each group's first row, so ids do not depend on how the keys sort
    _, first_row = np.unique(group, return_index=True)
    return np.argsort(np.argsort(first_row))[group]


def shared_with(windows: pd.DataFrame, hosts: dict[str, str]) -> pd.Series:
    """Per window row, the other targets of its host whose windows overlap it at the site ("; ").

    Examples
    --------
    >>> w = pd.DataFrame({"target": ["A b", "A c"], "site": ["s", "s"],
    ...                   "window_start_jd_utc": [0.0, 0.1], "window_end_jd_utc": [0.2, 0.3]})
    >>> shared_with(w, {"A b": "A", "A c": "A"}).tolist()
    ['A c', 'A b']
    """
    marks = pd.Series("", index=windows.index, dtype=str)
    planets = pd.Series(list(hosts.values())).value_counts()
    shared = windows["target"].map(hosts).isin(planets.index[planets > 1]).to_numpy()
    if not shared.any():  # the usual case: every star has one planet
        return marks
    w = windows[shared]
    keys = [f"{hosts[t]}|{s}" for t, s in zip(w["target"], w["site"])]
    group = overlap_groups(keys, w["window_start_jd_utc"], w["window_end_jd_utc"])
    targets = w["target"].astype(str).to_numpy()
    members = pd.Series(targets).groupby(group).agg(lambda t: sorted(set(t)))
    marks[shared] = ["; ".join(m for m in members[g] if m != t) for t, g in zip(targets, group)]
    return marks


def mark_shared(pieces, hosts: dict[str, str]):
    """The windows table's consecutive pieces (time order) with their `shared_with` column.

    Each piece is marked together with its neighbours, so windows that overlap across a cut
    between pieces are found; three pieces are held at a time.

    Examples
    --------
    >>> w = pd.DataFrame({"target": ["A b", "A c"], "site": ["s", "s"],
    ...                   "window_start_jd_utc": [0.0, 0.1], "window_end_jd_utc": [0.2, 0.3]})
    >>> [p["shared_with"].tolist() for p in mark_shared([w.iloc[:1], w.iloc[1:]], {"A b": "A", "A c": "A"})]
    [['A c'], ['A b']]
    """
    before = current = None
    for piece in pieces:
        if current is not None:
            yield _marked(before, current, piece, hosts)
        before, current = current, piece
    if current is not None:
        yield _marked(before, current, None, hosts)


def _marked(before, current: pd.DataFrame, after, hosts: dict[str, str]) -> pd.DataFrame:
    """`current` with shared_with, its windows compared with those of its neighbours too."""
    if current.empty:
        return current.assign(shared_with=pd.Series([], dtype=str, index=current.index))
    earlier = before if before is not None and len(before) else None
    parts = [p for p in (earlier, current, after) if p is not None and len(p)]
    offset = 0 if earlier is None else len(earlier)
    marks = shared_with(pd.concat(parts, ignore_index=True), hosts).to_numpy()
    return current.assign(shared_with=marks[offset:offset + len(current)])
