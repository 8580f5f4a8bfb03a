"""When a target's ephemeris goes stale, and how far one new timing refreshes it.

A linear ephemeris predicts transit n (counted from T0) with the 1-sigma uncertainty
    sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2 + 2 n cov(T0, P)
(standard first-order error propagation; vigil.ephemeris.models, which also gives the quartic
of a quadratic ephemeris). Windows are padded by K sigma_T(n) (the window padding's sigma_k).
The ephemeris is stale from the first transit
whose padded uncertainty K sigma_T(n) exceeds a limit, either
  - a fraction of the transit duration, by default DURATION_FRACTION = 0.25 (a planning choice:
    past it, a K-sigma timing error moves a quarter of the transit out of a window centred on
    the prediction), or
  - the out-of-transit baseline wanted on each side (hours).
K and the baseline default to those of the window padding (1 sigma, 1 hour; the visibility
stage passes its own and asks `stale_flags` for the stale column of every window).

Times are BJD_TDB (days); each stale date is also given as an astropy Time in TDB.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd
from astropy.time import Time

from vigil.ephemeris.models import PolynomialEphemeris, linear_ephemeris, mid_sigma_d, target_ephemerides
from vigil.errors import InputError
from vigil.textfile import positive_number
from vigil.time_units import HOURS_PER_DAY

DURATION_FRACTION = 0.25
DEFAULT_SIGMA_K = 1.0
DEFAULT_BASELINE_H = 1.0
_WHOLE_FLOAT_LIMIT = 2.0**52
STALENESS_INPUTS = ("name", "t0_bjd_tdb", "t0_err_d", "period_d", "period_err_d", "duration_h")


def first_stale_epoch(limit_d: float, t0_err_d: float, period_err_d: float, cov_d2: float = 0.0,
                      sigma_k: float = DEFAULT_SIGMA_K, from_epoch: int = 0) -> float:
    """First whole epoch n >= from_epoch with K sigma_T(n) > limit_d (days); inf when there is none.

    Closed form: K sigma_T(n) > L  <=>  q(n) = sigma_P^2 n^2 + 2 cov n + sigma_T0^2 - (L/K)^2 > 0.
    If q(from_epoch) > 0 the ephemeris is stale already. Otherwise from_epoch lies between the
    roots of q, and the answer is the first whole number past the larger root; with sigma_P = 0
    and cov <= 0, q never becomes positive (never stale).
    """
    positive_number("limit_d", limit_d, "days")
    positive_number("sigma_k", sigma_k, "(a multiple of sigma)")

    def stale(n: float) -> bool:
        return bool(sigma_k * mid_sigma_d(n, t0_err_d, period_err_d, cov_d2) > limit_d)

    start = float(from_epoch)
    if stale(start):
        return start
    root = _larger_root(period_err_d**2, 2.0 * cov_d2, t0_err_d**2 - (limit_d / sigma_k) ** 2)
    if not math.isfinite(root):
        return math.inf
    epoch = max(start, math.floor(root) + 1.0)
    if epoch >= _WHOLE_FLOAT_LIMIT:
        return epoch
    # A root computed in floating point can sit a hair off a whole number: settle that one
    # step with the same expression that defines staleness.
    if epoch - 1.0 > start and stale(epoch - 1.0):
        return epoch - 1.0
    return epoch if stale(epoch) else epoch + 1.0


def _larger_root(a: float, b: float, c: float) -> float:
    """Larger real root of a n^2 + b n + c (a >= 0) where the polynomial is <= 0 somewhere; inf
    when it stays <= 0 for ever. Uses the cancellation-free form of the quadratic formula."""
    if a == 0.0:
        return -c / b if b > 0 else math.inf
    q = -0.5 * (b + math.copysign(math.sqrt(max(b * b - 4.0 * a * c, 0.0)), b))
    if q == 0.0:
        return 0.0
    return max(q / a, c / q)


@dataclass(frozen=True)
class StaleDate:
    """The first stale transit: epoch (from T0), mid-time BJD_TDB (d), the same as a TDB Time.

    When the ephemeris never goes stale, epoch and bjd_tdb are inf and time is None.
    """

    epoch: float
    bjd_tdb: float
    time: Time | None


def model_first_stale_epoch(model: PolynomialEphemeris, limit_d: float, sigma_k: float = DEFAULT_SIGMA_K,
                            from_epoch: int = 0) -> float:
    """First epoch n >= from_epoch (catalogue numbering) with K sigma_T(n) > limit_d; inf when none.

    Linear models use `first_stale_epoch`. For a quadratic one, K sigma_T(n) > L where the quartic
    b^T C b - (L/K)^2 (b = (1, k, k^2/2)) is positive: the answer is the first whole epoch past
    the first real root beyond from_epoch where it turns positive.

    Examples
    --------
    >>> from vigil.ephemeris.models import linear_ephemeris
    >>> model_first_stale_epoch(linear_ephemeris(2460000.0, 0.0, 1.0, 1e-4), 0.01)
    101.0
    """
    c = np.asarray(model.covariance_d2, dtype=float)
    origin = int(model.t0_epoch)
    if not np.any(c[2]):
        return origin + first_stale_epoch(limit_d, math.sqrt(c[0, 0]), math.sqrt(c[1, 1]), c[0, 1], sigma_k,
                                          from_epoch - origin)
    positive_number("limit_d", limit_d, "days")

    def stale(n: float) -> bool:
        return bool(sigma_k * model.mid_sigma_d(n) > limit_d)

    if stale(from_epoch):
        return float(from_epoch)
    # b^T C b - (L/K)^2 as a polynomial in k, highest power first.
    quartic = [c[2, 2] / 4, c[1, 2], c[1, 1] + c[0, 2], 2 * c[0, 1], c[0, 0] - (limit_d / sigma_k) ** 2]
    roots = np.roots(quartic)
    real = np.sort(roots[np.abs(roots.imag) <= 1e-9 * np.maximum(np.abs(roots.real), 1.0)].real) + origin
    for root in real[real >= from_epoch]:
        for epoch in (math.floor(root), math.floor(root) + 1.0, math.floor(root) + 2.0):
            if epoch >= from_epoch and stale(epoch):
                return float(epoch)
    return math.inf


def stale_date(model: PolynomialEphemeris, limit_d: float, sigma_k: float = DEFAULT_SIGMA_K,
               after: Time | None = None) -> StaleDate:
    """The first transit at or after `after` (default: the model's T0) whose K sigma_T exceeds limit_d (days)."""
    from_epoch = int(model.t0_epoch) if after is None else math.ceil(model.epoch_at(after.tdb.jd))
    epoch = model_first_stale_epoch(model, limit_d, sigma_k, from_epoch)
    if not math.isfinite(epoch):
        return StaleDate(math.inf, math.inf, None)
    bjd = float(model.mid_bjd_tdb(epoch))
    return StaleDate(epoch, bjd, Time(bjd, format="jd", scale="tdb"))


def staleness(targets: pd.DataFrame, duration_fraction: float = DURATION_FRACTION,
              baseline_h: float = DEFAULT_BASELINE_H, sigma_k: float = DEFAULT_SIGMA_K,
              after: Time | None = None) -> pd.DataFrame:
    """Per target, when K sigma_T first exceeds duration_fraction x duration and when it exceeds baseline_h.

    targets: name, t0_bjd_tdb, t0_err_d, period_d, period_err_d, duration_h, optional
    t0_period_cov_d2 and quadratic columns (vigil.ephemeris.models). Counts transits from `after`
    (a Time; default each T0). Columns: name, duration_limit_h, stale_by_duration_epoch,
    stale_by_duration_bjd_tdb, stale_by_duration_time, baseline_h, stale_by_baseline_epoch,
    stale_by_baseline_bjd_tdb, stale_by_baseline_time (epochs and BJD_TDB inf, times None, when
    never stale).
    """
    missing = [c for c in STALENESS_INPUTS if c not in targets.columns]
    if missing:
        raise InputError(f"targets: missing column(s) {', '.join(missing)} needed for staleness")
    positive_number("duration_fraction", duration_fraction, "(a fraction of the transit duration)")
    positive_number("baseline_h", baseline_h, "hours")
    rows = []
    for row, model in zip(targets.to_dict("records"), target_ephemerides(targets)):
        limit_h = duration_fraction * row["duration_h"]
        by_duration = stale_date(model, limit_h / HOURS_PER_DAY, sigma_k, after)
        by_baseline = stale_date(model, baseline_h / HOURS_PER_DAY, sigma_k, after)
        rows.append({"name": row["name"], "duration_limit_h": limit_h,
                     **_flat("stale_by_duration", by_duration), "baseline_h": baseline_h,
                     **_flat("stale_by_baseline", by_baseline)})
    return pd.DataFrame(rows)


def stale_flags(mid_sigma_d, duration_h, sigma_k: float, baseline_h: float) -> np.ndarray:
    """True where the timing pad K sigma exceeds DURATION_FRACTION of the duration or the baseline.

    mid_sigma_d in days, duration_h and baseline_h in hours; numpy-broadcast.

    Examples
    --------
    >>> stale_flags([0.001, 0.03], 2.0, 1.0, 1.0).tolist()
    [False, True]
    """
    pad_h = sigma_k * np.asarray(mid_sigma_d, dtype=float) * HOURS_PER_DAY
    return (pad_h > DURATION_FRACTION * np.asarray(duration_h, dtype=float)) | (pad_h > baseline_h)


def _flat(prefix: str, date: StaleDate) -> dict:
    return {f"{prefix}_epoch": date.epoch, f"{prefix}_bjd_tdb": date.bjd_tdb, f"{prefix}_time": date.time}


@dataclass(frozen=True)
class EphemerisSigma:
    """Uncertainty of a linear ephemeris: sigma_T0 (d), sigma_P (d), cov(T0, P) (d^2)."""

    t0_err_d: float
    period_err_d: float
    t0_period_cov_d2: float


def refresh_sigma(t0_err_d: float, period_err_d: float, cov_d2: float, epoch: int, timing_err_d: float) -> EphemerisSigma:
    """The ephemeris uncertainty once one more mid-time, of 1-sigma timing_err_d (d), is measured at `epoch`.

    Derivation. A timing at epoch n measures t = T0 + n P + e with e ~ N(0, s^2), that is
    t = a^T theta + e with a = (1, n) and theta = (T0, P). In weighted least squares the
    information matrix (inverse covariance) of theta is the sum of a_i a_i^T / s_i^2 over the
    timings, so one more timing adds a a^T / s^2:
        C_new = (C^-1 + a a^T / s^2)^-1,   C = [[sigma_T0^2, cov], [cov, sigma_P^2]].
    This is exact when the current ephemeris is itself such a fit (or a Gaussian prior). By the
    Sherman-Morrison identity, with u = C a,
        C_new = C - u u^T / (s^2 + a^T C a),
    which needs no inverse of C (so sigma_P = 0 is fine). For any epoch m, with b = (1, m),
        sigma_new(m)^2 = b^T C_new b = sigma_T(m)^2 - (b^T C a)^2 / (s^2 + sigma_T(n)^2) <= sigma_T(m)^2,
    so a refresh never widens a prediction; at m = n it is the inverse-variance combination
    sigma_T(n)^2 s^2 / (sigma_T(n)^2 + s^2). Before the timing is made its value is unknown and
    the expected T0 and P are unchanged, so only the uncertainty is returned, with T0 at the same
    reference epoch as before.
    """
    positive_number("timing_err_d", timing_err_d, "days")
    if isinstance(epoch, bool) or not float(epoch).is_integer():
        raise InputError(f"epoch: expected a whole transit number, got {epoch!r}")
    refreshed = linear_ephemeris(0.0, t0_err_d, 1.0, period_err_d, cov_d2).updated(int(epoch), timing_err_d).covariance_d2
    return EphemerisSigma(float(math.sqrt(max(refreshed[0, 0], 0.0))), float(math.sqrt(max(refreshed[1, 1], 0.0))),
                          float(refreshed[0, 1]))
