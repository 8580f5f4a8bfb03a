"""Stacking visits and judging the spectrum bin by bin.

Each visit measures the depth in a bin at wavelength lambda with variance ``a R + b``
(``visit_budget``); visits are combined with inverse-variance weights, so their information
``1 / (a R + b)`` adds, and a floor ``f`` common to all visits is added at the end:
``sigma^2 = 1 / sum(info) + f^2``. Red noise, inside ``b``, therefore averages as 1/sqrt(N)
over N like visits, the floor never does. A feature of amplitude delta reaches SNR s in a bin
when its information reaches ``I_need = 1 / (delta^2 / s^2 - f^2)`` (never when that is not
positive).

The spectrum is judged at wavelengths spaced evenly in ln lambda across the instrument's range
(both ends included), each standing for a bin of width lambda / R centred there, leaving out
those inside excluded (telluric) ranges. The goal is met when a share ``fraction`` of them
reach the SNR (1: every usable bin), i.e. when the "deciding" bin, the one ranked
``ceil(fraction n)``-th from the best, does.
"""

from __future__ import annotations

import math

import numpy as np

from vigil.errors import InputError

#: Wavelengths at which the spectrum is judged.
SAMPLES = 40
#: Resolutions at which stacked information is tabulated for the resolution reached at the goal
#: SNR (8 per decade); between them log information is interpolated linearly in log R, which is
#: exact when only terms growing as R are present.
RESOLUTION_GRID = np.geomspace(1.0, 1e6, 49)


def sample_wavelengths_um(wavelength_min_um: float, wavelength_max_um: float,
                          excluded_um: tuple[tuple[float, float], ...] = (), count: int = SAMPLES) -> np.ndarray:
    """Usable wavelengths (um) at which bins are judged (module docstring).

    Examples
    --------
    >>> sample_wavelengths_um(0.5, 1.0, count=3).round(3).tolist()
    [0.5, 0.707, 1.0]
    >>> sample_wavelengths_um(0.5, 1.0, ((0.6, 0.8),), count=3).round(3).tolist()
    [0.5, 1.0]
    """
    grid = np.geomspace(wavelength_min_um, wavelength_max_um, count)
    usable = np.ones(grid.size, dtype=bool)
    for low, high in excluded_um:
        usable &= ~((grid >= low) & (grid <= high))
    if not usable.any():
        raise InputError(f"instrument wavelength range {wavelength_min_um:g}-{wavelength_max_um:g} um: "
                         "every bin lies in an excluded (telluric) range")
    return grid[usable]


def deciding(information: np.ndarray, fraction: float) -> np.ndarray:
    """Information of the deciding bin along the last axis: at least ``ceil(fraction n)``
    bins have as much or more.

    Examples
    --------
    >>> float(deciding(np.array([4.0, 1.0, 3.0, 2.0]), 1.0)), float(deciding(np.array([4.0, 1.0, 3.0, 2.0]), 0.5))
    (1.0, 3.0)
    """
    n = information.shape[-1]
    rank = n - math.ceil(fraction * n - 1e-9)
    return np.partition(information, rank, axis=-1)[..., rank]


def needed_information(delta: float, goal_snr: float, floor: float) -> float:
    """Information a bin needs for ``goal_snr``: 1 / (delta^2 / SNR^2 - f^2); inf when the
    floor forbids it.

    Examples
    --------
    >>> needed_information(1e-3, 10.0, 0.0)
    100000000.0
    """
    margin = delta**2 / goal_snr**2 - floor**2
    return 1.0 / margin if margin > 0 else math.inf


def snr(delta: float, floor: float, information) -> np.ndarray:
    """SNR of a feature ``delta`` in a bin of stacked ``information`` (0 with none).

    Examples
    --------
    >>> float(snr(1e-3, 0.0, 1e8))
    10.0
    """
    information = np.asarray(information, dtype=float)
    with np.errstate(divide="ignore"):
        return delta / np.sqrt(1.0 / information + floor**2)


def visit_information(a: np.ndarray, b: np.ndarray, resolution) -> np.ndarray:
    """Information 1 / (a R + b) of each visit and bin; with R an array, a trailing axis.

    Examples
    --------
    >>> visit_information(np.array([[1.0]]), np.array([[0.0]]), np.array([1.0, 2.0])).tolist()
    [[[1.0, 0.5]]]
    """
    resolution = np.asarray(resolution, dtype=float)
    if resolution.ndim:
        a, b = a[..., None], b[..., None]
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.nan_to_num(1.0 / (a * resolution + b), nan=0.0, posinf=0.0)


def cumulative_deciding(information: np.ndarray, clear: np.ndarray, fraction: float) -> np.ndarray:
    """Deciding information after each visit of each trial, (trials, visits), from the
    information of each visit (visits, bins) and the clear mask (trials, visits)."""
    stacked = np.cumsum(clear[:, :, None] * information[None, :, :], axis=1)
    return deciding(stacked, fraction)


def at_year_ends(information: np.ndarray, clear: np.ndarray, year_of_visit: np.ndarray, years: int,
                 fraction: float) -> np.ndarray:
    """Deciding information at the end of each year, (trials, years, ...): ``information`` is
    (visits, bins, ...) and ``year_of_visit`` the 0-based year each visit counts in."""
    tail = information.shape[2:]
    flat = information.reshape(information.shape[0], -1)
    total = np.zeros((clear.shape[0], flat.shape[1]))
    out = []
    for year in range(years):
        block = year_of_visit == year
        # einsum rather than a BLAS product: these are small and BLAS threads only contend
        total = total + np.einsum("tv,vk->tk", clear[:, block].astype(float), flat[block])
        per_bin = total.reshape(clear.shape[0], information.shape[1], *tail)
        out.append(deciding(np.moveaxis(per_bin, 1, -1), fraction))
    return np.stack(out, axis=1)


def resolution_reached(information_on_grid: np.ndarray, need: float) -> np.ndarray:
    """Highest R of RESOLUTION_GRID (last axis of ``information_on_grid``), interpolated in
    log-log, whose information reaches ``need``; 0 where even R = 1 falls short, the grid's
    top where all of it suffices.

    Examples
    --------
    >>> float(resolution_reached(1000.0 / RESOLUTION_GRID, 10.0))
    100.0
    """
    if not math.isfinite(need):
        return np.zeros(information_on_grid.shape[:-1])
    with np.errstate(divide="ignore"):
        excess = np.log(information_on_grid) - math.log(need)  # decreasing along R
    log_r = np.log(RESOLUTION_GRID)
    above = excess >= 0
    last = np.sum(above, axis=-1) - 1  # information falls with R, so the reached R are a prefix
    inner = np.clip(last, 0, RESOLUTION_GRID.size - 2)
    e0 = np.take_along_axis(excess, inner[..., None], -1)[..., 0]
    e1 = np.take_along_axis(excess, inner[..., None] + 1, -1)[..., 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        step = np.where(np.isfinite(e1) & (e0 != e1), e0 / (e0 - e1), 0.0)
    reached = np.exp(log_r[inner] + np.clip(step, 0.0, 1.0) * (log_r[inner + 1] - log_r[inner]))
    return np.where(last < 0, 0.0, np.where(last >= RESOLUTION_GRID.size - 1, RESOLUTION_GRID[-1], reached))
