"""Interval arithmetic on flat numpy arrays: many rows' interval sets at once.

An interval set for many rows is three equal-length arrays `(row, start, end)`, sorted by row
then start, with disjoint intervals inside a row. Times are floats (Julian dates here).
"""

from __future__ import annotations

import numpy as np


def from_samples(row: np.ndarray, t: np.ndarray, margin: np.ndarray):
    """Intervals where `margin >= 0`, from samples sorted by (row, t).

    Edges between a failing and a passing sample are placed where the straight line through
    the two margins crosses zero; a row's first and last samples bound its intervals.
    Returns (row, start, end).
    """
    ok = margin >= 0
    same_prev = np.zeros(ok.size, dtype=bool)
    same_prev[1:] = row[1:] == row[:-1]
    same_next = np.zeros(ok.size, dtype=bool)
    same_next[:-1] = same_prev[1:]
    prev_ok = np.zeros(ok.size, dtype=bool)
    prev_ok[1:] = ok[:-1]
    next_ok = np.zeros(ok.size, dtype=bool)
    next_ok[:-1] = ok[1:]
    first = np.flatnonzero(ok & ~(prev_ok & same_prev))
    last = np.flatnonzero(ok & ~(next_ok & same_next))
    start = t[first].astype(float)
    end = t[last].astype(float)
    inner = same_prev[first]
    start[inner] = _zero_crossing(t, margin, first[inner] - 1)
    inner = same_next[last]
    end[inner] = _zero_crossing(t, margin, last[inner])
    return row[first], start, end


def _zero_crossing(t: np.ndarray, margin: np.ndarray, i: np.ndarray) -> np.ndarray:
    """Where the line through samples i and i+1 crosses zero (their margins differ in sign)."""
    m0, m1 = margin[i], margin[i + 1]
    return t[i] + (t[i + 1] - t[i]) * m0 / (m0 - m1)


def overlap_per_row(row, start, end, lo, hi, n_rows: int) -> np.ndarray:
    """Total length of each row's intervals inside [lo[row], hi[row]]."""
    inside = np.clip(np.minimum(end, hi[row]) - np.maximum(start, lo[row]), 0.0, None)
    return np.bincount(row, weights=inside, minlength=n_rows)


def any_covers(row, start, end, lo, hi, n_rows: int) -> np.ndarray:
    """For each row: does one of its intervals contain the whole of [lo, hi]?"""
    covers = (start <= lo[row]) & (end >= hi[row])
    return np.bincount(row, weights=covers, minlength=n_rows) > 0


def _expand(counts: np.ndarray):
    """For per-row counts, the (row index, position within row) of every element."""
    row = np.repeat(np.arange(counts.size), counts)
    first = np.repeat(np.cumsum(counts) - counts, counts)
    return row, np.arange(row.size) - first


def intersect(a, b, n_rows: int):
    """Per-row intersection of two flat interval sets (each sorted and disjoint within a row)."""
    a_row, a_start, a_end = a
    b_row, b_start, b_end = b
    a_count = np.bincount(a_row, minlength=n_rows)
    b_count = np.bincount(b_row, minlength=n_rows)
    a_first, b_first = np.cumsum(a_count) - a_count, np.cumsum(b_count) - b_count
    # every pair (i in a, j in b) of one row; intersections come out sorted by start
    pair_row, pair_i = _expand(a_count * b_count)
    i = a_first[pair_row] + pair_i // b_count[pair_row]
    j = b_first[pair_row] + pair_i % b_count[pair_row]
    start, end = np.maximum(a_start[i], b_start[j]), np.minimum(a_end[i], b_end[j])
    keep = end > start
    return pair_row[keep], start[keep], end[keep]


def clip_to_windows(starts: np.ndarray, ends: np.ndarray, lo: np.ndarray, hi: np.ndarray):
    """Per-row pieces of one sorted disjoint timeline (starts, ends) inside windows [lo, hi]."""
    first = np.searchsorted(ends, lo, side="right")
    last = np.searchsorted(starts, hi, side="left")
    row, offset = _expand(np.maximum(last - first, 0))
    k = first[row] + offset
    start, end = np.maximum(starts[k], lo[row]), np.minimum(ends[k], hi[row])
    keep = end > start
    return row[keep], start[keep], end[keep]


def sample_grid(lo: np.ndarray, hi: np.ndarray, step: float):
    """Flat samples (row, t) from lo to hi of each row, both ends included, spacing <= step."""
    counts = np.ceil((hi - lo) / step).astype(int) + 1
    row, position = _expand(counts)
    return row, lo[row] + position / (counts - 1)[row] * (hi - lo)[row]
