"""Ephemeris upkeep during a campaign: measured timings folded in, planned refreshes applied.

Both use the information (Kalman) update of a linear ephemeris theta = (T0, P) with covariance
C by a timing t at epoch n of 1-sigma s (derivation in staleness.refresh_sigma):
    gain g = C a / (s^2 + a^T C a),  theta_new = theta + g (t - a^T theta),  C_new = C - g a^T C,
with a = (1, n). A measured timing moves T0 and P; a planned refresh (its value unknown in
advance) only shrinks C. T0 stays at its reference epoch.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from astropy.time import Time

from vigil.errors import InputError
from vigil.ephemeris.staleness import refresh_sigma

DAYS_PER_YEAR = 365.25


def _state(row) -> tuple[np.ndarray, np.ndarray]:
    cov = row.t0_period_cov_d2
    return (np.array([row.t0_bjd_tdb, row.period_d]),
            np.array([[row.t0_err_d ** 2, cov], [cov, row.period_err_d ** 2]]))


def _with_state(targets: pd.DataFrame, i: int, theta: np.ndarray, covariance: np.ndarray) -> None:
    targets.iloc[i, targets.columns.get_indexer(["t0_bjd_tdb", "period_d", "t0_err_d", "period_err_d",
                                                 "t0_period_cov_d2"])] = [
        theta[0], theta[1], np.sqrt(max(covariance[0, 0], 0.0)), np.sqrt(max(covariance[1, 1], 0.0)),
        covariance[0, 1]]


def assimilate_timings(targets: pd.DataFrame, timings: pd.DataFrame) -> pd.DataFrame:
    """Targets whose ephemerides include measured mid-times (target, mid_bjd_tdb, mid_err_d).

    The catalog ephemeris acts as the prior (exact if it was itself a least-squares fit);
    each timing's epoch is the nearest whole number of periods from T0.
    """
    out = targets.copy()
    by_name = {name: i for i, name in enumerate(out["name"])}
    for timing in timings.itertuples(index=False):
        if timing.target not in by_name:
            raise InputError(f"journal timing of {timing.target!r}: no such target in the targets file")
        i = by_name[timing.target]
        theta, covariance = _state(out.iloc[i])
        epoch = round((timing.mid_bjd_tdb - theta[0]) / theta[1])
        a = np.array([1.0, float(epoch)])
        gain = covariance @ a / (timing.mid_err_d ** 2 + a @ covariance @ a)
        theta = theta + gain * (timing.mid_bjd_tdb - a @ theta)
        _with_state(out, i, theta, covariance - np.outer(gain, a @ covariance))
    return out


def refreshed(targets: pd.DataFrame, when: Time, timing_err_d: float) -> pd.DataFrame:
    """Targets after one refresh timing each (1-sigma timing_err_d) at the transit nearest `when`."""
    out = targets.copy()
    for i, row in enumerate(out.itertuples(index=False)):
        epoch = round((when.tdb.jd - row.t0_bjd_tdb) / row.period_d)
        sigma = refresh_sigma(row.t0_err_d, row.period_err_d, row.t0_period_cov_d2, epoch, timing_err_d)
        _with_state(out, i, np.array([row.t0_bjd_tdb, row.period_d]),
                    np.array([[sigma.t0_err_d ** 2, sigma.t0_period_cov_d2],
                              [sigma.t0_period_cov_d2, sigma.period_err_d ** 2]]))
    return out


def segments(targets: pd.DataFrame, start: Time, end: Time, every_years: float | None, timing_err_d: float):
    """(segment start, segment end, targets valid in it): refreshes at start + k * every_years."""
    if not every_years:
        return [(start, end, targets)]
    edges = np.arange(start.utc.jd, end.utc.jd, every_years * DAYS_PER_YEAR).tolist() + [end.utc.jd]
    pieces, current = [], targets
    for k, (lo, hi) in enumerate(zip(edges[:-1], edges[1:])):
        lo_time = Time(lo, format="jd", scale="utc")
        if k > 0:
            current = refreshed(current, lo_time, timing_err_d)
        pieces.append((lo_time, Time(hi, format="jd", scale="utc"), current))
    return pieces
