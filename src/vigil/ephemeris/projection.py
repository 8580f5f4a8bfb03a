"""Future events of every target: epoch, predicted mid-time (BJD_TDB) and its 1-sigma.

Each target's ephemeris model (`vigil.ephemeris.models`) decides the epochs in the span and
their mid-times and uncertainties; polynomial models are evaluated for all targets at once.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from vigil.ephemeris.events import EVENTS, event_offsets
from vigil.ephemeris.models import PolynomialEphemeris, stacked, target_ephemerides
from vigil.errors import InputError

#: Optional targets column holding an Ephemeris object that replaces the row's own ephemeris
#: (set by `with_models`, e.g. for a per-epoch table).
MODEL_COLUMN = "ephemeris_model"


def with_models(targets: pd.DataFrame, models: dict) -> pd.DataFrame:
    """Targets whose named rows use the given Ephemeris objects instead of their own columns.

    InputError when a model names no target in the table.
    """
    unknown = sorted(set(models) - set(targets["name"]))
    if unknown:
        raise InputError(f"ephemeris table: target {unknown[0]!r} is not in the targets table")
    out = targets.copy()
    out[MODEL_COLUMN] = [models.get(name) for name in out["name"]]
    return out


def ephemerides(targets: pd.DataFrame) -> list:
    """The Ephemeris of each targets row: an attached model (`with_models`) or the row's polynomial."""
    own = target_ephemerides(targets)
    if MODEL_COLUMN not in targets.columns:
        return own
    return [m if m is not None else p for m, p in zip(targets[MODEL_COLUMN], own)]


def project_transits(targets: pd.DataFrame, start_bjd_tdb: float, end_bjd_tdb: float,
                     event: str = "transit") -> pd.DataFrame:
    """One row per event (transit or occultation) of each target with mid-time in [start, end] (BJD_TDB).

    Columns: target, event, epoch, mid_bjd_tdb, mid_sigma_d, duration_h, period_d, ra_deg, dec_deg. An
    occultation carries the epoch of the transit before it and that transit's timing sigma; epochs
    count from the catalogue's T0 (`vigil.ephemeris.models`).

    Examples
    --------
    >>> table = pd.DataFrame({"name": ["b"], "t0_bjd_tdb": [2460000.0], "t0_err_d": [1e-4], "period_d": [2.0],
    ...                       "period_err_d": [0.0], "duration_h": [2.0], "ra_deg": [10.0], "dec_deg": [5.0]})
    >>> project_transits(table, 2460001.0, 2460006.0)["epoch"].tolist()
    [1, 2, 3]
    """
    if not end_bjd_tdb > start_bjd_tdb:
        raise InputError("the end of the date range must come after its start")
    offsets, durations = event_offsets(targets, event)
    models = ephemerides(targets)
    ranges = np.array([m.epoch_range(start_bjd_tdb - o, end_bjd_tdb - o) for m, o in zip(models, offsets)],
                      dtype=np.int64).reshape(-1, 2)
    first, counts = ranges[:, 0], np.maximum(ranges[:, 1] - ranges[:, 0] + 1, 0)
    which = np.repeat(np.arange(len(targets)), counts)
    epochs = first[which] + (np.arange(which.size) - np.repeat(np.cumsum(counts) - counts, counts))
    mid, sigma = _predict(models, which, epochs)
    names = targets["name"].astype(str).to_numpy()
    column = lambda name: targets[name].to_numpy(dtype=float)[which]  # noqa: E731
    return pd.DataFrame({
        "target": names[which],
        "event": pd.Categorical([event] * which.size, categories=EVENTS),
        "epoch": epochs,
        "mid_bjd_tdb": mid + offsets[which],
        "mid_sigma_d": sigma,
        "duration_h": durations[which],
        "period_d": column("period_d"),
        "ra_deg": column("ra_deg"),
        "dec_deg": column("dec_deg"),
    })


def _predict(models: list, which: np.ndarray, epochs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mid-times and sigmas of `epochs` of models[which]: polynomials vectorised, others one by one."""
    mid, sigma = np.empty(epochs.size), np.empty(epochs.size)
    polynomial = np.array([isinstance(m, PolynomialEphemeris) for m in models], dtype=bool)
    rows = polynomial[which] if which.size else np.zeros(0, dtype=bool)
    if rows.any():
        index = np.flatnonzero(polynomial)
        position = np.full(len(models), -1)
        position[index] = np.arange(index.size)
        model, picked = stacked([models[i] for i in index]), position[which[rows]]
        mid[rows] = model.mid_bjd_tdb(epochs[rows], picked)
        sigma[rows] = model.mid_sigma_d(epochs[rows], picked)
    for i in np.flatnonzero(~polynomial):
        at = which == i
        mid[at], sigma[at] = models[i].mid_bjd_tdb(epochs[at]), models[i].mid_sigma_d(epochs[at])
    return mid, sigma
