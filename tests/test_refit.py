"""Ephemeris refit checked against numpy.polyfit, normal equations written here, and synthetic data."""

from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest
from matplotlib.image import imread

import vigil  # noqa: F401  (configures astropy offline before anything else)
from authorities import transits
from vigil.errors import InputError
from vigil.ephemeris.fitting import OUTLIER_RULE, fit_polynomial
from vigil.ephemeris.refit import DUPLICATE_RULE, refit_targets
from vigil.export.o_minus_c_plot import plot_o_minus_c

# Invented ephemeris for synthetic timings.
TRUE_T0_BJD_TDB = 2461234.56789
TRUE_PERIOD_D = 3.2171234


def _linear(epochs, times, errors, target="timings"):
    """The linear fit as the tests read it: ephemeris fields plus the fit's chi2 statistics."""
    fit = fit_polynomial(epochs, times, errors, 1, target=target)
    model = fit.ephemeris
    return SimpleNamespace(reference_epoch=int(model.t0_epoch), t0_bjd_tdb=float(model.t0_bjd_tdb),
                           period_d=float(model.period_d), t0_err_d=float(model.t0_err_d),
                           period_err_d=float(model.period_err_d), t0_period_cov_d2=float(model.t0_period_cov_d2),
                           chi2=fit.chi2, reduced_chi2=fit.reduced_chi2, predict_bjd_tdb=model.mid_bjd_tdb)


def _synthetic(rng, epochs, errors_d):
    times = TRUE_T0_BJD_TDB + epochs * TRUE_PERIOD_D + rng.normal(0.0, errors_d)
    return times


def _random_setup(seed, n=12):
    rng = np.random.default_rng(seed)
    epochs = np.sort(rng.choice(np.arange(-40, 400), size=n, replace=False)).astype(float)
    errors = rng.uniform(0.4, 2.5, size=n) / 1440.0
    return rng, epochs, errors, _synthetic(rng, epochs, errors)


def test_matches_numpy_polyfit_including_unscaled_covariance():
    # Reference: numpy.polyfit with weights w = 1/sigma and cov='unscaled' is weighted least squares
    # with the formal covariance (numpy documentation of polyfit).
    _, epochs, errors, times = _random_setup(1)
    fit = _linear(epochs, times, errors)
    x = epochs - fit.reference_epoch
    anchor = times[0]
    (slope, intercept), cov = np.polyfit(x, times - anchor, 1, w=1.0 / errors, cov="unscaled")
    assert fit.period_d == pytest.approx(slope, abs=1e-12)
    assert fit.t0_bjd_tdb - anchor == pytest.approx(intercept, abs=1e-10)
    assert fit.period_err_d**2 == pytest.approx(cov[0, 0], rel=1e-9)
    assert fit.t0_err_d**2 == pytest.approx(cov[1, 1], rel=1e-9)
    assert fit.t0_period_cov_d2 == pytest.approx(cov[0, 1], rel=1e-6, abs=1e-18)


def test_matches_generalised_least_squares_normal_equations():
    # Reference: GLS normal equations beta = (A^T W A)^-1 A^T W y, cov = (A^T W A)^-1 with
    # W = diag(1/sigma^2) (standard linear least squares, common practice, no source).
    _, epochs, errors, times = _random_setup(2)
    fit = _linear(epochs, times, errors)
    a = np.column_stack([np.ones_like(epochs), epochs - fit.reference_epoch])
    weight = np.diag(1.0 / errors**2)
    y = times - times.mean()
    cov = np.linalg.inv(a.T @ weight @ a)
    beta = cov @ a.T @ weight @ y
    resid = y - a @ beta
    assert fit.t0_bjd_tdb == pytest.approx(beta[0] + times.mean(), abs=1e-9)
    assert fit.period_d == pytest.approx(beta[1], abs=1e-12)
    assert [fit.t0_err_d**2, fit.t0_period_cov_d2, fit.period_err_d**2] == pytest.approx(
        [cov[0, 0], cov[0, 1], cov[1, 1]], rel=1e-6, abs=1e-20
    )
    assert fit.chi2 == pytest.approx(float(resid @ weight @ resid), rel=1e-6)


def test_reference_epoch_decorrelates_t0_and_period():
    # Centring the epochs on their weighted mean zeroes cov(T0, P) (normal equations, common
    # practice, no source); rounding to a whole epoch leaves |corr| below 1/(weighted spread).
    for seed in range(20):
        _, epochs, errors, times = _random_setup(seed)
        fit = _linear(epochs, times, errors)
        corr = fit.t0_period_cov_d2 / (fit.t0_err_d * fit.period_err_d)
        w = 1.0 / errors**2
        spread = np.sqrt(np.sum(w * (epochs - np.average(epochs, weights=w)) ** 2) / np.sum(w))
        assert abs(corr) <= 0.5 / spread + 1e-12
        assert abs(corr) < 0.01
        # Propagating to another epoch m with the standard formula (authorities.transits:
        # sigma_T(m)^2 = sigma_T0^2 + m^2 sigma_P^2 + 2 m cov) must give the intercept error of
        # numpy.polyfit referenced at that epoch (cov='unscaled').
        m = 137
        _, cov = np.polyfit(epochs - fit.reference_epoch - m, times - times[0], 1, w=1.0 / errors, cov="unscaled")
        propagated = transits.propagated_sigma_d(m, fit.t0_err_d, fit.period_err_d, fit.t0_period_cov_d2) ** 2
        assert propagated == pytest.approx(cov[1, 1], rel=1e-8)


def test_recovers_known_ephemeris_and_reduced_chi2_near_one():
    # Synthetic timings from a known ephemeris with Gaussian errors (seeded numpy RNG): the truth
    # must lie within 3 sigma, pulls must be standard normal, and <chi2_nu> = 1 (chi-square
    # distribution mean; common practice, no source).
    pulls_p, pulls_t, reduced = [], [], []
    for seed in range(300):
        _, epochs, errors, times = _random_setup(seed)
        fit = _linear(epochs, times, errors)
        truth_t0 = TRUE_T0_BJD_TDB + fit.reference_epoch * TRUE_PERIOD_D
        pulls_p.append((fit.period_d - TRUE_PERIOD_D) / fit.period_err_d)
        pulls_t.append((fit.t0_bjd_tdb - truth_t0) / fit.t0_err_d)
        reduced.append(fit.reduced_chi2)
    pulls_p, pulls_t = np.array(pulls_p), np.array(pulls_t)
    assert abs(pulls_p[0]) < 3 and abs(pulls_t[0]) < 3
    assert np.mean(np.abs(pulls_p) > 3) < 0.015 and np.mean(np.abs(pulls_t) > 3) < 0.015
    assert np.std(pulls_p) == pytest.approx(1.0, abs=0.12)
    assert np.std(pulls_t) == pytest.approx(1.0, abs=0.12)
    # chi2 with 10 dof: sd of chi2_nu is sqrt(2/10) ~ 0.45, so the mean of 300 is good to ~0.03.
    assert np.mean(reduced) == pytest.approx(1.0, abs=0.1)


def _timings_table(epochs, times, errors, target="Tessaly-b"):
    return pd.DataFrame({"target": target, "mid_bjd_tdb": times, "mid_err_d": errors,
                         "note": [f"obs {int(n)}" for n in epochs]})


def _catalogue(target="Tessaly-b", t0_err_d=2e-3, period_err_d=1e-5):
    return pd.DataFrame({
        "name": [target, "Quill-c"], "ra_deg": [120.5, 33.0], "dec_deg": [-12.25, 40.0],
        "t0_bjd_tdb": [TRUE_T0_BJD_TDB + 0.003, 2460000.5], "t0_err_d": [t0_err_d, 1e-3],
        "period_d": [TRUE_PERIOD_D + 2e-6, 5.5], "period_err_d": [period_err_d, 1e-5],
        "duration_h": [2.7, 3.1], "magnitude_j": [9.8, 11.0],
    })


def test_injected_ten_sigma_outlier_is_removed_and_named():
    # An injected 10-sigma shift must exceed the 5-sigma leave-one-out rule (synthetic data, seeded RNG);
    # without the prior the fit to the other 14 is the plain weighted fit (checked against numpy.polyfit above).
    rng, epochs, errors, times = _random_setup(7, n=15)
    times = times.copy()
    times[6] += 10 * errors[6]
    result = refit_targets(_timings_table(epochs, times, errors), _catalogue(), use_prior=False)
    row, oc = result.targets.set_index("name").loc["Tessaly-b"], result.o_minus_c
    assert (~oc["used_in_fit"]).sum() == 1
    flagged = oc[~oc["used_in_fit"]].iloc[0]
    assert flagged["mid_bjd_tdb"] == pytest.approx(times[6]) and flagged["removed_by"] == OUTLIER_RULE
    assert flagged["residual_sigma"] > 8
    assert row["n_timings"] == 14 and row["n_outliers"] == 1
    clean = np.delete(np.arange(15), 6)
    reference = _linear(epochs[clean], times[clean], errors[clean])
    assert row["period_d"] == pytest.approx(reference.period_d, abs=1e-12)
    assert abs(row["period_d"] - TRUE_PERIOD_D) < 3 * row["period_err_d"]


def test_refit_table_keeps_catalogue_numbering_and_records_the_epoch_origin():
    _, epochs, errors, times = _random_setup(3)
    result = refit_targets(_timings_table(epochs, times, errors), _catalogue())
    targets, oc = result.targets, result.o_minus_c
    by_name = targets.set_index("name")
    assert list(targets.columns[:5]) == ["name", "ra_deg", "dec_deg", "t0_bjd_tdb", "t0_epoch"]
    assert by_name.loc["Tessaly-b", "ra_deg"] == 120.5 and by_name.loc["Tessaly-b", "magnitude_j"] == 9.8
    assert by_name.loc["Quill-c", "period_d"] == 5.5 and by_name.loc["Quill-c", "n_timings"] == 0
    # The catalogue's T0 is (to within 0.003 d) the mid-time of epoch 0, so the O-C epochs are the
    # synthetic ones; the refitted T0 sits at t0_epoch in that numbering.
    np.testing.assert_array_equal(np.sort(oc["epoch"]), np.sort(epochs))
    t0, origin = by_name.loc["Tessaly-b", "t0_bjd_tdb"], by_name.loc["Tessaly-b", "t0_epoch"]
    period = by_name.loc["Tessaly-b", "period_d"]
    # Independent reconstruction of O-C in minutes from the returned ephemeris (1 d = 1440 min).
    expected = (oc["mid_bjd_tdb"] - (t0 + (oc["epoch"] - origin) * period)) * 1440.0
    np.testing.assert_allclose(oc["o_minus_c_min"], expected, atol=2e-6)
    assert set(oc["note"]) == {f"obs {int(n)}" for n in epochs}
    assert by_name.loc["Tessaly-b", "prior"] == "catalogue" and by_name.loc["Tessaly-b", "model"] == "linear"


def test_epochs_inferred_from_spacing_without_catalogue():
    # Consecutive transits present, plus a second observer of one event (counts as one epoch).
    rng = np.random.default_rng(11)
    epochs = np.array([0, 1, 3, 3, 7, 12], dtype=float)
    errors = np.full(epochs.size, 1.0 / 1440.0)
    times = _synthetic(rng, epochs, errors)
    with_catalogue = refit_targets(_timings_table(epochs, times, errors), _catalogue(), use_prior=False).targets
    alone = refit_targets(_timings_table(epochs, times, errors)).targets
    cat_row = with_catalogue.set_index("name").loc["Tessaly-b"]
    assert alone.loc[0, "period_d"] == pytest.approx(cat_row["period_d"], abs=1e-12)
    assert np.isnan(alone.loc[0, "ra_deg"]) and alone.loc[0, "prior"] == "none"


def test_repeated_row_is_dropped_with_a_note():
    _, epochs, errors, times = _random_setup(8, n=6)
    table = _timings_table(epochs, times, errors)
    doubled = pd.concat([table, table.iloc[[2]]], ignore_index=True)
    oc = refit_targets(doubled, _catalogue()).o_minus_c
    assert (oc["removed_by"] == DUPLICATE_RULE).sum() == 1 and oc["used_in_fit"].sum() == 6
    once = refit_targets(table, _catalogue()).targets.set_index("name").loc["Tessaly-b"]
    twice = refit_targets(doubled, _catalogue()).targets.set_index("name").loc["Tessaly-b"]
    assert twice["period_err_d"] == once["period_err_d"]


def test_spacing_rule_refuses_ambiguous_epochs():
    # Epochs 0, 2, 5: shortest spacing is 2 P and 5 P is not a multiple of it.
    epochs = np.array([0.0, 2.0, 5.0])
    times = TRUE_T0_BJD_TDB + epochs * TRUE_PERIOD_D
    with pytest.raises(InputError, match="Tessaly-b.*ambiguous"):
        refit_targets(_timings_table(epochs, times, np.full(3, 1e-3)))


def test_catalogue_rule_refuses_timing_between_transits():
    epochs = np.array([0.0, 4.0, 9.0])
    times = TRUE_T0_BJD_TDB + epochs * TRUE_PERIOD_D
    times[1] += 0.45 * TRUE_PERIOD_D
    with pytest.raises(InputError, match="Tessaly-b.*ambiguous"):
        refit_targets(_timings_table(epochs, times, np.full(3, 1e-3)), _catalogue())


def test_catalogue_too_uncertain_to_count_cycles():
    epochs = np.array([0.0, 4000.0])
    times = TRUE_T0_BJD_TDB + epochs * TRUE_PERIOD_D
    with pytest.raises(InputError, match="Tessaly-b.*too uncertain"):
        refit_targets(_timings_table(epochs, times, np.full(2, 1e-3)), _catalogue(period_err_d=1e-4))


def test_one_timing_needs_the_catalogue_prior():
    with pytest.raises(InputError, match="2 or more distinct epochs"):
        _linear([5, 5], [TRUE_T0_BJD_TDB, TRUE_T0_BJD_TDB + 1e-4], [1e-3, 1e-3])
    single = _timings_table(np.array([300.0]), np.array([TRUE_T0_BJD_TDB + 300 * TRUE_PERIOD_D]), np.array([1e-3]))
    with pytest.raises(InputError, match="Tessaly-b.*2 or more distinct epochs"):
        refit_targets(single, _catalogue(), use_prior=False)
    # From Python the remedy is named as vigil.refit's keyword (the command line names --targets).
    with pytest.raises(InputError, match="Tessaly-b.*two or more distinct epochs.*catalogue as targets to"):
        refit_targets(single)
    # With the prior one timing is an update: chi2 is reported as not available (NaN), not 0/0.
    row = refit_targets(single, _catalogue()).targets.set_index("name").loc["Tessaly-b"]
    assert row["n_timings"] == 1 and np.isnan(row["reduced_chi2"])
    assert row["period_err_d"] < 1e-5


@pytest.mark.parametrize(
    ("column", "value", "match"),
    [("mid_err_d", 0.0, "mid_err_d must be a positive"), ("mid_err_d", -1e-3, "mid_err_d must be a positive"),
     ("mid_bjd_tdb", np.nan, "mid_bjd_tdb must be a finite"), ("mid_err_d", np.nan, "mid_err_d must be a positive")],
)
def test_bad_timing_values_raise(column, value, match):
    epochs = np.array([0.0, 1.0, 2.0])
    table = _timings_table(epochs, TRUE_T0_BJD_TDB + epochs * TRUE_PERIOD_D, np.full(3, 1e-3))
    table.loc[1, column] = value
    with pytest.raises(InputError, match=f"Tessaly-b.*{match}"):
        refit_targets(table, _catalogue())


def test_fit_refuses_nan_and_nonpositive_errors_directly():
    with pytest.raises(InputError, match="NaN"):
        _linear([0, 1], [1.0, np.nan], [1e-3, 1e-3], target="Tessaly-b")
    with pytest.raises(InputError, match="Tessaly-b.*positive"):
        _linear([0, 1], [1.0, 2.0], [1e-3, 0.0], target="Tessaly-b")


def test_unknown_target_and_missing_columns_raise():
    epochs = np.array([0.0, 1.0])
    table = _timings_table(epochs, TRUE_T0_BJD_TDB + epochs * TRUE_PERIOD_D, np.full(2, 1e-3), target="Nobody-d")
    with pytest.raises(InputError, match="Nobody-d.*not in the targets table"):
        refit_targets(table, _catalogue())
    with pytest.raises(InputError, match="missing column.*mid_err_d"):
        refit_targets(table.drop(columns="mid_err_d"))


def test_plot_writes_a_readable_png(tmp_path):
    rng = np.random.default_rng(5)
    epochs = np.array([0, 1, 2, 5, 9, 14, 20, 27], dtype=float)
    errors = rng.uniform(0.5, 2.0, epochs.size) / 1440.0
    times = _synthetic(rng, epochs, errors)
    times[3] += 12 * errors[3]
    table = pd.concat([_timings_table(epochs, times, errors),
                       _timings_table(epochs[:4], times[:4], errors[:4], target="Quill-c")])
    result = refit_targets(table)
    oc = result.o_minus_c
    assert (~oc["used_in_fit"]).any()
    durations = {"Tessaly-b": 2.7, "Quill-c": float("nan")}
    plot_o_minus_c(oc, result.fits, durations, tmp_path / "oc.png")
    image = imread(tmp_path / "oc.png")  # matplotlib's own PNG reader as an independent decoder
    plot_o_minus_c(oc[oc["target"] == "Quill-c"], result.fits, durations, tmp_path / "one.png")
    single = imread(tmp_path / "one.png")
    assert image.ndim == 3 and image.shape[1] == single.shape[1]
    assert image.shape[0] > 1.5 * single.shape[0]  # one row of two panels per target, stacked
    assert image.std() > 0.01  # not a blank canvas
    assert not list(tmp_path.glob("*.tmp*"))  # written atomically: no temporary file left behind
