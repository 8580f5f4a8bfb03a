"""Weighted least-squares ephemeris fits, with a prior, robust to outliers, linear or quadratic.

Model: T(n) = T0 + k P + k^2 dP/dN / 2 with k = n - n_ref, n_ref the whole epoch nearest the
timings' weighted mean (where T0 and P are least correlated). Epochs keep the caller's
numbering; n_ref only moves the reference inside the fit.

Prior. A catalogue ephemeris (a PolynomialEphemeris with its covariance) enters as Gaussian
pseudo-observations of its own parameters (T0 and P at its t0_epoch, and dP/dN when it has an
uncertainty), so the fit is the information update of what was known: with timings consistent
with it, no prediction becomes less certain. Without a prior only the timings count.

Solution: the whitened system [W^1/2 A; L^-1 J] theta = [W^1/2 y; L^-1 r] (C_prior = L L^T) is
solved by SVD with scaled columns; the covariance is (M^T M)^-1 from the same SVD.

Outliers (rule "leave-one-out > 5 sigma"): each timing is compared with the prediction of the
fit to all the others, in units of their combined sigma (the deleted residual
|r_i| / (sigma_i sqrt(1 - h_i)), h_i its leverage). While the worst such timing exceeds
OUTLIER_SIGMA it is removed and the fit repeated, one timing at a time, so a single bad point
cannot drag the fit and flag the good ones. A timing with leverage 1 (the only one fixing a
parameter) cannot be judged and is kept. Cleaning uses the richest model the data allow, so
curvature is never mistaken for outliers.

Model choice: the quadratic model is fitted when the timings span three or more distinct
epochs and leave at least one degree of freedom; it is chosen when the Bayesian information
criterion BIC = chi^2 + k ln N (N timings plus prior rows, k parameters; Schwarz 1978) of the
linear model exceeds the quadratic's by more than BIC_MARGIN = 6 ("strong" evidence on the
scale of Kass & Raftery 1995, from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from vigil.ephemeris.models import PolynomialEphemeris
from vigil.errors import InputError
from vigil.time_units import DAYS_PER_JULIAN_YEAR

OUTLIER_SIGMA = 5.0
OUTLIER_RULE = f"leave-one-out > {OUTLIER_SIGMA:g} sigma"
BIC_MARGIN = 6.0
MS_PER_DAY = 86_400_000.0
_NO_LEVERAGE_LEFT = 1.0 - 1e-9


@dataclass(frozen=True, eq=False)
class PolynomialFit:
    """A fitted ephemeris (epochs as given, T0 at t0_epoch = n_ref) and the fit's statistics.

    chi2 counts the timings and prior_chi2 the prior's rows; leverage is per timing.
    """

    ephemeris: PolynomialEphemeris
    degree: int
    chi2: float
    prior_chi2: float
    n_timings: int
    n_prior_rows: int
    leverage: np.ndarray

    @property
    def n_parameters(self) -> int:
        return self.degree + 1

    @property
    def dof(self) -> int:
        return self.n_timings + self.n_prior_rows - self.n_parameters

    @property
    def reduced_chi2(self) -> float:
        """(chi2 + prior_chi2) per degree of freedom; NaN below 3 timings or without freedom."""
        if self.n_timings < 3 or self.dof <= 0:
            return float("nan")
        return (self.chi2 + self.prior_chi2) / self.dof

    @property
    def bic(self) -> float:
        """chi^2 + k ln N over timings and prior rows (Schwarz 1978)."""
        return self.chi2 + self.prior_chi2 + self.n_parameters * np.log(self.n_timings + self.n_prior_rows)

    @property
    def dp_dt_ms_yr(self) -> tuple[float, float]:
        """dP/dt = (dP/dN) / P in milliseconds per year, and its 1-sigma."""
        scale = MS_PER_DAY * DAYS_PER_JULIAN_YEAR / float(self.ephemeris.period_d)
        return (float(self.ephemeris.dp_dn_d) * scale,
                float(np.sqrt(self.ephemeris.covariance_d2[2, 2])) * scale)


def _prior_rows(prior: PolynomialEphemeris, reference_epoch: int, degree: int):
    """(J, r, L^-1) of the prior on the fit's parameter offsets (module docstring), or None when
    the prior's covariance is singular (a zero uncertainty)."""
    q_known = degree == 2 and prior.covariance_d2[2, 2] > 0
    rows = [0, 1, 2] if q_known else [0, 1]
    d = float(prior.t0_epoch - reference_epoch)
    jacobian = np.array([[1.0, d, 0.5 * d * d], [0.0, 1.0, d], [0.0, 0.0, 1.0]])[rows][:, : degree + 1]
    offset = np.array([0.5 * d * d, d, 1.0])[rows] * float(prior.dp_dn_d)
    try:
        chol = np.linalg.cholesky(np.asarray(prior.covariance_d2)[np.ix_(rows, rows)])
    except np.linalg.LinAlgError:
        return None
    whiten = np.linalg.inv(chol)
    return jacobian, offset, whiten


def fit_polynomial(epochs, times_bjd_tdb, errors_d, degree: int = 1, prior: PolynomialEphemeris | None = None,
                   target: str = "timings") -> PolynomialFit:
    """Fit T(n) of `degree` 1 or 2 to whole epochs, mid-times (BJD_TDB) and 1-sigma errors (days).

    With `prior` (an ephemeris numbered like `epochs`) the fit is the update of it by the
    timings (module docstring). InputError for NaN, non-positive errors, non-whole epochs, or
    too few distinct epochs for the parameters (counting the prior's rows).

    Examples
    --------
    >>> fit = fit_polynomial([0, 1, 2, 3], [2460000.0, 2460002.5, 2460005.0, 2460007.5], [1e-3] * 4)
    >>> round(float(fit.ephemeris.period_d), 9)
    2.5
    """
    n, t, sigma = validated(epochs, times_bjd_tdb, errors_d, target)
    w = 1.0 / sigma**2
    reference = int(np.floor(np.sum(w * n) / np.sum(w) + 0.5))
    k = n - reference
    if prior is not None:
        base_t0 = float(prior.mid_bjd_tdb(reference))
        base_p = float(prior.period_d) + (reference - float(prior.t0_epoch)) * float(prior.dp_dn_d)
    else:
        base_t0, base_p = float(t[np.argmin(np.abs(k))]), 0.0
    y = t - (base_t0 + k * base_p)
    design = np.column_stack([np.ones_like(k), k, 0.5 * k * k])[:, : degree + 1]
    rows = _prior_rows(prior, reference, degree) if prior is not None else None
    matrix, rhs = design / sigma[:, None], y / sigma
    if rows is not None:
        jacobian, offset, whiten = rows
        matrix, rhs = np.vstack([matrix, whiten @ jacobian]), np.concatenate([rhs, whiten @ offset])
    n_prior = 0 if rows is None else rows[0].shape[0]
    if np.unique(n).size + n_prior < degree + 1:
        raise InputError(f"target {target!r}: need timings at {degree + 1 - n_prior} or more distinct epochs "
                         f"to fit a {'period' if degree == 1 else 'quadratic ephemeris'}")
    theta, covariance = _solve(matrix, rhs)
    residual = y - design @ theta
    prior_chi2 = float(np.sum((matrix[n.size:] @ theta - rhs[n.size:]) ** 2))
    leverage = np.einsum("ij,jk,ik->i", design, covariance, design) * w
    full_cov = np.zeros((3, 3))
    full_cov[: degree + 1, : degree + 1] = covariance
    full = np.zeros(3)
    full[: degree + 1] = theta
    ephemeris = PolynomialEphemeris(base_t0 + full[0], base_p + full[1], full[2], full_cov, reference)
    return PolynomialFit(ephemeris, degree, float(np.sum(w * residual**2)), prior_chi2, int(n.size), n_prior, leverage)


def _solve(matrix: np.ndarray, rhs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Least-squares solution and (M^T M)^-1 via SVD with columns scaled to unit norm."""
    scale = np.linalg.norm(matrix, axis=0)
    scale[scale == 0] = 1.0
    u, s, vt = np.linalg.svd(matrix / scale, full_matrices=False)
    if s.min() <= s.max() * 1e-13:
        raise InputError("ephemeris fit: the timings do not constrain every parameter (degenerate epochs)")
    v = vt.T / s
    theta = (v @ (u.T @ rhs)) / scale
    covariance = (v @ v.T) / np.outer(scale, scale)
    return theta, covariance


def validated(epochs, times_bjd_tdb, errors_d, target: str):
    """(epochs, times, errors) as float arrays; InputError naming the target for bad input."""
    n = np.asarray(epochs, dtype=float).ravel()
    t = np.asarray(times_bjd_tdb, dtype=float).ravel()
    sigma = np.asarray(errors_d, dtype=float).ravel()
    if not n.size == t.size == sigma.size:
        raise InputError(f"target {target!r}: epochs, times and errors must have the same length")
    if n.size == 0:
        raise InputError(f"target {target!r}: no timings to fit")
    if not (np.all(np.isfinite(n)) and np.all(np.isfinite(t)) and np.all(np.isfinite(sigma))):
        raise InputError(f"target {target!r}: epochs, mid_bjd_tdb and mid_err_d must not contain NaN or infinity")
    if np.any(sigma <= 0):
        raise InputError(f"target {target!r}: mid_err_d must be positive (days)")
    if np.any(n != np.round(n)):
        raise InputError(f"target {target!r}: epochs must be whole numbers")
    return n, t, sigma


def highest_degree(epochs, prior: PolynomialEphemeris | None) -> int:
    """2 when the timings span 3+ distinct epochs and a quadratic fit keeps a degree of freedom, else 1."""
    distinct = np.unique(np.asarray(epochs)).size
    prior_rows = 0 if prior is None else 2
    return 2 if distinct >= 3 and np.size(epochs) + prior_rows >= 4 else 1


def robust_fit(epochs, times_bjd_tdb, errors_d, degree: int, prior: PolynomialEphemeris | None = None,
               target: str = "timings") -> tuple[PolynomialFit, np.ndarray]:
    """Fit of `degree` after removing outliers one at a time by the leave-one-out rule (module
    docstring); returns (fit to the kept timings, boolean mask of removed timings).

    Examples
    --------
    >>> times = [2460000.0, 2460002.5, 2460005.0, 2460007.6, 2460010.0]
    >>> fit, removed = robust_fit([0, 1, 2, 3, 4], times, [1e-3] * 5, degree=1)
    >>> removed.tolist()
    [False, False, False, True, False]
    """
    n, t, sigma = validated(epochs, times_bjd_tdb, errors_d, target)
    removed = np.zeros(n.size, dtype=bool)
    while True:
        kept = np.flatnonzero(~removed)
        fit = fit_polynomial(n[kept], t[kept], sigma[kept], degree, prior, target)
        judged = fit.leverage < _NO_LEVERAGE_LEFT
        residual = t[kept] - fit.ephemeris.mid_bjd_tdb(n[kept])
        score = np.where(judged, np.abs(residual) / (sigma[kept] * np.sqrt(np.maximum(1 - fit.leverage, 1e-300))), 0.0)
        worst = int(np.argmax(score))
        if score[worst] <= OUTLIER_SIGMA or not _fits_without(n, removed, kept[worst], degree, prior):
            return fit, removed
        removed[kept[worst]] = True


def _fits_without(n, removed, drop, degree, prior) -> bool:
    """Whether the timings left after also removing `drop` still determine the model."""
    left = n[~removed & (np.arange(n.size) != drop)]
    prior_rows = 0 if prior is None else 2
    return np.unique(left).size + prior_rows >= degree + 1 and left.size > 0


@dataclass(frozen=True, eq=False)
class ModelChoice:
    """The chosen fit, the linear and (when fitted) quadratic fits, removed timings, BIC difference."""

    chosen: PolynomialFit
    linear: PolynomialFit
    quadratic: PolynomialFit | None
    removed: np.ndarray
    delta_bic: float  # BIC(linear) - BIC(quadratic); NaN when the quadratic was not fitted

    @property
    def reason(self) -> str:
        """One line: which model and why (the stated criterion)."""
        if self.quadratic is None:
            return "linear (too few distinct epochs for a quadratic fit)"
        verdict = "quadratic" if self.chosen is self.quadratic else "linear"
        return f"{verdict} (BIC linear - quadratic = {self.delta_bic:.1f}; quadratic needs > {BIC_MARGIN:g})"


def choose_model(epochs, times_bjd_tdb, errors_d, prior: PolynomialEphemeris | None = None,
                 target: str = "timings") -> ModelChoice:
    """Clean outliers with the richest model the data allow, fit linear and quadratic to the kept
    timings and choose by BIC (module docstring).

    Examples
    --------
    >>> k = np.arange(0, 400, 20)
    >>> times = 2460000.0 + 1.5 * k + 0.5 * k**2 * -2e-7
    >>> choose_model(k, times, np.full(k.size, 2e-4)).chosen.degree
    2
    """
    richest = highest_degree(epochs, prior)
    cleaned, removed = robust_fit(epochs, times_bjd_tdb, errors_d, richest, prior, target)
    if richest == 1:
        return ModelChoice(cleaned, cleaned, None, removed, float("nan"))
    n, t, sigma = (np.asarray(a, dtype=float)[~removed] for a in (epochs, times_bjd_tdb, errors_d))
    linear = fit_polynomial(n, t, sigma, 1, prior, target)
    delta = linear.bic - cleaned.bic
    return ModelChoice(cleaned if delta > BIC_MARGIN else linear, linear, cleaned, removed, float(delta))
