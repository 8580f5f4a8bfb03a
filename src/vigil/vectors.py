"""Unit vectors of many directions at once, and row-wise products (numpy)."""

from __future__ import annotations

import numpy as np


def unit_vectors(ra_deg: np.ndarray, dec_deg: np.ndarray) -> np.ndarray:
    """ICRS unit vectors, shaped (n, 3), computed once per run of rows with equal coordinates
    (the transits of one target come together)."""
    new_run = np.ones(ra_deg.size, dtype=bool)
    new_run[1:] = (ra_deg[1:] != ra_deg[:-1]) | (dec_deg[1:] != dec_deg[:-1])
    first = np.flatnonzero(new_run)
    ra, dec = np.radians(ra_deg[first]), np.radians(dec_deg[first])
    cos_dec = np.cos(dec)
    vectors = np.column_stack([cos_dec * np.cos(ra), cos_dec * np.sin(ra), np.sin(dec)])
    return np.repeat(vectors, np.diff(np.append(first, ra_deg.size)), axis=0)


def row_dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Row-wise dot products of (n, 3) arrays."""
    return a[:, 0] * b[:, 0] + a[:, 1] * b[:, 1] + a[:, 2] * b[:, 2]
