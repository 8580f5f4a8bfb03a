"""Future events of every target: epoch, predicted mid-time (BJD_TDB) and its 1-sigma.

Each target's ephemeris model (`vigil.ephemeris.models`) decides the epochs in the span and
their mid-times and uncertainties; polynomial models are evaluated for all targets at once.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from vigil.ephemeris.events import EVENTS, event_offsets
from vigil.ephemeris.models import PolynomialEphemeris, catalogue_ephemeris
from vigil.errors import InputError

#: Optional targets column holding an Ephemeris object that replaces the row's own ephemeris
#: (set by `with_models`, e.g. for a per-epoch table).
MODEL_COLUMN = "ephemeris_model"


def with_models(targets: pd.DataFrame, models: dict, source="ephemeris table") -> pd.DataFrame:
    """Targets whose named rows use the given Ephemeris objects instead of their own columns.

    InputError, starting with `source` (the table's file), when a model names no target in the table.
    """
    unknown = sorted(set(models) - set(targets["name"]))
    if unknown:
        raise InputError(f"{source}: target {unknown[0]!r} is not in the targets table")
    out = targets.copy()
    out[MODEL_COLUMN] = [models.get(name) for name in out["name"]]
    return out


def ephemerides(targets: pd.DataFrame) -> list:
    """The Ephemeris of each targets row: an attached model (`with_models`) or the row's polynomial."""
    own, attached = _models(targets)
    return [model if model is not None else own.row(i) for i, model in enumerate(attached)]


def _models(targets: pd.DataFrame) -> tuple[PolynomialEphemeris, list]:
    """The rows' polynomials stacked, and per row its attached model or None."""
    attached = list(targets[MODEL_COLUMN]) if MODEL_COLUMN in targets.columns else [None] * len(targets)
    return catalogue_ephemeris(targets), attached


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
    own, attached = _models(targets)
    first, last = own.epoch_ranges(start_bjd_tdb - offsets, end_bjd_tdb - offsets)
    for i, model in enumerate(attached):
        if model is not None:
            first[i], last[i] = model.epoch_range(start_bjd_tdb - offsets[i], end_bjd_tdb - offsets[i])
    counts = np.maximum(last - first + 1, 0)
    which = np.repeat(np.arange(len(targets)), counts)
    epochs = first[which] + (np.arange(which.size) - np.repeat(np.cumsum(counts) - counts, counts))
    mid, sigma = _predict(own, attached, which, epochs)
    column = lambda name: targets[name].to_numpy(dtype=float)[which]  # noqa: E731
    return pd.DataFrame({
        "target": targets["name"].astype(str).array.take(which),  # array take: no per-row string objects
        "event": pd.Categorical.from_codes(np.full(which.size, EVENTS.index(event), dtype=np.int8), categories=EVENTS),
        "epoch": epochs,
        "mid_bjd_tdb": mid + offsets[which],
        "mid_sigma_d": sigma,
        "duration_h": durations[which],
        "period_d": column("period_d"),
        "ra_deg": column("ra_deg"),
        "dec_deg": column("dec_deg"),
    })


def _predict(own: PolynomialEphemeris, attached: list, which: np.ndarray,
             epochs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Mid-times and sigmas of `epochs` of the targets `which`: the rows' own polynomials
    vectorised, attached models one by one."""
    mid = own.mid_bjd_tdb(epochs, which)
    sigma = own.mid_sigma_d(epochs, which)
    for i, model in enumerate(attached):
        if model is not None:
            at = which == i
            mid[at], sigma[at] = model.mid_bjd_tdb(epochs[at]), model.mid_sigma_d(epochs[at])
    return mid, sigma
