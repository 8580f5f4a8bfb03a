"""Staleness dates and refresh updates checked against brute-force scans and independent refits."""

import math

import numpy as np
import pytest
from astropy.time import Time

import vigil  # noqa: F401  (configures astropy offline before anything else)
from authorities import transits
from vigil.ephemeris.models import linear_ephemeris, mid_sigma_d
from vigil.ephemeris.projection import project_transits
from vigil.errors import InputError
from vigil.ephemeris.fitting import fit_polynomial
from vigil.ephemeris.staleness import DURATION_FRACTION, first_stale_epoch, refresh_sigma, stale_date, staleness

SCAN = 200_000  # epochs scanned by brute force; the random cases below go stale well inside it


def _scan_first_stale(limit_d, t0_err_d, period_err_d, cov_d2, sigma_k, from_epoch):
    """Brute force: evaluate K sigma_T(n) at every epoch from from_epoch on; first one above the limit."""
    epochs = np.arange(from_epoch, from_epoch + SCAN)
    beyond = np.flatnonzero(sigma_k * transits.propagated_sigma_d(epochs, t0_err_d, period_err_d, cov_d2) > limit_d)
    return float(epochs[beyond[0]]) if beyond.size else math.inf


def test_first_stale_epoch_matches_brute_force_scan():
    # Reference: direct evaluation of sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2 + 2 n cov
    # (standard error propagation, authorities.transits) at every epoch, seeded random
    # ephemerides with correlations up to +-0.99, start epochs on either side of T0, limits
    # both below (already stale) and above K sigma_T0.
    rng = np.random.default_rng(20240607)
    already, later = 0, 0
    for _ in range(300):
        t0_err, period_err = rng.uniform(1e-4, 2e-3), rng.uniform(1e-7, 1e-5)
        cov = rng.uniform(-0.99, 0.99) * t0_err * period_err
        sigma_k = rng.choice([1.0, 2.0, 3.0])
        limit = rng.uniform(0.7, 4.0) * sigma_k * t0_err
        start = int(rng.integers(-300, 300))
        expected = _scan_first_stale(limit, t0_err, period_err, cov, sigma_k, start)
        got = first_stale_epoch(limit, t0_err, period_err, cov, sigma_k, start)
        assert math.isfinite(expected), "scan range too short for this case"
        assert got == expected
        already += got == start
        later += got > start
    assert already > 20 and later > 150  # both branches exercised


def test_never_stale_without_period_uncertainty():
    # sigma_P = 0 leaves sigma_T(n) = sigma_T0 for every n (the propagation formula above):
    # stale from the first epoch if K sigma_T0 is beyond the limit, never otherwise.
    assert first_stale_epoch(0.01, 1e-3, 0.0, 0.0, 3.0, from_epoch=-7) == math.inf
    assert first_stale_epoch(0.002, 1e-3, 0.0, 0.0, 3.0, from_epoch=-7) == -7.0
    never = stale_date(linear_ephemeris(2461000.5, 1e-3, 3.3, 0.0), 0.01)
    assert never.epoch == math.inf and never.bjd_tdb == math.inf and never.time is None


def test_staleness_table_matches_a_scan_of_projected_transits(make_targets):
    # Reference: the transits projected by vigil.ephemeris.project_transits over a long range,
    # scanned for the first one whose K * mid_sigma_d exceeds the limit; its BJD_TDB must be the
    # stale date, and the astropy Time must be that instant in TDB.
    targets = make_targets(
        {"name": "Orrin b", "ra_deg": 10.0, "dec_deg": 5.0, "t0_bjd_tdb": 2460800.25, "t0_err_d": 4e-4,
         "period_d": 2.75, "period_err_d": 3e-6, "duration_h": 2.4, "t0_period_cov_d2": -2e-10},
        {"name": "Vessa c", "ra_deg": 200.0, "dec_deg": -30.0, "t0_bjd_tdb": 2460500.75, "t0_err_d": 1e-3,
         "period_d": 11.2, "period_err_d": 2e-5, "duration_h": 4.0, "t0_period_cov_d2": 5e-9},
    )
    after = Time("2027-01-01T00:00:00", scale="utc")
    sigma_k, baseline_h = 3.0, 0.75
    table = staleness(targets, baseline_h=baseline_h, sigma_k=sigma_k, after=after).set_index("name")
    transits = project_transits(targets, after.tdb.jd, after.tdb.jd + 400_000.0)
    for target in targets.itertuples():
        mine = transits[transits["target"] == target.name]
        row = table.loc[target.name]
        for prefix, limit_h in (("stale_by_duration", DURATION_FRACTION * target.duration_h),
                                ("stale_by_baseline", baseline_h)):
            first = mine[sigma_k * mine["mid_sigma_d"] > limit_h / 24.0].iloc[0]
            assert row[f"{prefix}_epoch"] == first["epoch"]
            assert row[f"{prefix}_bjd_tdb"] == pytest.approx(first["mid_bjd_tdb"], abs=1e-9)
            time = row[f"{prefix}_time"]
            assert time.scale == "tdb" and abs(time.jd - first["mid_bjd_tdb"]) < 1e-8
            # The transit before the stale one is still within the limit (when it is after `after`).
            previous = mine[mine["epoch"] == first["epoch"] - 1]
            if len(previous):
                assert sigma_k * previous["mid_sigma_d"].iloc[0] <= limit_h / 24.0
        assert row["duration_limit_h"] == pytest.approx(0.25 * target.duration_h)


def test_refresh_equals_refit_with_the_added_timing():
    # Reference: vigil.ephemeris.fitting.fit_polynomial (weighted least-squares normal equations, itself
    # checked against numpy.polyfit in test_refit.py) on the timings plus one more at epoch n_new.
    # Its formal covariance does not depend on the measured value, only on epochs and errors, so
    # the refresh prediction must equal it. Compared through sigma_T at several absolute epochs
    # and sigma_P, since the two fits quote T0 at different reference epochs.
    rng = np.random.default_rng(77)
    for _ in range(20):
        epochs = np.sort(rng.choice(np.arange(-50, 300), size=8, replace=False)).astype(float)
        errors = rng.uniform(0.3, 2.0, epochs.size) / 1440.0
        times = 2461000.5 + 3.7 * epochs + rng.normal(0.0, errors)
        before = fit_polynomial(epochs, times, errors).ephemeris
        new_epoch, new_err = int(rng.integers(300, 900)), rng.uniform(0.2, 1.5) / 1440.0
        after = fit_polynomial(np.append(epochs, new_epoch), np.append(times, 2461000.5 + 3.7 * new_epoch),
                                     np.append(errors, new_err)).ephemeris
        refreshed = refresh_sigma(before.t0_err_d, before.period_err_d, before.t0_period_cov_d2,
                                  new_epoch - before.t0_epoch, new_err)
        assert refreshed.period_err_d == pytest.approx(after.period_err_d, rel=1e-12)
        for m in (-200, 0, 150, new_epoch, 2000):
            predicted = mid_sigma_d(m - before.t0_epoch, refreshed.t0_err_d, refreshed.period_err_d,
                                    refreshed.t0_period_cov_d2)
            refit = mid_sigma_d(m - after.t0_epoch, after.t0_err_d, after.period_err_d, after.t0_period_cov_d2)
            assert predicted == pytest.approx(refit, rel=1e-12)


def test_refresh_never_widens_and_postpones_staleness():
    # The information added by a timing is positive semi-definite, so no prediction can widen
    # (linear least squares, common practice, no source); at the refreshed epoch the result is
    # the inverse-variance combination sigma^2 s^2 / (sigma^2 + s^2) (same source).
    rng = np.random.default_rng(3)
    probe = np.arange(-5000, 5001, 50)
    for _ in range(50):
        t0_err, period_err = rng.uniform(1e-4, 2e-3), rng.uniform(1e-7, 1e-5)
        cov = rng.uniform(-0.9, 0.9) * t0_err * period_err
        epoch, timing_err = int(rng.integers(-2000, 2000)), rng.uniform(1e-4, 3e-3)
        new = refresh_sigma(t0_err, period_err, cov, epoch, timing_err)
        old_sigma = mid_sigma_d(probe, t0_err, period_err, cov)
        new_sigma = mid_sigma_d(probe, new.t0_err_d, new.period_err_d, new.t0_period_cov_d2)
        assert np.all(new_sigma <= old_sigma * (1 + 1e-12))
        at_epoch = mid_sigma_d(epoch, t0_err, period_err, cov)
        combined = at_epoch**2 * timing_err**2 / (at_epoch**2 + timing_err**2)
        assert mid_sigma_d(epoch, new.t0_err_d, new.period_err_d, new.t0_period_cov_d2) ** 2 == pytest.approx(combined, rel=1e-9)
        limit = 3.0 * t0_err * 2.0
        assert first_stale_epoch(limit, new.t0_err_d, new.period_err_d, new.t0_period_cov_d2, 3.0) >= \
            first_stale_epoch(limit, t0_err, period_err, cov, 3.0)


def test_refresh_of_an_exact_period_only_narrows_t0():
    # With sigma_P = 0 the period is known exactly; a timing at any epoch is then a direct
    # measurement of T0, combined by inverse variance (common practice, no source).
    new = refresh_sigma(2e-3, 0.0, 0.0, 500, 1e-3)
    assert new.period_err_d == 0.0 and new.t0_period_cov_d2 == 0.0
    assert new.t0_err_d == pytest.approx(math.sqrt(1.0 / (1 / 2e-3**2 + 1 / 1e-3**2)), rel=1e-12)


@pytest.mark.parametrize(
    ("call", "match"),
    [(lambda: first_stale_epoch(0.0, 1e-3, 1e-5), "limit_d: expected a positive"),
     (lambda: first_stale_epoch(0.01, 1e-3, 1e-5, sigma_k=-1.0), "sigma_k: expected a positive"),
     (lambda: refresh_sigma(1e-3, 1e-5, 0.0, 10, 0.0), "timing_err_d: expected a positive"),
     (lambda: refresh_sigma(1e-3, 1e-5, 0.0, 10.5, 1e-3), "epoch: expected a whole transit number")],
)
def test_bad_arguments_raise(call, match):
    with pytest.raises(InputError, match=match):
        call()


def test_staleness_table_refuses_missing_columns_and_bad_fraction(make_targets):
    targets = make_targets({"name": "Orrin b", "ra_deg": 10.0, "dec_deg": 5.0, "t0_bjd_tdb": 2460800.25})
    with pytest.raises(InputError, match="missing column.*duration_h"):
        staleness(targets.drop(columns="duration_h"))
    with pytest.raises(InputError, match="duration_fraction: expected a positive"):
        staleness(targets, duration_fraction=0.0)


def test_quadratic_stale_epoch_matches_brute_force_scan():
    # Reference: direct evaluation of sigma_T(n)^2 = b^T C b, b = (1, k, k^2/2) (the quadratic
    # propagation, itself checked against a Monte Carlo draw in test_fitting.py) at every epoch,
    # for seeded covariances of (T0, P, dP/dN) and start epochs on either side of t0_epoch.
    from vigil.ephemeris.models import PolynomialEphemeris
    from vigil.ephemeris.staleness import model_first_stale_epoch

    rng = np.random.default_rng(20261202)
    checked = 0
    for _ in range(200):
        sigma = np.array([rng.uniform(1e-4, 1e-3), rng.uniform(1e-7, 3e-6), rng.uniform(1e-11, 1e-9)])
        a = rng.normal(size=(3, 3))
        correlation = np.corrcoef(a @ a.T + 0.5 * np.eye(3))
        model = PolynomialEphemeris(2461000.0, 1.5, -1e-9, correlation * np.outer(sigma, sigma),
                                    int(rng.integers(-500, 500)))
        limit = rng.uniform(1.2, 6.0) * sigma[0]
        start = int(rng.integers(-2000, 2000))
        epochs = np.arange(start, start + SCAN)
        beyond = np.flatnonzero(model.mid_sigma_d(epochs) > limit)
        expected = float(epochs[beyond[0]]) if beyond.size else math.inf
        assert model_first_stale_epoch(model, limit, 1.0, start) == expected
        checked += math.isfinite(expected) and expected > start
    assert checked > 100
