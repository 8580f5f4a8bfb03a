"""Ephemeris models through projection: quadratic terms, per-epoch tables, stable epochs across a refit."""

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from astropy.time import Time
from typer.testing import CliRunner

import vigil  # noqa: F401  (configures astropy offline before anything else)
from authorities import ephemeris as ref
from vigil.catalog import read_sites, read_targets, read_timings
from vigil.cli import app
from vigil.ephemeris.models import target_ephemerides
from vigil.ephemeris.projection import project_transits, with_models
from vigil.ephemeris.refit import refit_targets
from vigil.ephemeris.table import read_ephemeris_table
from vigil.errors import InputError
from vigil.windows import plan_windows

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "src" / "vigil" / "data" / "demo"

# Invented decaying planet with a full (T0, P, dP/dN) covariance referenced to epoch 300.
QUADRATIC = {"name": "Ostra-3 b", "ra_deg": 10.0, "dec_deg": -5.0, "t0_bjd_tdb": 2460500.25, "t0_epoch": 300,
             "t0_err_d": 2e-4, "period_d": ref.DECAY_PERIOD_D, "period_err_d": 3e-7, "duration_h": 3.0,
             "t0_period_cov_d2": -0.2 * 2e-4 * 3e-7, "dp_dn_d": ref.DECAY_DP_DN_D, "dp_dn_err_d": 1e-10,
             "t0_dp_dn_cov_d2": 0.1 * 2e-4 * 1e-10, "period_dp_dn_cov_d2": -0.5 * 3e-7 * 1e-10}


def test_quadratic_targets_row_projects_by_the_formula():
    # Reference: T(n) = T0 + k P + k^2 dP/dN / 2 and sigma^2 = b^T C b, b = (1, k, k^2/2), k = n - t0_epoch,
    # evaluated here with numpy from the row's own numbers (standard error propagation).
    row = pd.DataFrame([QUADRATIC])
    start, end = 2463000.0, 2463400.0
    table = project_transits(row, start, end)
    k = table["epoch"].to_numpy() - 300.0
    expected = 2460500.25 + k * ref.DECAY_PERIOD_D + 0.5 * k * k * ref.DECAY_DP_DN_D
    np.testing.assert_allclose(table["mid_bjd_tdb"], expected, rtol=0, atol=1e-8)
    c = np.array([[QUADRATIC["t0_err_d"] ** 2, QUADRATIC["t0_period_cov_d2"], QUADRATIC["t0_dp_dn_cov_d2"]],
                  [QUADRATIC["t0_period_cov_d2"], QUADRATIC["period_err_d"] ** 2, QUADRATIC["period_dp_dn_cov_d2"]],
                  [QUADRATIC["t0_dp_dn_cov_d2"], QUADRATIC["period_dp_dn_cov_d2"], QUADRATIC["dp_dn_err_d"] ** 2]])
    b = np.column_stack([np.ones_like(k), k, 0.5 * k * k])
    np.testing.assert_allclose(table["mid_sigma_d"], np.sqrt(np.einsum("ij,jk,ik->i", b, c, b)), rtol=1e-12)
    # Exactly the mids inside: the neighbours just outside the span lie outside it.
    first, last = table["epoch"].min(), table["epoch"].max()
    model = target_ephemerides(row)[0]
    assert model.mid_bjd_tdb(first - 1) < start <= table["mid_bjd_tdb"].min()
    assert table["mid_bjd_tdb"].max() <= end < model.mid_bjd_tdb(last + 1)


def test_covariance_that_is_not_positive_semidefinite_is_refused():
    row = pd.DataFrame([{**QUADRATIC, "t0_dp_dn_cov_d2": 2 * 2e-4 * 1e-10}])  # correlation 2
    with pytest.raises(InputError, match="Ostra-3 b.*positive semi-definite"):
        project_transits(row, 2463000.0, 2463100.0)


def _table_file(tmp_path, epochs, mids, errors, target="Ostra-3 b"):
    path = tmp_path / "ttv.csv"
    pd.DataFrame({"target": target, "epoch": epochs, "mid_bjd_tdb": mids, "mid_err_d": errors}).to_csv(path, index=False)
    return path


def test_table_is_used_inside_its_span_and_refuses_beyond_unless_asked(tmp_path):
    # An invented system with timing variations of 6 min amplitude: inside the table the projected
    # mid-times and sigmas are the table's own rows; beyond it vigil refuses, or continues with the
    # weighted linear fit to the table (numpy.polyfit as the reference).
    epochs = np.arange(1000, 1200)
    mids = 2461000.0 + (epochs - 1000) * 2.2 + 6 / 1440 * np.sin(epochs / 9.0)
    errors = np.full(epochs.size, 4e-4)
    path = _table_file(tmp_path, epochs, mids, errors)
    targets = with_models(pd.DataFrame([QUADRATIC]), read_ephemeris_table(path))
    inside = project_transits(targets, mids[20] - 0.1, mids[150] + 0.1)
    np.testing.assert_array_equal(inside["epoch"], epochs[20:151])
    np.testing.assert_array_equal(inside["mid_bjd_tdb"], mids[20:151])
    np.testing.assert_array_equal(inside["mid_sigma_d"], errors[20:151])
    with pytest.raises(InputError, match="ephemeris table of 'Ostra-3 b' covers.*--extrapolate-table"):
        project_transits(targets, mids[150], mids[-1] + 30.0)
    extended = with_models(pd.DataFrame([QUADRATIC]), read_ephemeris_table(path, extrapolate=True))
    beyond = project_transits(extended, mids[-1] + 1.0, mids[-1] + 30.0)
    slope, intercept = np.polyfit(epochs, mids - mids[0], 1, w=1 / errors)
    np.testing.assert_allclose(beyond["mid_bjd_tdb"] - mids[0], slope * beyond["epoch"] + intercept, atol=1e-8)
    assert beyond["epoch"].min() == 1200
    assert np.all(beyond["mid_sigma_d"] > errors[0])  # the unmodelled variations are added in quadrature


def test_table_with_a_gap_is_refused_naming_the_line(tmp_path):
    path = _table_file(tmp_path, [5, 6, 8], [2461000.0, 2461002.2, 2461006.6], [1e-3] * 3)
    with pytest.raises(InputError, match=r"ttv.csv: line 4, field epoch: expected consecutive epochs"):
        read_ephemeris_table(path)


def test_refit_keeps_catalogue_epochs_so_calendar_uids_survive(tmp_path):
    # The example timings refitted against the demo catalogue: every transit of 2027 keeps its epoch
    # (and so its calendar UID, derived from target, site and epoch) and moves by far less than a
    # period; the refitted targets file records the epoch origin of its T0.
    catalogue = read_targets(DEMO / "targets.csv")
    result = refit_targets(read_timings(ROOT / "examples" / "timings.csv"), catalogue)
    refitted_file = tmp_path / "refit.csv"
    result.targets.to_csv(refitted_file, index=False)
    refitted = read_targets(refitted_file)
    assert (refitted.set_index("name").loc["Tamsin-7 b", "t0_epoch"]) != 0
    sites = read_sites(DEMO / "sites.toml")
    start, end = Time("2027-01-01", scale="utc"), Time("2028-01-01", scale="utc")
    before = plan_windows(catalogue, sites, {}, start, end, include_unobservable=True)
    after = plan_windows(refitted, sites, {}, start, end, include_unobservable=True)
    key = ["target", "site", "epoch"]
    joined = before.merge(after, on=key, suffixes=("_cat", "_fit"))
    assert len(joined) >= len(before) - 2 * len(sites) * len(catalogue)  # only transits at the span's edges differ
    shift_min = (joined["mid_bjd_tdb_fit"] - joined["mid_bjd_tdb_cat"]).abs() * 1440
    assert shift_min.max() < 30


def test_ics_uids_agree_across_a_refit(tmp_path):
    runner = CliRunner()
    refit = runner.invoke(app, ["refit", str(ROOT / "examples" / "timings.csv"), "--targets", str(DEMO / "targets.csv"),
                                "--out", str(tmp_path / "refit.csv")])
    assert refit.exit_code == 0, refit.output
    uids = []
    for name, targets in (("cat", DEMO / "targets.csv"), ("fit", tmp_path / "refit.csv")):
        ics = tmp_path / f"{name}.ics"
        ran = runner.invoke(app, ["windows", str(targets), "--sites", str(DEMO / "sites.toml"), "--start", "2027-03-01",
                                  "--end", "2027-05-01", "--ics", str(ics)])
        assert ran.exit_code == 0, ran.output
        uids.append({line for line in ics.read_text().splitlines() if line.startswith("UID:")})
    assert len(uids[0] & uids[1]) >= 0.9 * max(len(uids[0]), len(uids[1]))


def test_catalogue_projection_equals_each_targets_own_projection():
    # Definition check (common practice, no source): the set of epochs n with start <= T(n) <= end
    # for each target. The whole catalogue is projected at once (vectorised); each target alone
    # (its own model, one by one) must give the same rows, including quadratic ones, epochs
    # referenced elsewhere and spans that start or end exactly on a predicted mid-time.
    rng = np.random.default_rng(7)
    n = 60
    rows = pd.DataFrame({"name": [f"Vex-{i} b" for i in range(n)], "ra_deg": rng.uniform(0, 360, n),
                         "dec_deg": rng.uniform(-60, 60, n), "t0_bjd_tdb": 2460000.0 + rng.uniform(0, 50, n),
                         "t0_err_d": 1e-4, "period_d": rng.uniform(0.5, 30.0, n), "period_err_d": 1e-6,
                         "duration_h": 2.0, "dp_dn_d": np.where(np.arange(n) % 3 == 0, -2e-9, np.nan),
                         "dp_dn_err_d": np.where(np.arange(n) % 3 == 0, 1e-10, np.nan),
                         "t0_epoch": np.where(np.arange(n) % 4 == 0, 250.0, np.nan)})
    start = float(target_ephemerides(rows.iloc[:1])[0].mid_bjd_tdb(40))  # exactly on a mid-time of the first
    end = start + 700.0
    together = project_transits(rows, start, end)
    for i, model in enumerate(target_ephemerides(rows)):
        own = together[together["target"] == rows["name"].iat[i]]
        first, last = model.epoch_range(start, end)
        np.testing.assert_array_equal(own["epoch"], np.arange(first, last + 1))
        np.testing.assert_array_equal(own["mid_bjd_tdb"], model.mid_bjd_tdb(own["epoch"].to_numpy()))
        mids = model.mid_bjd_tdb(np.array([first - 1, first, last, last + 1]))
        assert mids[0] < start <= mids[1] and mids[2] <= end < mids[3]
    assert together["epoch"][together["target"] == "Vex-0 b"].iat[0] == 40


def test_empty_optional_ephemeris_cells_in_a_dataframe_read_as_absent():
    # A table built in Python with NaN in the optional quadratic columns (pandas' missing value)
    # is read like a CSV with those cells empty: linear, same rows.
    plain = pd.DataFrame([{k: v for k, v in QUADRATIC.items() if k not in ("dp_dn_d", "dp_dn_err_d", "t0_dp_dn_cov_d2",
                                                                             "period_dp_dn_cov_d2")}])
    with_gaps = plain.assign(dp_dn_d=np.nan, dp_dn_err_d=np.nan, t0_dp_dn_cov_d2=np.nan, period_dp_dn_cov_d2=np.nan)
    pd.testing.assert_frame_equal(project_transits(with_gaps, 2463000.0, 2463100.0),
                                  project_transits(plain, 2463000.0, 2463100.0))
    assert target_ephemerides(with_gaps)[0].kind == "linear"


def test_a_period_that_shrinks_to_zero_inside_the_span_is_refused_in_one_line():
    # T(k) = T0 + k P + k^2 Q / 2 with Q < 0 has its latest mid-time at k = -P/Q, where
    # T = T0 - P^2 / (2 Q) (the vertex of the parabola): no epoch maps to a later date. A span
    # ending before it projects; one ending after it is refused naming the cause, for one target
    # among others in the vectorised projection.
    period_d, dp_dn_d = 1.0, -1e-4
    last_possible = 2460000.0 - period_d**2 / (2 * dp_dn_d)  # 2465000.0
    rows = pd.DataFrame([{**QUADRATIC, "name": "Ostra-3 b", "t0_bjd_tdb": 2460000.0, "t0_epoch": 0, "period_d": period_d,
                          "dp_dn_d": dp_dn_d, "dp_dn_err_d": 0.0, "t0_dp_dn_cov_d2": 0.0, "period_dp_dn_cov_d2": 0.0},
                         {**QUADRATIC, "name": "Ostra-4 b"}])
    assert len(project_transits(rows, last_possible - 200.0, last_possible - 100.0)) > 0
    with pytest.raises(InputError, match=r"zero period before BJD_TDB 2465100\.0; check the sign and units of dp_dn_d"):
        project_transits(rows, last_possible - 200.0, last_possible + 100.0)
