"""The Python API: every documented input form gives the windows the files give, in-memory
tables are refused with the files' messages, and the command line writes what the API writes.

References outside vigil: astropy (`Time`, units, `EarthLocation`) and the standard library
(`datetime`, `zoneinfo`) define what the other input forms mean; the files read through
vigil's own readers are the baseline each form must reproduce exactly.
"""

import csv
import re
import warnings
from datetime import date, datetime, timezone
from pathlib import Path
from zoneinfo import ZoneInfo

import astropy.units as u
import numpy as np
import pandas as pd
import pytest
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.table import QTable, Table
from astropy.time import Time
from typer.testing import CliRunner

import vigil
from vigil import schema
from vigil.cli import app
from vigil.export.table import csv_bytes

from conftest import DEMO_DIR
from test_cli import _restore_vigil_logger  # noqa: F401  (autouse: leave the 'vigil' logger as found)

CORPUS_TARGETS = sorted((Path(__file__).resolve().parent / "corpus" / "targets").glob("*.csv"))
TARGETS_FILE, SITES_FILE = DEMO_DIR / "targets.csv", DEMO_DIR / "sites.toml"
START, END = "2027-03-01", "2027-03-08"


@pytest.fixture(scope="module")
def baseline():
    """Windows of the demo targets at the demo sites from the files."""
    return vigil.plan_windows(TARGETS_FILE, SITES_FILE, START, END, include_unobservable=True)


def _text_records(path) -> list[dict]:
    with open(path, newline="", encoding="utf-8-sig") as handle:
        return list(csv.DictReader(handle))


@pytest.mark.parametrize("start, end", [
    (Time(START, scale="utc"), Time(END, scale="utc")),
    (datetime(2027, 3, 1, tzinfo=timezone.utc), datetime(2027, 3, 8, tzinfo=timezone.utc)),
    # The same instants in another zone (standard library zoneinfo): 2027-03-01 00:00 UTC is 21:00 the day before in Santiago (UTC-3).
    (datetime(2027, 2, 28, 21, tzinfo=ZoneInfo("America/Santiago")), datetime(2027, 3, 7, 21, tzinfo=ZoneInfo("America/Santiago"))),
    (date(2027, 3, 1), date(2027, 3, 8)),
    (Time(2461465.5, format="jd", scale="utc"), Time(2461472.5, format="jd", scale="utc")),  # JD of 2027-03-01 0h UTC
])
def test_every_date_form_gives_the_same_windows(baseline, start, end):
    got = vigil.plan_windows(TARGETS_FILE, SITES_FILE, start, end, include_unobservable=True)
    pd.testing.assert_frame_equal(got, baseline)


def test_every_targets_form_gives_the_same_windows(baseline):
    records = _text_records(TARGETS_FILE)
    frame = pd.read_csv(TARGETS_FILE)
    qtable = QTable.from_pandas(frame)
    qtable["period_d"] = (qtable["period_d"] * u.day).to(u.hour)  # units honoured: hours become days again
    qtable["duration_h"] = (qtable["duration_h"] * u.hour).to(u.min)
    qtable["t0_bjd_tdb"] = Time(frame["t0_bjd_tdb"].to_numpy(), format="jd", scale="tdb")
    with_coord = Table.from_pandas(frame.drop(columns=["ra_deg", "dec_deg"]))
    with_coord["coord"] = SkyCoord(frame["ra_deg"].to_numpy() * u.deg, frame["dec_deg"].to_numpy() * u.deg)
    for targets in (frame, records, qtable, with_coord, vigil.read_targets(frame)):
        got = vigil.plan_windows(targets, SITES_FILE, START, END, include_unobservable=True)
        pd.testing.assert_frame_equal(got, baseline, check_exact=False, rtol=0, atol=1e-9)


def test_every_sites_form_gives_the_same_windows(baseline):
    from_file = vigil.read_sites(SITES_FILE)
    south = from_file["mirador_sur"]
    location = EarthLocation.from_geodetic(south.longitude_deg * u.deg, south.latitude_deg * u.deg,
                                           south.elevation_m * u.m)
    expected = baseline[baseline["site"] == "mirador_sur"].reset_index(drop=True)
    made = vigil.make_site("mirador_sur", latitude_deg=south.latitude_deg * u.deg,
                           longitude_deg=south.longitude_deg * u.deg, elevation_m=south.elevation_m / 1000 * u.km,
                           timezone=south.timezone)
    for sites in ({"mirador_sur": location}, [made], made, {"mirador_sur": south}):
        got = vigil.plan_windows(TARGETS_FILE, sites, START, END, include_unobservable=True)
        pd.testing.assert_frame_equal(got, expected, check_exact=False, rtol=0, atol=1e-9)
    got = vigil.plan_windows(TARGETS_FILE, SITES_FILE, START, END, include_unobservable=True, site="mirador_sur")
    pd.testing.assert_frame_equal(got, expected)


def test_an_astroplan_observer_is_a_site():
    from astroplan import Observer

    observer = Observer(latitude=-30.52 * u.deg, longitude=-70.81 * u.deg, elevation=2450 * u.m,
                        name="mirador_sur", timezone="America/Santiago")
    site = vigil.read_sites(observer)["mirador_sur"]
    assert (site.latitude_deg, site.longitude_deg, site.elevation_m) == pytest.approx((-30.52, -70.81, 2450.0))
    assert site.timezone == "America/Santiago"


def test_numbers_and_quantities_give_the_same_windows():
    plain = vigil.plan_windows(TARGETS_FILE, SITES_FILE, START, END, min_altitude=40, baseline=1.5, moon_sep=20,
                               twilight="nautical", sigma=2)
    quantities = vigil.plan_windows(TARGETS_FILE, SITES_FILE, START, END, min_altitude=40 * u.deg,
                                    baseline=90 * u.min, moon_sep=20 * u.deg, twilight="nautical", sigma=2)
    pd.testing.assert_frame_equal(plain, quantities)
    assert (plain["alt_mid_deg"] >= 40 - 1e-6).all() and (plain["moon_sep_deg"] >= 20 - 1e-6).all()


def test_unknown_constraint_is_a_type_error_with_a_suggestion():
    with pytest.raises(TypeError, match=r"unknown constraint 'min_alt'; did you mean 'min_altitude'\?"):
        vigil.plan_windows(TARGETS_FILE, SITES_FILE, START, END, min_alt=40)


@pytest.mark.parametrize("options, words", [
    ({"min_altitude": 95}, "min_altitude: expected a number from -5 to 89 degrees, got 95"),
    ({"baseline": 2 * u.m}, "baseline: expected a quantity in h"),
    ({"twilight": "dusk"}, "twilight: expected civil, nautical or astronomical, got 'dusk'"),
    ({"event": "eclipse"}, "event: expected transit or occultation, got 'eclipse'"),
    ({"jobs": 0}, "jobs: expected a whole number of processes >= 1, got 0"),
])
def test_bad_options_raise_the_one_error_type(options, words):
    with pytest.raises(vigil.InputError) as caught:
        vigil.plan_windows(TARGETS_FILE, SITES_FILE, START, END, **options)
    assert str(caught.value).startswith(words)


@pytest.mark.parametrize("start", [datetime(2027, 3, 1), "first of March", Time([START, END])])
def test_ambiguous_or_bad_dates_are_refused(start):
    with pytest.raises(vigil.InputError, match="^start: "):
        vigil.plan_windows(TARGETS_FILE, SITES_FILE, start, END)


def test_end_before_start_is_refused():
    with pytest.raises(vigil.InputError, match="^end: 2027-03-01 00:00 must come after start 2027-03-08 00:00"):
        vigil.plan_windows(TARGETS_FILE, SITES_FILE, END, START)


def _location_free(message: str) -> str:
    """The message without its place ('FILE: line N', 'targets: row N', 'targets: columns') and without
    other rows' numbers ('also on line N')."""
    message = re.sub(r"^(targets: (row [^,:\s]+|columns)|.+?\.csv: line \d+)", "", message)
    return re.sub(r"also on (line|row) \d+", "also on another row", message)


def _table_faults():
    """Corpus files whose fault is in a value or a column (not in the file's text format)."""
    for path in CORPUS_TARGETS:
        try:
            vigil.read_targets(path)
        except vigil.InputError as exc:
            if re.search(r"field |missing column|missing coordinates|found, but vigil needs", str(exc)):
                yield pytest.param(path, str(exc), id=path.stem)


@pytest.mark.parametrize("path, file_message", list(_table_faults()))
def test_bad_in_memory_tables_get_the_file_message(path, file_message):
    records = _text_records(path)
    for table in (pd.DataFrame(records, dtype=str), records):
        with pytest.raises(vigil.InputError) as caught:
            vigil.plan_windows(table, SITES_FILE, START, END)
        assert _location_free(str(caught.value)) == _location_free(file_message)
        row = re.search(r"line (\d+)", file_message)
        if row and ", field" in file_message:  # the row is named: its position below the header
            assert str(caught.value).startswith(f"targets: row {int(row.group(1)) - 2},")


def test_in_memory_tables_are_checked_like_files(make_targets):
    good = {"name": "Lumen-1 b", "ra_deg": 120.0, "dec_deg": -20.0, "t0_bjd_tdb": 2461000.25, "t0_err_d": 4e-4,
            "period_d": 2.5, "period_err_d": 2e-6, "duration_h": 2.5}
    targets = vigil.read_targets([good])
    assert targets["t0_period_cov_d2"].iloc[0] == 0.0  # optional column filled in
    cases = [({"t0_bjd_tdb": 61000.25}, "looks like an MJD"), ({"dec_deg": 120.0}, "-90 <= Dec <= 90"),
             ({"period_d": float("nan")}, "targets: row 0, field period_d: expected a positive period in days, got "
                                          "an empty cell"),
             ({"dec_deg": 3 * u.m}, "targets: column 'dec_deg': unit 'm' cannot be read as deg")]
    for change, words in cases:
        with pytest.raises(vigil.InputError, match=re.escape(words)):
            vigil.read_targets([{**good, **change}], strict=True)
    # As with files, a row lacking a required value is left out unless strict.
    kept = vigil.read_targets([good, {**good, "name": "Lumen-2 b", "period_d": None}])
    assert list(kept["name"]) == ["Lumen-1 b"]
    qtable = QTable([[good[k]] for k in good], names=list(good))
    qtable["t0_bjd_tdb"] = Time([2461000.25], format="jd", scale="utc")
    with pytest.raises(vigil.InputError, match="a time in scale UTC; expected BJD in TDB"):
        vigil.read_targets(qtable)


def test_outputs_are_aware_utc_datetimes_and_bjd_floats(baseline):
    for column in ("mid_utc", "ingress_utc", "egress_utc", "window_start_utc", "window_end_utc",
                   "observable_start_utc", "observable_end_utc"):
        assert str(baseline[column].dtype) == "datetime64[s, UTC]"
    assert baseline["mid_bjd_tdb"].dtype == np.float64
    none = baseline[baseline["coverage"] == "none"]
    assert len(none) and none["observable_start_utc"].isna().all()  # missing as NaT, not '' or inf
    # astropy as the reference: BJD_TDB and the UTC mid-time differ by the light time (< 8.4 min) plus TDB-UTC.
    bjd_as_utc = Time(baseline["mid_bjd_tdb"].to_numpy(), format="jd", scale="tdb").utc
    seen = Time(baseline["mid_utc"].dt.tz_localize(None).to_numpy(), scale="utc")
    assert np.all(np.abs((bjd_as_utc - seen).to(u.s).value) < 8.4 * 60 + 1)


def test_to_qtable_gives_times_and_quantities(baseline):
    table = vigil.to_qtable(baseline)
    assert isinstance(table["mid_utc"], Time) and table["mid_utc"].scale == "utc"
    assert isinstance(table["mid_bjd_tdb"], Time) and table["mid_bjd_tdb"].scale == "tdb"
    assert table["alt_mid_deg"].unit == u.deg and table["mid_sigma_min"].unit == u.min
    first = baseline.iloc[0]
    assert table["mid_utc"][0].isot[:19] == first["mid_utc"].strftime("%Y-%m-%dT%H:%M:%S")
    assert table["mid_bjd_tdb"][0].jd == first["mid_bjd_tdb"]
    missing = baseline["observable_start_utc"].isna().to_numpy()
    assert np.array_equal(np.ma.getmaskarray(table["observable_start_utc"].jd), missing)


def test_project_transits_follows_the_linear_ephemeris():
    # T(n) = T0 + n P and sigma^2 = sigma_T0^2 + n^2 sigma_P^2 (the ephemeris in the README; common practice).
    row = {"name": "Lumen-1 b", "ra_deg": 120.0, "dec_deg": -20.0, "t0_bjd_tdb": 2461000.25, "t0_err_d": 4e-4,
           "period_d": 2.5, "period_err_d": 2e-6, "duration_h": 2.5}
    table = vigil.project_transits([row], Time(2461100.0, format="jd", scale="tdb"), Time(2461110.0, format="jd", scale="tdb"))
    n = table["epoch"].to_numpy()
    assert list(n) == [40, 41, 42, 43]
    assert np.allclose(table["mid_bjd_tdb"], 2461000.25 + n * 2.5, rtol=0, atol=1e-9)
    assert np.allclose(table["mid_sigma_min"], np.hypot(4e-4, n * 2e-6) * 1440, rtol=1e-12)


def test_command_line_and_api_write_identical_files(tmp_path, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1798761600")
    # The command line's --end includes its date whole: --end 2027-12-31 is the API's end 2028-01-01T00:00.
    result = CliRunner().invoke(app, ["windows", str(TARGETS_FILE), "--sites", str(SITES_FILE), "--start",
                                      "2027-01-01", "--end", "2027-12-31", "--csv", str(tmp_path / "cli.csv"),
                                      "--ics", str(tmp_path / "cli.ics"), "--local-time"])
    assert result.exit_code == 0, result.output
    sites = vigil.read_sites(SITES_FILE)
    windows = vigil.plan_windows(TARGETS_FILE, sites, "2027-01-01", "2028-01-01")
    vigil.write_windows_csv(windows, tmp_path / "api.csv", sites)
    vigil.write_windows_ics(windows, tmp_path / "api.ics", sites)
    assert (tmp_path / "cli.csv").read_bytes() == (tmp_path / "api.csv").read_bytes()
    assert (tmp_path / "cli.ics").read_bytes() == (tmp_path / "api.ics").read_bytes()
    assert len(windows) > 100


def test_api_examples_raise_no_deprecation_warning():
    with warnings.catch_warnings():
        warnings.simplefilter("error", DeprecationWarning)
        warnings.simplefilter("error", FutureWarning)
        windows = vigil.plan_windows(pd.read_csv(TARGETS_FILE), vigil.make_site("ridge", latitude_deg=-30.5,
                                     longitude_deg=-70.8, elevation_m=2400), "2027-03-01", "2027-03-08",
                                     min_altitude=35 * u.deg, include_unobservable=True)
        vigil.to_qtable(windows)


def test_campaign_command_line_and_api_write_identical_files(tmp_path):
    campaign = DEMO_DIR / "campaign.toml"
    result = CliRunner().invoke(app, ["campaign", str(campaign), "--target", "Quillon-2 b", "--out", str(tmp_path / "cli")])
    assert result.exit_code == 0, result.output
    outcome = vigil.run_campaign(campaign, target="Quillon-2 b")
    paths = outcome.write(tmp_path / "api")
    assert [p.name for p in paths] == ["summary.csv", "scenarios.csv", "forecast.csv", "ledger.csv", "budget.csv",
                                       "resolution.png", "hours.png", "budget.png"]
    for path in paths:
        assert (tmp_path / "cli" / path.name).read_bytes() == path.read_bytes(), path.name
    # In Python, "never" is NaN (a blank cell in summary.csv), never inf; ledger times are UTC datetimes.
    summary = outcome.summary
    assert not np.isinf(summary[["years_to_goal_p10", "years_to_goal_p50", "years_to_goal_p90"]].to_numpy()).any()
    assert str(outcome.ledger["mid_utc"].dtype) == "datetime64[s, UTC]"
    assert outcome.plot_resolution().axes and outcome.plot_hours().axes and outcome.plot_budget().axes
    assert set(outcome.budget["term"]) >= {"photon_target", "red_noise", "floor"} and len(outcome.scenarios) >= 3
    # budget.csv is the outcome's budget table as written (same bytes), its columns those documented.
    assert (tmp_path / "api" / "budget.csv").read_bytes() == csv_bytes(outcome.budget.round(4))
    assert list(outcome.budget.columns) == list(schema.BUDGET.names)
    assert all(f"- {name} :" in type(outcome).budget.__doc__ for name in schema.BUDGET.names)


def test_unknown_campaign_target_names_the_option():
    result = CliRunner().invoke(app, ["campaign", str(DEMO_DIR / "campaign.toml"), "--target", "Quillon-2",
                                      "--out", "unused"])
    assert result.exit_code == 2
    assert "--target: no target named 'Quillon-2'; did you mean 'Quillon-2 b'?" in result.output


def test_version_and_help_state_each_default_once():
    assert CliRunner().invoke(app, ["--version"]).output.strip() == f"vigil {vigil.__version__}"
    help_text = CliRunner().invoke(app, ["windows", "--help"], terminal_width=200).output
    assert "].  [default: " not in help_text and "x>=1" not in help_text and "{TARGETS.csv}" not in help_text
    assert "windows [OPTIONS] TARGETS.csv" in help_text
    result = CliRunner().invoke(app, ["windows", str(TARGETS_FILE), "--sites", str(SITES_FILE), "--start", START,
                                      "--end", END, "--event", "eclipse"])
    assert result.exit_code == 2 and "--event: expected transit or occultation" in result.output


def test_refit_from_python_equals_the_command(tmp_path):
    examples = Path(__file__).resolve().parents[1] / "examples"
    result = CliRunner().invoke(app, ["refit", str(examples / "timings.csv"), "--targets", str(TARGETS_FILE),
                                      "--out", str(tmp_path / "cli.csv")])
    assert result.exit_code == 0, result.output
    refitted = vigil.refit(pd.read_csv(examples / "timings.csv", dtype=str, keep_default_na=False), TARGETS_FILE)
    from vigil.export.table import write_csv

    write_csv(refitted.targets, tmp_path / "api.csv")
    assert (tmp_path / "cli.csv").read_bytes() == (tmp_path / "api.csv").read_bytes()
