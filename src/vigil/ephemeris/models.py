"""Ephemeris models behind one interface: which transits fall in a span, when, and how sure.

Every stage asks a target's ephemeris the same three things (`Ephemeris`): the epochs whose
predicted mid-time lies in a span, the predicted mid-times (BJD_TDB, days) and their 1-sigma
(days). Epoch numbers always count from the catalogue's T0: a model may be referenced to another
epoch internally (`t0_epoch`), but the numbers it takes and gives are the catalogue's.

- Polynomial (linear or quadratic in epoch), k = n - t0_epoch:
      T(n) = T0 + k P + k^2 dP/dN / 2,
      sigma_T(n)^2 = b^T C b,  b = (1, k, k^2 / 2),  C the covariance of (T0, P, dP/dN)
  (first-order error propagation, exact for a model linear in its parameters). P is the
  period at t0_epoch; dP/dN (days per epoch) < 0 for a shrinking orbit. Linear: dP/dN = 0 with
  no uncertainty, so sigma_T(n)^2 = sigma_T0^2 + k^2 sigma_P^2 + 2 k cov(T0, P).
- Table: predicted mid-times and 1-sigma per epoch from the observer's own dynamical fit of a
  system with timing variations (`vigil.ephemeris.table`), used inside its span only.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Protocol

import numpy as np
import pandas as pd

from vigil import schema
from vigil.errors import InputError

#: Optional targets columns of the quadratic term (days per epoch, and covariances; named and
#: described in vigil.schema) with the range each value must lie in.
QUADRATIC_COLUMNS = {schema.DP_DN_D: (-1.0, 1.0), schema.DP_DN_ERR_D: (0.0, 1.0), schema.T0_DP_DN_COV_D2: (-1.0, 1.0),
                     schema.PERIOD_DP_DN_COV_D2: (-1.0, 1.0)}
#: Optional targets column: the epoch number (catalogue count) of t0_bjd_tdb; 0 when absent.
EPOCH_ORIGIN_COLUMN = schema.T0_EPOCH


class Ephemeris(Protocol):
    """What every stage asks of a target's ephemeris (epochs counted from the catalogue's T0)."""

    kind: str

    def epoch_range(self, start_bjd_tdb: float, end_bjd_tdb: float) -> tuple[int, int]:
        """(first, last) epoch with start <= T(n) <= end; last < first when there is none."""

    def mid_bjd_tdb(self, epochs) -> np.ndarray:
        """Predicted mid-times, BJD_TDB (days)."""

    def mid_sigma_d(self, epochs) -> np.ndarray:
        """1-sigma uncertainty of those mid-times, days."""


def polynomial_sigma_d(k, t0_var_d2, t0_period_cov_d2, period_var_d2, t0_dp_dn_cov_d2=0.0,
                       period_dp_dn_cov_d2=0.0, dp_dn_var_d2=0.0):
    """sigma_T (days) of T = T0 + k P + k^2 Q / 2 at k epochs from T0, from the covariance of (T0, P, Q).

    Expands b^T C b with b = (1, k, k^2/2); numpy-broadcast.

    Examples
    --------
    >>> float(polynomial_sigma_d(10, 1e-6, 0.0, 1e-8))
    0.001414213562373095
    """
    k = np.asarray(k, dtype=float)
    half_k2 = 0.5 * k * k
    variance = (t0_var_d2 + 2 * k * np.asarray(t0_period_cov_d2) + k * k * np.asarray(period_var_d2)
                + 2 * half_k2 * np.asarray(t0_dp_dn_cov_d2) + 2 * k * half_k2 * np.asarray(period_dp_dn_cov_d2)
                + half_k2 * half_k2 * np.asarray(dp_dn_var_d2))
    return np.sqrt(np.maximum(variance, 0.0))


def mid_sigma_d(epoch, t0_err_d, period_err_d, cov_d2=0.0):
    """1-sigma of the mid-time of transit `epoch` of a linear ephemeris, days (numpy-broadcast).

    Examples
    --------
    >>> float(mid_sigma_d(100, 3e-4, 4e-6))
    0.0005
    """
    return polynomial_sigma_d(epoch, np.square(t0_err_d), cov_d2, np.square(period_err_d))


@dataclass(frozen=True, eq=False)
class PolynomialEphemeris:
    """T(n) = T0 + k P + k^2 dp_dn / 2 with k = n - t0_epoch (module docstring); times BJD_TDB, days.

    covariance_d2 is the 3 x 3 covariance of (T0, P, dP/dN). Fields may be numpy arrays of one
    length (one target each), as `catalogue_ephemeris` builds them for vectorised prediction.

    Examples
    --------
    >>> model = linear_ephemeris(2460000.0, 1e-4, 2.5, 1e-6)
    >>> float(model.mid_bjd_tdb(4)[()])
    2460010.0
    """

    t0_bjd_tdb: float
    period_d: float
    dp_dn_d: float
    covariance_d2: np.ndarray
    t0_epoch: int = 0

    @property
    def kind(self) -> str:
        """'quadratic' when dP/dN or its uncertainty is non-zero, else 'linear'."""
        quadratic = np.any(np.asarray(self.dp_dn_d) != 0) or np.any(np.asarray(self.covariance_d2)[..., 2, 2] > 0)
        return "quadratic" if quadratic else "linear"

    @property
    def t0_err_d(self):
        return np.sqrt(np.asarray(self.covariance_d2)[..., 0, 0])

    @property
    def period_err_d(self):
        return np.sqrt(np.asarray(self.covariance_d2)[..., 1, 1])

    @property
    def dp_dn_err_d(self):
        return np.sqrt(np.asarray(self.covariance_d2)[..., 2, 2])

    @property
    def t0_period_cov_d2(self):
        return np.asarray(self.covariance_d2)[..., 0, 1]

    def mid_bjd_tdb(self, epochs, rows=None) -> np.ndarray:
        """Predicted mid-times (BJD_TDB); for a stacked ephemeris, `rows` picks each epoch's target."""
        pick = _picker(rows)
        k = np.asarray(epochs, dtype=float) - pick(self.t0_epoch)
        return pick(self.t0_bjd_tdb) + k * pick(self.period_d) + 0.5 * k * k * pick(self.dp_dn_d)

    def mid_sigma_d(self, epochs, rows=None) -> np.ndarray:
        """1-sigma of the mid-times (days); `rows` as for mid_bjd_tdb."""
        pick = _picker(rows)
        c = np.asarray(self.covariance_d2, dtype=float)
        k = np.asarray(epochs, dtype=float) - pick(self.t0_epoch)
        linear = not np.any(c[..., 2, :])  # skip the dP/dN terms of linear ephemerides
        quad = (lambda i, j: 0.0) if linear else (lambda i, j: pick(c[..., i, j]))  # noqa: E731
        return polynomial_sigma_d(k, pick(c[..., 0, 0]), pick(c[..., 0, 1]), pick(c[..., 1, 1]), quad(0, 2),
                                  quad(1, 2), quad(2, 2))

    def epoch_range(self, start_bjd_tdb: float, end_bjd_tdb: float) -> tuple[int, int]:
        first, last = self.epoch_ranges(start_bjd_tdb, end_bjd_tdb)
        return int(first[0]), int(last[0])

    def epoch_ranges(self, start_bjd_tdb, end_bjd_tdb) -> tuple[np.ndarray, np.ndarray]:
        """First and last epoch with start <= T(n) <= end (int64 arrays of at least one dimension, numpy-broadcast over a stacked
        ephemeris and the span ends, BJD_TDB); last < first where there is none.

        Examples
        --------
        >>> both = catalogue_ephemeris(pd.DataFrame({"name": ["b", "c"], "t0_bjd_tdb": [2460000.0, 2460000.5],
        ...     "t0_err_d": [0.0, 0.0], "period_d": [2.0, 3.0], "period_err_d": [0.0, 0.0]}))
        >>> [a.tolist() for a in both.epoch_ranges(2460001.0, 2460006.0)]
        [[1, 1], [3, 1]]
        """
        first = np.atleast_1d(np.ceil(self.epoch_at(start_bjd_tdb)).astype(np.int64))
        last = np.atleast_1d(np.floor(self.epoch_at(end_bjd_tdb)).astype(np.int64))
        # The rounded root can land one epoch off an end that falls exactly on a mid-time;
        # settle each end with the same expression that gives the mid-times.
        _step_while(first, -1, lambda n: self.mid_bjd_tdb(n - 1) >= start_bjd_tdb)
        _step_while(first, +1, lambda n: self.mid_bjd_tdb(n) < start_bjd_tdb)
        _step_while(last, +1, lambda n: self.mid_bjd_tdb(n + 1) <= end_bjd_tdb)
        _step_while(last, -1, lambda n: self.mid_bjd_tdb(n) > end_bjd_tdb)
        return first, last

    def epoch_at(self, bjd_tdb):
        """The (fractional) epoch whose predicted mid-time is bjd_tdb (numpy-broadcast): root of
        Q k^2/2 + P k + c = 0 in the cancellation-free form k = -2c / (P + sqrt(P^2 - 2 Q c))."""
        c = np.asarray(self.t0_bjd_tdb, dtype=float) - np.asarray(bjd_tdb, dtype=float)
        period = np.asarray(self.period_d, dtype=float)
        discriminant = period**2 - 2.0 * np.asarray(self.dp_dn_d, dtype=float) * c
        if np.any(discriminant < 0):
            date = float(np.broadcast_to(bjd_tdb, discriminant.shape)[discriminant < 0][0])
            raise InputError(f"ephemeris: the quadratic term reaches zero period before BJD_TDB {date:.1f}; "
                             "check the sign and units of dp_dn_d (days per epoch)")
        return self.t0_epoch - 2.0 * c / (period + np.sqrt(discriminant))

    def row(self, i: int) -> "PolynomialEphemeris":
        """The ephemeris of target i of a stacked ephemeris (fields as Python scalars)."""
        return PolynomialEphemeris(float(self.t0_bjd_tdb[i]), float(self.period_d[i]), float(self.dp_dn_d[i]),
                                   np.array(self.covariance_d2[i]), int(self.t0_epoch[i]))

    def updated(self, epoch: int, timing_err_d: float, mid_bjd_tdb: float | None = None) -> "PolynomialEphemeris":
        """This ephemeris updated by one timing at `epoch` of 1-sigma timing_err_d (days).

        Information (Kalman) update of theta = (T0, P, dP/dN) with covariance C by a timing
        t = a^T theta + e, a = (1, k, k^2/2), e ~ N(0, s^2): with u = C a,
            theta_new = theta + u (t - a^T theta) / (s^2 + a^T u),  C_new = C - u u^T / (s^2 + a^T u)
        (exact when the ephemeris is itself a least-squares fit or a Gaussian prior; Sherman-Morrison
        needs no inverse of C, so zero uncertainties are fine). With mid_bjd_tdb None (a timing
        planned, its value unknown) only C shrinks. T0 stays at t0_epoch.

        Examples
        --------
        >>> before = linear_ephemeris(2460000.0, 1e-3, 2.0, 0.0)  # sigma_T = 1e-3 d at every epoch
        >>> round(float(before.updated(100, 1e-3).mid_sigma_d(100)) / 1e-3, 3)  # equal weights: 1/sqrt(2)
        0.707
        """
        k = float(epoch) - float(self.t0_epoch)
        a = np.array([1.0, k, 0.5 * k * k])
        c = np.asarray(self.covariance_d2, dtype=float)
        u = c @ a
        denominator = timing_err_d**2 + a @ u
        shift = 0.0 if mid_bjd_tdb is None else (mid_bjd_tdb - float(self.mid_bjd_tdb(epoch))) / denominator
        return PolynomialEphemeris(float(self.t0_bjd_tdb) + u[0] * shift, float(self.period_d) + u[1] * shift,
                                   float(self.dp_dn_d) + u[2] * shift, c - np.outer(u, u) / denominator,
                                   int(self.t0_epoch))


def _step_while(epochs: np.ndarray, step: int, condition) -> None:
    """Move each epoch by step (in place) while condition(epochs) holds for it."""
    moving = np.asarray(condition(epochs), dtype=bool)
    while moving.any():
        epochs[moving] += step
        moving &= np.asarray(condition(epochs), dtype=bool)


def _picker(rows):
    """Index a stacked field by `rows` (None: the field as it is)."""
    if rows is None:
        return lambda value: value
    return lambda value: np.asarray(value)[rows]


def linear_ephemeris(t0_bjd_tdb: float, t0_err_d: float, period_d: float, period_err_d: float,
                     t0_period_cov_d2: float = 0.0, t0_epoch: int = 0) -> PolynomialEphemeris:
    """A linear ephemeris T(n) = T0 + (n - t0_epoch) P with its (T0, P) covariance.

    Examples
    --------
    >>> linear_ephemeris(2460000.0, 1e-4, 2.5, 1e-6).kind
    'linear'
    """
    covariance = np.zeros((3, 3))
    covariance[:2, :2] = [[t0_err_d**2, t0_period_cov_d2], [t0_period_cov_d2, period_err_d**2]]
    return PolynomialEphemeris(t0_bjd_tdb, period_d, 0.0, covariance, t0_epoch)


def row_label(targets: pd.DataFrame, i: int) -> str:
    """"FILE: line N, target 'X'" for row i of a table read from a file (its attrs["source_rows"],
    set by the reader), else "target 'X'": the start of a message about that row."""
    name = str(targets["name"].iat[i])
    where = targets.attrs.get("source_rows", {}).get(name)
    return f"{where}, target {name!r}" if where else f"target {name!r}"


def numeric_column(targets: pd.DataFrame, column: str, low: float, high: float) -> np.ndarray:
    """An optional numeric targets column (NaN where empty); InputError naming the row (`row_label`)
    and field for text or values outside [low, high]."""
    if column not in targets.columns:
        return np.full(len(targets), np.nan)
    text = targets[column].astype(str).str.strip().replace({"": "nan", "None": "nan"}).fillna("nan")
    values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float)
    bad = (np.isnan(values) & (text.str.lower() != "nan").to_numpy()) | (values < low) | (values > high)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(f"{row_label(targets, i)}, field {column}: expected a number from {low:g} to "
                         f"{high:g}, got {targets[column].iat[i]!r}")
    return values


def catalogue_ephemeris(targets: pd.DataFrame) -> PolynomialEphemeris:
    """The polynomial ephemerides of all targets rows as one stacked PolynomialEphemeris (linear
    where dp_dn_d and dp_dn_err_d are absent or zero).

    Reads t0_bjd_tdb, t0_err_d, period_d, period_err_d, optional t0_period_cov_d2, the optional
    QUADRATIC_COLUMNS and t0_epoch. InputError names the row (`row_label`) and field when the covariance of
    (T0, P, dP/dN) is not positive semi-definite or t0_epoch is not a whole number.

    Examples
    --------
    >>> table = pd.DataFrame({"name": ["b"], "t0_bjd_tdb": [2460000.0], "t0_err_d": [1e-4], "period_d": [2.0],
    ...                       "period_err_d": [1e-6]})
    >>> catalogue_ephemeris(table).mid_bjd_tdb([5], rows=[0]).tolist()
    [2460010.0]
    """
    quad = {c: np.nan_to_num(numeric_column(targets, c, *bounds)) for c, bounds in QUADRATIC_COLUMNS.items()}
    origin = numeric_column(targets, EPOCH_ORIGIN_COLUMN, -1e9, 1e9)
    fractional = np.isfinite(origin) & (origin != np.round(origin))
    if fractional.any():
        raise InputError(f"{row_label(targets, int(np.flatnonzero(fractional)[0]))}, field {EPOCH_ORIGIN_COLUMN}: "
                         "expected a whole epoch number")
    t0_tp = (np.nan_to_num(pd.to_numeric(targets["t0_period_cov_d2"]).to_numpy(dtype=float))
             if "t0_period_cov_d2" in targets.columns else np.zeros(len(targets)))
    c = np.empty((len(targets), 3, 3))
    c[:, 0, 0] = np.square(targets["t0_err_d"].to_numpy(dtype=float))
    c[:, 1, 1] = np.square(targets["period_err_d"].to_numpy(dtype=float))
    c[:, 2, 2] = np.square(quad[schema.DP_DN_ERR_D])
    c[:, 0, 1] = c[:, 1, 0] = t0_tp
    c[:, 0, 2] = c[:, 2, 0] = quad[schema.T0_DP_DN_COV_D2]
    c[:, 1, 2] = c[:, 2, 1] = quad[schema.PERIOD_DP_DN_COV_D2]
    scale = np.sqrt(np.maximum(np.diagonal(c, axis1=1, axis2=2), 1e-300))
    indefinite = np.linalg.eigvalsh(c / (scale[:, :, None] * scale[:, None, :])).min(axis=1) < -1e-9
    if indefinite.any():
        raise InputError(f"{row_label(targets, int(np.flatnonzero(indefinite)[0]))}, fields t0_period_cov_d2, "
                         f"{schema.T0_DP_DN_COV_D2}, {schema.PERIOD_DP_DN_COV_D2}: the covariance of (T0, P, dP/dN) "
                         "must be positive semi-definite (|correlations| <= 1)")
    return PolynomialEphemeris(targets["t0_bjd_tdb"].to_numpy(dtype=float), targets["period_d"].to_numpy(dtype=float),
                               quad[schema.DP_DN_D], c, np.nan_to_num(origin).astype(np.int64))


def target_ephemerides(targets: pd.DataFrame) -> list[PolynomialEphemeris]:
    """The polynomial ephemeris of each targets row, one object each (`catalogue_ephemeris`).

    Examples
    --------
    >>> table = pd.DataFrame({"name": ["b"], "t0_bjd_tdb": [2460000.0], "t0_err_d": [1e-4], "period_d": [2.0],
    ...                       "period_err_d": [1e-6]})
    >>> target_ephemerides(table)[0].kind
    'linear'
    """
    both = catalogue_ephemeris(targets)
    return [both.row(i) for i in range(len(targets))]


def epochs_between(model: Ephemeris, start_bjd_tdb: float, end_bjd_tdb: float) -> np.ndarray:
    """All epochs n with start <= T(n) <= end (both inclusive), as an int64 array.

    Examples
    --------
    >>> epochs_between(linear_ephemeris(2460000.0, 0.0, 2.0, 0.0), 2460001.0, 2460006.0).tolist()
    [1, 2, 3]
    """
    first, last = model.epoch_range(start_bjd_tdb, end_bjd_tdb)
    return np.arange(first, last + 1, dtype=np.int64)
