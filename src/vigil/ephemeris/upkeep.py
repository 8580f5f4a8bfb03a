"""Ephemeris upkeep during a campaign: measured timings folded in, planned refreshes applied.

Both are the information update of each target's ephemeris by one timing
(vigil.ephemeris.models.PolynomialEphemeris.updated): a measured timing moves T0 and P (and
dP/dN for a quadratic ephemeris) and shrinks their covariance; a planned refresh, its value
unknown in advance, only shrinks the covariance. T0 stays at its reference epoch.

A journal timing keeps the epoch the journal recorded (catalogue numbering) and is refused
when it lies more than 5 combined sigma from the prediction for that epoch, unless it was
forced into the journal (vigil.ephemeris.timing_checks).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from astropy.time import Time

from vigil import schema
from vigil.ephemeris.models import PolynomialEphemeris, target_ephemerides
from vigil.ephemeris.timing_checks import far_from_prediction
from vigil.errors import InputError
from vigil.time_units import DAYS_PER_JULIAN_YEAR

def _with_model(targets: pd.DataFrame, i: int, model: PolynomialEphemeris) -> None:
    """Write the model's ephemeris columns into row i (quadratic columns only for a quadratic model)."""
    c = np.asarray(model.covariance_d2)
    values = {"t0_bjd_tdb": model.t0_bjd_tdb, "period_d": model.period_d, "t0_err_d": np.sqrt(max(c[0, 0], 0.0)),
              "period_err_d": np.sqrt(max(c[1, 1], 0.0)), "t0_period_cov_d2": c[0, 1]}
    if model.kind == "quadratic":
        values.update({schema.DP_DN_D: model.dp_dn_d, schema.DP_DN_ERR_D: np.sqrt(max(c[2, 2], 0.0)),
                       schema.T0_DP_DN_COV_D2: c[0, 2], schema.PERIOD_DP_DN_COV_D2: c[1, 2]})
    for column, value in values.items():
        if column not in targets.columns:
            targets[column] = np.nan
        targets.iloc[i, targets.columns.get_loc(column)] = float(value)


def assimilate_timings(targets: pd.DataFrame, timings: pd.DataFrame) -> pd.DataFrame:
    """Targets whose ephemerides include measured mid-times (target, mid_bjd_tdb, mid_err_d, and
    optionally epoch and forced as vigil.journal.Journal.timings gives them).

    The catalogue ephemeris acts as the prior (exact if it was itself a least-squares fit). A
    timing without an epoch takes the nearest whole epoch of the prediction. InputError when a
    timing that was not forced lies more than 5 combined sigma from its prediction.

    Examples
    --------
    >>> targets = pd.DataFrame([{"name": "b", "t0_bjd_tdb": 2460000.0, "t0_err_d": 1e-3, "period_d": 2.0,
    ...                          "period_err_d": 1e-5, "t0_period_cov_d2": 0.0}])
    >>> timing = pd.DataFrame({"target": ["b"], "mid_bjd_tdb": [2460200.0], "mid_err_d": [1e-3]})
    >>> float(assimilate_timings(targets, timing)["t0_err_d"].iloc[0]) < 1e-3
    True
    """
    out = targets.copy()
    models = target_ephemerides(out)
    by_name = {name: i for i, name in enumerate(out["name"])}
    for timing in timings.to_dict("records"):
        if timing["target"] not in by_name:
            raise InputError(f"journal timing of {timing['target']!r}: no such target in the targets file")
        i = by_name[timing["target"]]
        model = models[i]
        epoch = timing.get("epoch")
        epoch = int(round(model.epoch_at(timing["mid_bjd_tdb"]))) if epoch is None or pd.isna(epoch) else int(epoch)
        problem = far_from_prediction(model, epoch, timing["mid_bjd_tdb"], timing["mid_err_d"])
        if problem and not timing.get("forced", False):
            raise InputError(f"journal timing of {timing['target']!r} at BJD_TDB {timing['mid_bjd_tdb']}: {problem}; "
                             "refused (check its epoch, or record it with --force)")
        models[i] = model.updated(epoch, timing["mid_err_d"], timing["mid_bjd_tdb"])
        _with_model(out, i, models[i])
    return out


def refreshed(targets: pd.DataFrame, when: Time, timing_err_d: float) -> pd.DataFrame:
    """Targets after one refresh timing each (1-sigma timing_err_d) at the transit nearest `when`."""
    out = targets.copy()
    for i, model in enumerate(target_ephemerides(out)):
        epoch = int(round(model.epoch_at(when.tdb.jd)))
        _with_model(out, i, model.updated(epoch, timing_err_d))
    return out


def segments(targets: pd.DataFrame, start: Time, end: Time, every_years: float | None, timing_err_d: float):
    """(segment start, segment end, targets valid in it): refreshes at start + k * every_years."""
    if not every_years:
        return [(start, end, targets)]
    edges = np.arange(start.utc.jd, end.utc.jd, every_years * DAYS_PER_JULIAN_YEAR).tolist() + [end.utc.jd]
    pieces, current = [], targets
    for k, (lo, hi) in enumerate(zip(edges[:-1], edges[1:])):
        lo_time = Time(lo, format="jd", scale="utc")
        if k > 0:
            current = refreshed(current, lo_time, timing_err_d)
        pieces.append((lo_time, Time(hi, format="jd", scale="utc"), current))
    return pieces
