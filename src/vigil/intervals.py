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
