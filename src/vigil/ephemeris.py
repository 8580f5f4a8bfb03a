"""Linear transit ephemeris with propagated uncertainty.

T(n) = T0 + n P;  sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2 + 2 n cov(T0, P)
(standard first-order error propagation). Times are BJD_TDB, durations in days unless named.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from vigil import occultation
from vigil.errors import ArgumentError, InputError


def mid_sigma_d(epoch, t0_err_d, period_err_d, cov_d2=0.0):
    """1-sigma uncertainty of the mid-time of transit `epoch`, days (numpy-broadcast)."""
    n = np.asarray(epoch, dtype=float)
    variance = np.square(t0_err_d) + n * n * np.square(period_err_d) + 2.0 * n * np.asarray(cov_d2)
    return np.sqrt(np.maximum(variance, 0.0))


def epochs_between(t0_bjd_tdb: float, period_d: float, start_bjd_tdb: float, end_bjd_tdb: float) -> np.ndarray:
    """All integer epochs n with start <= T0 + n P <= end (both ends inclusive)."""
    first, last = epoch_range(t0_bjd_tdb, period_d, start_bjd_tdb, end_bjd_tdb)
    return np.arange(first, last + 1, dtype=np.int64)


def epoch_range(t0_bjd_tdb: float, period_d: float, start_bjd_tdb: float, end_bjd_tdb: float) -> tuple[int, int]:
    """(first, last) integer epoch with start <= T0 + n P <= end; last < first when there is none."""
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
    return first, last


EVENTS = ("transit", "occultation")
ORBIT_COLUMNS = {"eccentricity": (0.0, 0.95), "omega_deg": (-360.0, 360.0), "inclination_deg": (0.0, 180.0)}


def _orbit_column(targets: pd.DataFrame, column: str) -> np.ndarray:
    """A numeric orbit column (NaN where empty); InputError for text or values out of range."""
    if column not in targets.columns:
        return np.full(len(targets), np.nan)
    text = targets[column].astype(str).str.strip().replace({"": "nan", "None": "nan"})
    values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float)
    low, high = ORBIT_COLUMNS[column]
    bad = (np.isnan(values) & (text.str.lower() != "nan").to_numpy()) | (values < low) | (values > high)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(f"target {targets['name'].iat[i]!r}, field {column}: expected a number from {low:g} to "
                         f"{high:g}, got {targets[column].iat[i]!r}")
    return values


def event_offsets(targets: pd.DataFrame, event: str) -> tuple[np.ndarray, np.ndarray]:
    """Per target: (mid-time offset from the transit of the same epoch in days, event duration in hours).

    Occultations need eccentricity and omega_deg (argument of periastron; both 0 for a circular
    orbit, which may be left empty) and use inclination_deg when given (else 90); the offset is
    exact in e at the conjunctions plus the inclination term of Winn (2010) eq. 33.
    """
    if event not in EVENTS:
        raise ArgumentError("event", f"expected transit or occultation, got {event!r}")
    duration_h = targets["duration_h"].to_numpy(dtype=float)
    if event == "transit":
        return np.zeros(len(targets)), duration_h
    e = np.nan_to_num(_orbit_column(targets, "eccentricity"), nan=0.0)
    omega = _orbit_column(targets, "omega_deg")
    missing = (e > 0) & np.isnan(omega)
    if missing.any():
        name = targets["name"].iat[int(np.flatnonzero(missing)[0])]
        raise InputError(f"target {name!r}, field omega_deg: needed for the occultation of an eccentric orbit")
    omega = np.nan_to_num(omega, nan=90.0)
    inclination = np.nan_to_num(_orbit_column(targets, "inclination_deg"), nan=90.0)
    period = targets["period_d"].to_numpy(dtype=float)
    offset = occultation.occultation_mid_bjd_tdb(0.0, period, e, omega, inclination)
    return offset, occultation.occultation_duration_h(duration_h, e, omega)


def project_transits(targets: pd.DataFrame, start_bjd_tdb: float, end_bjd_tdb: float,
                     event: str = "transit") -> pd.DataFrame:
    """One row per event (transit or occultation) of each target with mid-time in [start, end] (BJD_TDB).

    Columns: target, event, epoch, mid_bjd_tdb, mid_sigma_d, duration_h, period_d, ra_deg, dec_deg. An
    occultation carries the epoch of the transit before it and that transit's timing sigma.
    """
    if not end_bjd_tdb > start_bjd_tdb:
        raise InputError("the end of the date range must come after its start")
    offsets, durations = event_offsets(targets, event)
    t0 = targets["t0_bjd_tdb"].to_numpy(dtype=float) + offsets
    period = targets["period_d"].to_numpy(dtype=float)
    ranges = np.array([epoch_range(t, p, start_bjd_tdb, end_bjd_tdb) for t, p in zip(t0, period)],
                      dtype=np.int64).reshape(-1, 2)
    first, counts = ranges[:, 0], np.maximum(ranges[:, 1] - ranges[:, 0] + 1, 0)
    which = np.repeat(np.arange(len(targets)), counts)
    epochs = first[which] + (np.arange(which.size) - np.repeat(np.cumsum(counts) - counts, counts))
    names = targets["name"].astype(str).to_numpy()
    column = lambda name: targets[name].to_numpy(dtype=float)[which]  # noqa: E731
    return pd.DataFrame({
        "target": names[which],
        "event": pd.Categorical([event] * which.size, categories=EVENTS),
        "epoch": epochs,
        "mid_bjd_tdb": t0[which] + epochs * period[which],
        "mid_sigma_d": mid_sigma_d(epochs, column("t0_err_d"), column("period_err_d"), column("t0_period_cov_d2")),
        "duration_h": durations[which],
        "period_d": period[which],
        "ra_deg": column("ra_deg"),
        "dec_deg": column("dec_deg"),
    })
