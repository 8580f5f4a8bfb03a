"""Ephemeris upkeep inside a campaign: journal timings folded in, planned refreshes, hours already stacked."""

import numpy as np
import pandas as pd
import pytest

import vigil  # noqa: F401  (configures astropy offline before astropy is used)
from vigil.ephemeris import upkeep
from vigil.ephemeris.models import mid_sigma_d
from vigil.errors import InputError
from vigil.journal import open_journal
from vigil.ephemeris.fitting import fit_polynomial
from vigil.ephemeris.staleness import refresh_sigma

from test_campaign import GIANT, START, campaign_spec, run, targets_table


def test_a_weak_prior_plus_timings_is_the_least_squares_fit():
    # With a catalog ephemeris of negligible weight the information update equals weighted least
    # squares on the timings (Gauss-Markov; checked against vigil.refit, itself checked against numpy.polyfit).
    rng = np.random.default_rng(4)
    t0, period = 2461000.0, 3.21
    epochs = np.array([-40, -3, 12, 55, 90])
    errors = np.full(epochs.size, 4e-4)
    times = t0 + epochs * period + rng.normal(0, errors)
    weak = pd.DataFrame([{"name": "w", "t0_bjd_tdb": t0 + 0.01, "period_d": period + 1e-4, "t0_err_d": 10.0,
                          "period_err_d": 0.1, "t0_period_cov_d2": 0.0}])
    timings = pd.DataFrame({"target": "w", "mid_bjd_tdb": times, "mid_err_d": errors})
    got = upkeep.assimilate_timings(weak, timings).iloc[0]
    fit = fit_polynomial(epochs, times, errors).ephemeris
    assert abs(got["period_d"] - fit.period_d) < 1e-3 * fit.period_err_d
    predicted = fit.mid_bjd_tdb(np.array([0]))[0]
    assert abs(got["t0_bjd_tdb"] - predicted) < 1e-2 * fit.t0_err_d
    sigma_fit = np.sqrt(fit.t0_err_d ** 2 + (0 - fit.t0_epoch) ** 2 * fit.period_err_d ** 2
                        + 2 * (0 - fit.t0_epoch) * fit.t0_period_cov_d2)
    assert abs(got["t0_err_d"] - sigma_fit) < 1e-3 * sigma_fit
    assert abs(got["period_err_d"] - fit.period_err_d) < 1e-3 * fit.period_err_d


def test_one_timing_shrinks_sigma_as_the_refresh_formula_says():
    row = {"name": "x", "t0_bjd_tdb": 2461000.0, "period_d": 2.5, "t0_err_d": 1e-3, "period_err_d": 2e-5,
           "t0_period_cov_d2": 0.0}
    timing = pd.DataFrame({"target": ["x"], "mid_bjd_tdb": [2461000.0 + 400 * 2.5 + 2e-3], "mid_err_d": [5e-4]})
    got = upkeep.assimilate_timings(pd.DataFrame([row]), timing).iloc[0]
    expected = refresh_sigma(1e-3, 2e-5, 0.0, 400, 5e-4)
    np.testing.assert_allclose([got["t0_err_d"], got["period_err_d"], got["t0_period_cov_d2"]],
                               [expected.t0_err_d, expected.period_err_d, expected.t0_period_cov_d2], rtol=1e-9)
    # the measured time pulls the prediction at its epoch toward it (inverse-variance weighting)
    sigma_before = mid_sigma_d(400, 1e-3, 2e-5)
    weight = sigma_before ** 2 / (sigma_before ** 2 + 5e-4 ** 2)
    predicted = got["t0_bjd_tdb"] + 400 * got["period_d"]
    assert abs(predicted - (2461000.0 + 1000.0 + weight * 2e-3)) < 1e-9


def test_refreshes_rescue_a_stale_ephemeris():
    # sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2 (authorities.transits): 1000 epochs at sigma_P = 1e-3 d pad
    # every window by ~1 d, so nothing fits a night; one refresh timing of 1 min at the start of each
    # quarter brings sigma near 1 min again, and the target becomes reachable.
    targets = targets_table({"t0_bjd_tdb": GIANT["t0_bjd_tdb"] - 1000 * GIANT["period_d"], "period_err_d": 1e-3})
    stale = run(campaign_spec(), targets).summary.iloc[0]
    assert stale["limited_by"].startswith("ephemeris too stale (")
    kept = run(campaign_spec(refresh_every_years=0.25, refresh_timing_err_d=1.0 / 1440), targets).summary.iloc[0]
    assert kept["reachable"] and kept["transits_per_year"] > 50


def test_journal_hours_and_timings_start_the_campaign(tmp_path):
    # Hours already stacked count from the first day: with them (just) at the goal the wait is
    # zero (common practice, no source).
    spec = campaign_spec(journal_file=tmp_path / "j.db")
    baseline = run(campaign_spec(), targets_table({})).summary.iloc[0]
    needed = baseline["hours_needed"]
    with open_journal(spec.journal_file) as journal:
        journal.add({"target": GIANT["name"], "site": "cerro_tordo", "epoch": 1, "start_utc": "2031-01-01T06:00:00Z",
                     "end_utc": "2031-01-12T06:00:00Z", "status": "executed", "outcome": "clear",
                     "mid_bjd_tdb": GIANT["t0_bjd_tdb"] + GIANT["period_d"], "mid_err_d": 1e-4,
                     "in_transit_h": 1.01 * needed, "baseline_h": 1.01 * needed})
    started = run(spec, targets_table({})).summary.iloc[0]
    assert started["years_to_goal_p50"] == 0.0 and baseline["years_to_goal_p50"] > 0.0
    assert started["in_transit_hours_per_year"] == pytest.approx(baseline["in_transit_hours_per_year"], rel=1e-6)


def test_far_timing_is_refused_unless_forced_and_the_journal_epoch_is_kept():
    # A timing 1.5 d after its prediction (more than 5 combined sigma, vigil.ephemeris.timing_checks)
    # is refused; forced, it is used at the epoch the journal gave (400, so it pulls P up), not at the
    # nearest predicted transit (401, 1.0 d later, which would pull P down).
    # Reference for the forced case: the Gaussian update formula (refresh_sigma) at that epoch.
    row = {"name": "x", "t0_bjd_tdb": 2461000.0, "period_d": 2.5, "t0_err_d": 1e-3, "period_err_d": 2e-5,
           "t0_period_cov_d2": 0.0}
    far = pd.DataFrame({"target": ["x"], "mid_bjd_tdb": [2461000.0 + 400 * 2.5 + 1.5], "mid_err_d": [5e-4],
                        "epoch": [400], "forced": [False]})
    with pytest.raises(InputError, match="x.*combined sigma.*--force"):
        upkeep.assimilate_timings(pd.DataFrame([row]), far)
    got = upkeep.assimilate_timings(pd.DataFrame([row]), far.assign(forced=True)).iloc[0]
    expected = refresh_sigma(1e-3, 2e-5, 0.0, 400, 5e-4)
    assert got["period_err_d"] == pytest.approx(expected.period_err_d, rel=1e-12)
    assert got["period_d"] > 2.5 + 1e-3


def test_quadratic_ephemeris_is_updated_in_all_three_parameters():
    # A quadratic targets row (dp_dn columns) updated by a timing equals the weighted least-squares
    # fit with the row as prior (vigil.ephemeris.fitting, checked against numpy.polyfit).
    from vigil.ephemeris.models import target_ephemerides

    row = {"name": "q", "t0_bjd_tdb": 2461000.0, "period_d": 1.09, "t0_err_d": 2e-4, "period_err_d": 1e-6,
           "t0_period_cov_d2": 0.0, "dp_dn_d": -1e-9, "dp_dn_err_d": 3e-10}
    timing = pd.DataFrame({"target": ["q"], "mid_bjd_tdb": [2461000.0 + 3000 * 1.09 - 4.5e-3 - 2e-4],
                           "mid_err_d": [3e-4], "epoch": [3000], "forced": [False]})
    got = upkeep.assimilate_timings(pd.DataFrame([row]), timing)
    updated = target_ephemerides(got)[0]
    prior = target_ephemerides(pd.DataFrame([row]))[0]
    fit = fit_polynomial([3000], timing["mid_bjd_tdb"], [3e-4], degree=2, prior=prior).ephemeris
    for epoch in (0, 3000, 6000):
        assert float(updated.mid_bjd_tdb(epoch)) == pytest.approx(float(fit.mid_bjd_tdb(epoch)), abs=1e-8)
        assert float(updated.mid_sigma_d(epoch)) == pytest.approx(float(fit.mid_sigma_d(epoch)), rel=1e-6)
