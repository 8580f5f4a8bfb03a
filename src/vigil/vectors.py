"""Unit vectors of many directions at once, row-wise products, and angles between directions (numpy)."""

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


def angle_deg(a, b) -> np.ndarray:
    """Angle (deg) between vectors given as (x, y, z) components (broadcastable arrays, any
    lengths): atan2(|a x b|, a . b), accurate at every angle.

    Examples
    --------
    >>> float(angle_deg((1.0, 0.0, 0.0), (0.0, 2.0, 0.0)))
    90.0
    """
    ax, ay, az = a
    bx, by, bz = b
    cross_sq = (ay * bz - az * by) ** 2 + (az * bx - ax * bz) ** 2 + (ax * by - ay * bx) ** 2
    return np.degrees(np.arctan2(np.sqrt(cross_sq), ax * bx + ay * by + az * bz))


def separation_deg(ra1_deg, dec1_deg, ra2_deg, dec2_deg) -> np.ndarray:
    """Angle between two directions given as (ra, dec) in degrees, degrees (inputs broadcast).

    Examples
    --------
    >>> float(separation_deg(10.0, 0.0, 10.0, 90.0))
    90.0
    """
    def components(ra_deg, dec_deg):
        ra, dec = np.radians(np.asarray(ra_deg, dtype=float)), np.radians(np.asarray(dec_deg, dtype=float))
        return np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)

    return angle_deg(components(ra1_deg, dec1_deg), components(ra2_deg, dec2_deg))
