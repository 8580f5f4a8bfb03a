"""Tests of the campaign stage: schedule (clashes, allocation caps), weather trials, ledger,
and the campaign file reader. Sites and targets are invented; small horizons keep it fast.

The builders here (campaign_spec, targets_table, run) are shared with test_forecast.py.
"""

import logging
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import vigil  # noqa: F401  (configures astropy offline before astropy is used)
from astropy.time import Time

from vigil.campaign import schedule, weather
from vigil.campaign.result import CampaignResult
from vigil.campaign.run import run_campaign
from vigil.campaign.spec import CampaignSpec, read_campaign
from vigil.sites import Site
from vigil.errors import InputError
from vigil.export.campaign_csv import write_campaign_csvs
from vigil.spectrum import Instrument
from vigil.windows import plan_windows

# Invented site at 45 deg S: a star at dec -75 never drops below 30 deg there (lower
# culmination at |lat| + |dec| - 90), so transits are seen on every dark night of the year.
SOUTH = Site("cerro_tordo", latitude_deg=-45.0, longitude_deg=-70.0, elevation_m=1200.0)
START = Time(2462867.5, format="jd", scale="utc")  # 2031-01-01 0h UTC
START_BJD_TDB = 2462867.5  # START as a plain Julian date: a reference for invented t0 values
SPECTROGRAPH = Instrument(aperture_m=4.0, central_obstruction=0.2, throughput=0.3,
                          wavelength_min_um=0.6, wavelength_max_um=1.0, noise_floor_ppm=0.0)
CONSTRAINTS = {"min_altitude_deg": 25.0, "baseline_h": 1.0, "sigma_k": 1.0, "twilight": "astronomical"}
# Invented hot giant around a Sun-like star, circumpolar from SOUTH, 0.9 d period: at most one
# transit a night, plenty of windows.
GIANT = {"name": "Brasa-4 b", "ra_deg": 150.0, "dec_deg": -75.0, "t0_bjd_tdb": START_BJD_TDB + 0.3, "t0_err_d": 1e-4,
         "period_d": 0.9, "period_err_d": 1e-6, "duration_h": 2.0, "t0_period_cov_d2": 0.0,
         "planet_radius_earth": 11.0, "planet_mass_earth": 300.0, "teq_k": 1400.0,
         "star_radius_sun": 1.0, "star_teff_k": 5800.0, "magnitude": 10.0, "mag_band": "V"}


def campaign_spec(sites=(SOUTH,), clear=1.0, **changes) -> CampaignSpec:
    """A one-year campaign from START at `sites`; `clear` is one fraction or 12 monthly ones."""
    monthly = tuple(clear) if np.ndim(clear) else (float(clear),) * 12
    fields = {"start": START, "horizon_years": 1.0, "targets_file": Path("invented_targets.csv"),
              "sites_file": Path("invented_sites.toml"), "site_names": tuple(s.name for s in sites),
              "clear_fraction": {s.name: monthly for s in sites}, "instrument": SPECTROGRAPH,
              "goal_resolution": 100.0, "goal_snr": 5.0, "trials": 20, "seed": 1, "constraints": dict(CONSTRAINTS)}
    return CampaignSpec(**{**fields, **changes})


def targets_table(*rows: dict) -> pd.DataFrame:
    """A targets table as catalog.read_targets gives it: GIANT with each row's changes."""
    return pd.DataFrame([{**GIANT, **row} for row in rows])


def run(spec: CampaignSpec, targets: pd.DataFrame, sites=(SOUTH,)) -> CampaignResult:
    return run_campaign(spec, targets, {s.name: s for s in sites}, engine="fast")


def windows_of(spec: CampaignSpec, targets: pd.DataFrame, sites=(SOUTH,), constraints=None) -> pd.DataFrame:
    """The windows stage's table for the campaign's span (the schedule's raw material)."""
    return plan_windows(targets, {s.name: s for s in sites}, spec.constraints if constraints is None else constraints,
                        spec.start, spec.end, engine="fast")


def half_year_of(jd_utc) -> list:
    """(year, 0 for January-June or 1 for July-December) of each UTC Julian date, by astropy."""
    return [(d.year, int(d.month > 6)) for d in Time(np.asarray(jd_utc), format="jd", scale="utc").datetime]


# --- weather ---------------------------------------------------------------------------------


def test_clear_sky_ledger_is_every_counted_window_all_clear():
    # A Bernoulli draw with p = 1 always succeeds (common practice, no source); with one target
    # there are no clashes and without caps every counted window (windows stage) becomes a visit.
    spec = campaign_spec(clear=1.0, coverage=("full", "ingress", "egress", "partial"), min_fraction=0.3)
    targets = targets_table({})
    ledger = run(spec, targets).ledger
    windows = windows_of(spec, targets)
    counted = windows[windows["coverage"].isin(spec.coverage) & (windows["observable_fraction"] >= 0.3)]
    assert len(ledger) > 50
    assert (ledger["weather"] == "clear").all() and (ledger["clear_share"] == 1.0).all()
    assert ledger["epoch"].tolist() == counted["epoch"].tolist()
    assert ledger["start_jd_utc"].to_numpy() == pytest.approx(counted["observable_start_jd_utc"].to_numpy(), abs=1e-9)
    assert ledger["end_jd_utc"].to_numpy() == pytest.approx(counted["observable_end_jd_utc"].to_numpy(), abs=1e-9)
    # A full window holds first to fourth contact: its in-transit time is T14 (Winn 2010, eq. 14 definition).
    full = ledger[ledger["coverage"] == "full"]
    assert len(full) > 0 and full["in_transit_h"].to_numpy() == pytest.approx(2.0, abs=1e-6)


def test_overcast_sky_loses_every_visit_and_stacks_nothing():
    # A Bernoulli draw with p = 0 never succeeds (common practice, no source).
    result = run(campaign_spec(clear=0.0), targets_table({}))
    assert len(result.ledger) > 50
    assert (result.ledger["weather"] == "lost").all() and (result.ledger["clear_share"] == 0.0).all()
    assert result.summary["in_transit_hours_per_year"].iloc[0] == 0.0
    assert (result.yearly["in_transit_hours_p90"] == 0.0).all()
    assert not result.summary["reachable"].iloc[0] and np.isinf(result.years_to_goal["Brasa-4 b"]).all()


def test_same_seed_gives_identical_csv_bytes_and_another_seed_differs(tmp_path):
    # Seeded pseudo-random draws repeat exactly (numpy Generator contract, common practice).
    targets = targets_table({})

    def csv_bytes(seed: int, folder: str) -> list:
        paths = write_campaign_csvs(run(campaign_spec(clear=0.5, seed=seed), targets), tmp_path / folder)
        return [p.read_bytes() for p in paths]

    first, again, other = csv_bytes(7, "a"), csv_bytes(7, "b"), csv_bytes(8, "c")
    assert first == again
    assert other[2] != first[2]  # ledger: which visits were clear
    assert other[0] != first[0]  # summary: stacked hours per year


def test_clear_share_in_each_month_matches_its_clear_fraction():
    # Each site-night is a Bernoulli draw with the month's clear fraction (common practice, no
    # source): over T trials and n visits on distinct nights, the clear share has binomial
    # standard error sqrt(p (1 - p) / (n T)). P = 0.9 d gives at most one visit a night.
    monthly = (0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 1.0, 0.6, 0.7, 0.8, 0.9, 0.45)
    trials = 4000
    ledger = run(campaign_spec(clear=monthly, trials=trials, seed=11), targets_table({})).ledger
    months = np.array([d.month for d in Time(ledger["mid_jd_utc"].to_numpy(), format="jd", scale="utc").datetime])
    # JD days turn at noon UT, in the morning at 70 deg W: one night is one integer JD.
    assert len(np.unique(np.floor(ledger["mid_jd_utc"].to_numpy()))) == len(ledger)  # one visit per night
    z_scores = []
    for month in np.unique(months):
        p = monthly[month - 1]
        shares = ledger["clear_share"].to_numpy()[months == month]
        error = np.sqrt(p * (1 - p) / (shares.size * trials))
        if error == 0:
            assert shares == pytest.approx(p, abs=0)
        else:
            z_scores.append(abs(shares.mean() - p) / error)
    assert len(np.unique(months)) >= 10 and len(z_scores) >= 8
    assert max(z_scores) < 4.0


def test_visits_on_one_site_night_share_the_weather():
    # One night's weather at one site covers everything observed that night (common practice,
    # no source); another night is drawn independently.
    visits = pd.DataFrame({"site": ["cerro_tordo"] * 3, "night": [2462000, 2462000, 2462001], "month": [3, 3, 3]})
    clear = weather.clear_weather(visits, campaign_spec(clear=0.5).clear_fraction, 400, np.random.default_rng(3))
    assert clear.shape == (400, 3)
    assert (clear[:, 0] == clear[:, 1]).all()
    assert (clear[:, 0] != clear[:, 2]).any()


# --- clashes ---------------------------------------------------------------------------------


def _overlapping_pairs(visits: pd.DataFrame, first: str, second: str) -> list:
    a, b = visits[visits["target"] == first], visits[visits["target"] == second]
    return [(i, j) for i, va in a.iterrows() for j, vb in b.iterrows()
            if va["start_jd_utc"] < vb["end_jd_utc"] and vb["start_jd_utc"] < va["end_jd_utc"]]


@pytest.mark.parametrize("priority_a, priority_b, winner", [
    (2.0, 1.0, "Brasa-4 b"),   # user priority first, although the other target is brighter
    (1.0, 2.0, "Ferrun-2 b"),
    (0.0, 0.0, "Ferrun-2 b"),  # equal priority: more spectral signal per telescope hour wins
])
def test_one_telescope_observes_one_target_at_a_time_and_priority_wins(priority_a, priority_b, winner):
    # A telescope points at one target at a time (common practice, no source). Two invented
    # targets side by side in the sky with 0.9 d and 1.1 d periods: their windows often overlap.
    targets = targets_table({"priority": priority_a},
                            {"name": "Ferrun-2 b", "ra_deg": 152.0, "period_d": 1.1, "t0_bjd_tdb": START_BJD_TDB + 0.35,
                             "magnitude": 8.5, "priority": priority_b})
    spec = campaign_spec(horizon_years=0.5)
    candidates = schedule.visits_from_windows(windows_of(spec, targets), {SOUTH.name: SOUTH}, spec.coverage,
                                               spec.min_fraction, spec.overhead_h)
    clashes = _overlapping_pairs(candidates, "Brasa-4 b", "Ferrun-2 b")
    assert len(clashes) >= 5
    ledger = run(spec, targets).ledger
    order = np.argsort(ledger["start_jd_utc"].to_numpy())
    starts, ends = ledger["start_jd_utc"].to_numpy()[order], ledger["end_jd_utc"].to_numpy()[order]
    assert (starts[1:] >= ends[:-1]).all()  # every pair of visits at the site is disjoint
    loser = "Ferrun-2 b" if winner == "Brasa-4 b" else "Brasa-4 b"
    observed = set(zip(ledger["target"], ledger["epoch"]))
    won = {(winner, e) for e in candidates.loc[candidates["target"] == winner, "epoch"]}
    assert won <= observed
    loser_rows = [j if loser == "Ferrun-2 b" else i for i, j in clashes]
    lost = set(zip(candidates.loc[loser_rows, "target"], candidates.loc[loser_rows, "epoch"]))
    assert not lost & observed


# --- allocation --------------------------------------------------------------------------------


def test_per_target_cap_limits_visits_per_half_year():
    # Time granted per semester caps the attempts (common practice, no source): at most N
    # visits per target in January-June and in July-December (half-years of the UTC date, astropy).
    targets = targets_table({})
    uncapped = pd.Series(half_year_of(run(campaign_spec(), targets).ledger["mid_jd_utc"])).value_counts()
    assert len(uncapped) == 2 and (uncapped > 3).all()  # windows abound in both halves
    capped = pd.Series(half_year_of(run(campaign_spec(per_target_per_semester=3), targets).ledger["mid_jd_utc"]))
    assert capped.value_counts().to_dict() == {(2031, 0): 3, (2031, 1): 3}


def test_per_site_cap_limits_visits_per_half_year_over_all_targets():
    # As above, for the time a site grants the whole programme (common practice, no source).
    # Same sky position, but two stars (a host column says so; otherwise they would share pointings).
    targets = targets_table({}, {"name": "Ferrun-2 b", "period_d": 1.3, "t0_bjd_tdb": START_BJD_TDB + 0.7,
                                 "host": "Ferrun-2"})
    ledger = run(campaign_spec(per_site_per_semester=5), targets).ledger
    per_half = pd.Series(half_year_of(ledger["mid_jd_utc"])).value_counts().to_dict()
    assert per_half == {(2031, 0): 5, (2031, 1): 5}
    assert (ledger["site"] == SOUTH.name).all()


# --- ledger hours ------------------------------------------------------------------------------


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(period_d=st.floats(0.6, 4.0), duration_h=st.floats(0.5, 3.0), dec_deg=st.floats(-85.0, 15.0),
       ra_deg=st.floats(0.0, 359.0), phase=st.floats(0.0, 1.0), stale_epochs=st.integers(0, 2000),
       period_err_d=st.floats(1e-6, 1e-3), baseline_h=st.floats(0.0, 2.0), sigma_k=st.floats(0.0, 3.0),
       coverage=st.sets(st.sampled_from(["full", "ingress", "egress", "partial"]), min_size=1),
       second_target=st.booleans())
def test_ledger_in_transit_hours_never_exceed_the_windows_transit_time(period_d, duration_h, dec_deg, ra_deg, phase,
                                                                       stale_epochs, period_err_d, baseline_h,
                                                                       sigma_k, coverage, second_target):
    # In-transit time is part of [first, fourth contact] (T14; Winn 2010 definition): no visit
    # holds more than its window's duration, so no ledger sums to more than all windows' T14.
    t0 = START_BJD_TDB + phase * period_d - stale_epochs * period_d
    rows = [{"t0_bjd_tdb": t0, "period_d": period_d, "duration_h": duration_h, "dec_deg": dec_deg, "ra_deg": ra_deg,
             "period_err_d": period_err_d}]
    if second_target:
        rows.append({"name": "Ferrun-2 b", "t0_bjd_tdb": t0 + 0.21, "period_d": period_d * 1.17,
                     "dec_deg": dec_deg, "ra_deg": ra_deg + 1.0})
    targets = targets_table(*rows)
    spec = campaign_spec(horizon_years=0.25, clear=0.5, trials=3, coverage=tuple(sorted(coverage)),
                         constraints={**CONSTRAINTS, "baseline_h": baseline_h, "sigma_k": sigma_k})
    result = run(spec, targets)
    windows = windows_of(spec, targets)
    for name, duration in zip(targets["name"], targets["duration_h"]):
        mine = result.ledger[result.ledger["target"] == name]
        assert (mine["in_transit_h"] <= duration + 1e-6).all() and (mine["in_transit_h"] >= 0).all()
        windows_t14_h = ((windows["egress_jd_utc"] - windows["ingress_jd_utc"])[windows["target"] == name]).sum() * 24.0
        assert mine["in_transit_h"].sum() <= windows_t14_h + 1e-6
        stacked_h = result.summary.set_index("target").loc[name, "in_transit_hours_per_year"] * spec.horizon_years
        assert stacked_h <= windows_t14_h + 1e-6


# --- campaign file -----------------------------------------------------------------------------

VALID_CAMPAIGN = """\
[campaign]
start = "2031-01-01"
horizon_years = 2
targets = "invented_targets.csv"
sites_file = "invented_sites.toml"
sites = ["cerro_tordo"]

[instrument]
aperture_m = 4.0
throughput = 0.3
wavelength_min_um = 0.6
wavelength_max_um = 1.0

[goal]
resolution = 100
snr = 5

[weather.cerro_tordo]
clear_fraction = [0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5]
"""


def _campaign_file(tmp_path, text: str) -> Path:
    path = tmp_path / "invented_campaign.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_valid_campaign_file_reads_with_paths_beside_it(tmp_path):
    # TOML 1.0 (toml.io) read by the standard library; relative paths resolve beside the file.
    spec = read_campaign(_campaign_file(tmp_path, VALID_CAMPAIGN))
    assert spec.targets_file == tmp_path / "invented_targets.csv"
    assert spec.horizon_years == 2.0 and spec.goal_resolution == 100.0
    assert spec.clear_fraction == {"cerro_tordo": (0.5,) * 12}
    assert spec.end.jd - spec.start.jd == pytest.approx(2 * 365.25)  # Julian years (IAU)


# Each bad file: the InputError names the file and the [table] key (vigil.errors convention).
@pytest.mark.parametrize("old, new, names", [
    ("[goal]\nresolution = 100\nsnr = 5\n", "", "[goal] resolution"),
    ("0.5, 0.5, 0.5]", "0.5, 0.5]", "[weather.cerro_tordo] clear_fraction"),
    ("horizon_years = 2", "horizon_years = 0", "[campaign] horizon_years"),
    ("horizon_years = 2", "horizon_years = 10000", "[campaign] horizon_years"),
])
def test_bad_campaign_file_names_file_and_key(tmp_path, old, new, names):
    assert old in VALID_CAMPAIGN
    path = _campaign_file(tmp_path, VALID_CAMPAIGN.replace(old, new))
    with pytest.raises(InputError) as caught:
        read_campaign(path)
    message = str(caught.value)
    assert str(path) in message and names in message and "\n" not in message


def test_unknown_key_is_warned_with_file_and_key(tmp_path, caplog, monkeypatch):
    # The command line stops the 'vigil' logger propagating; let caplog's root handler see it.
    monkeypatch.setattr(logging.getLogger("vigil"), "propagate", True)
    path = _campaign_file(tmp_path, VALID_CAMPAIGN.replace("horizon_years = 2", "horizon_years = 2\nhorizon_yeras = 3"))
    with caplog.at_level(logging.WARNING, logger="vigil"):
        spec = read_campaign(path)
    warned = [r.getMessage() for r in caplog.records if r.levelno == logging.WARNING]
    assert any(str(path) in m and "[campaign]" in m and "horizon_yeras" in m for m in warned)
    assert spec.horizon_years == 2.0
