"""Linear transit ephemeris with propagated uncertainty.

T(n) = T0 + n P;  sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2 + 2 n cov(T0, P)
(standard first-order error propagation). Times are BJD_TDB, durations in days unless named.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from vigil.errors import InputError


def mid_sigma_d(epoch, t0_err_d, period_err_d, cov_d2=0.0):
    """1-sigma uncertainty of the mid-time of transit `epoch`, days (numpy-broadcast)."""
    n = np.asarray(epoch, dtype=float)
    variance = np.square(t0_err_d) + n * n * np.square(period_err_d) + 2.0 * n * np.asarray(cov_d2)
    return np.sqrt(np.maximum(variance, 0.0))


def epochs_between(t0_bjd_tdb: float, period_d: float, start_bjd_tdb: float, end_bjd_tdb: float) -> np.ndarray:
    """All integer epochs n with start <= T0 + n P <= end (both ends inclusive)."""
    first = int(np.ceil((start_bjd_tdb - t0_bjd_tdb) / period_d))
    last = int(np.floor((end_bjd_tdb - t0_bjd_tdb) / period_d))
    # The rounded quotient can land one epoch off an end that falls exactly on a mid-time;
    # settle each end with the same expression that gives the mid-times.
    while t0_bjd_tdb + (first - 1) * period_d >= start_bjd_tdb:
        first -= 1
    while t0_bjd_tdb + first * period_d < start_bjd_tdb:
        first += 1
    while t0_bjd_tdb + (last + 1) * period_d <= end_bjd_tdb:
        last += 1
    while t0_bjd_tdb + last * period_d > end_bjd_tdb:
        last -= 1
    return np.arange(first, last + 1, dtype=np.int64)


def project_transits(targets: pd.DataFrame, start_bjd_tdb: float, end_bjd_tdb: float) -> pd.DataFrame:
    """One row per transit of each target with mid-time in [start, end] (BJD_TDB).

    Columns: target, epoch, mid_bjd_tdb, mid_sigma_d, duration_h, ra_deg, dec_deg.
    """
    if not end_bjd_tdb > start_bjd_tdb:
        raise InputError("the end of the date range must come after its start")
    parts = []
    for row in targets.itertuples(index=False):
        epochs = epochs_between(row.t0_bjd_tdb, row.period_d, start_bjd_tdb, end_bjd_tdb)
        parts.append(pd.DataFrame({
            "target": row.name,
            "epoch": epochs,
            "mid_bjd_tdb": row.t0_bjd_tdb + epochs * row.period_d,
            "mid_sigma_d": mid_sigma_d(epochs, row.t0_err_d, row.period_err_d, row.t0_period_cov_d2),
            "duration_h": row.duration_h,
            "ra_deg": row.ra_deg,
            "dec_deg": row.dec_deg,
        }))
    columns = ["target", "epoch", "mid_bjd_tdb", "mid_sigma_d", "duration_h", "ra_deg", "dec_deg"]
    if not parts:
        return pd.DataFrame(columns=columns)
    return pd.concat(parts, ignore_index=True)[columns]
