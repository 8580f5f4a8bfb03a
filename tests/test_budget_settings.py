"""Tests of the budget's campaign keys, the per-bin judgement and the budget outputs.
Campaign files, targets and sites are invented; builders come from test_campaign.py."""

import logging
from dataclasses import fields, replace

import numpy as np
import pandas as pd
import pytest

import vigil  # noqa: F401  (configures astropy offline before astropy is used)
from vigil import forecast, noise_model, stacking
from vigil.bodies import target_bodies
from vigil.campaign import noise_spec
from vigil.campaign.spec import read_campaign
from vigil.errors import InputError
from vigil.export.campaign_csv import write_campaign_csvs

from test_campaign import VALID_CAMPAIGN, _campaign_file, campaign_spec, run, targets_table


def test_every_noise_setting_has_its_campaign_key():
    # Definition: each NoiseModel field can be set from [instrument].
    assert {f.name for f in fields(noise_model.NoiseModel)} == set(noise_spec.NOISE_KEYS)


def test_an_old_file_keeps_working_and_is_warned(tmp_path, caplog, monkeypatch):
    monkeypatch.setattr(logging.getLogger("vigil"), "propagate", True)
    path = _campaign_file(tmp_path, VALID_CAMPAIGN)
    with caplog.at_level(logging.WARNING, logger="vigil"):
        spec = read_campaign(path)
    assert spec.noise == noise_model.GROUND and spec.goal_bin_fraction == 1.0
    warned = " ".join(r.getMessage() for r in caplog.records)
    assert str(path) in warned and "kind not given" in warned and "red_noise_ppm" in warned


def test_space_kind_and_keys_are_read(tmp_path):
    text = VALID_CAMPAIGN.replace("wavelength_max_um = 1.0", 'wavelength_max_um = 1.0\nkind = "space"\n'
                                  "red_noise_ppm = 12\ncomparison_mag_delta = false\nexcluded_um = [[0.7, 0.72]]")
    text = text.replace("snr = 5", "snr = 5\nbin_fraction = 0.9") + "\n[scenarios.steam]\nmu = 18\nn_scale_heights = 1.5\n"
    spec = read_campaign(_campaign_file(tmp_path, text))
    assert spec.noise == replace(noise_model.SPACE, red_noise_ppm=12.0, excluded_um=((0.7, 0.72),))
    assert spec.goal_bin_fraction == 0.9 and [s.name for s in spec.scenarios] == ["steam"]


@pytest.mark.parametrize("old, new, names", [
    ("wavelength_max_um = 1.0", "wavelength_max_um = 1.0\nkind = \"orbit\"", "[instrument] kind"),
    ("wavelength_max_um = 1.0", "wavelength_max_um = 1.0\nred_noise_ppm = -3", "[instrument] red_noise_ppm"),
    ("wavelength_max_um = 1.0", "wavelength_max_um = 1.0\nexcluded_um = [[0.8, 0.7]]", "[instrument] excluded_um"),
    ("wavelength_max_um = 1.0", "wavelength_max_um = 1.0\nextinction = 1", "[instrument] extinction"),
    ("snr = 5", "snr = 5\nbin_fraction = 0", "[goal] bin_fraction"),
    ("snr = 5", "snr = 5\n[scenarios.steam]\nmu = -1\nn_scale_heights = 1", "[scenarios.steam] mu"),
])
def test_bad_budget_keys_name_file_and_key(tmp_path, old, new, names):
    path = _campaign_file(tmp_path, VALID_CAMPAIGN.replace(old, new))
    with pytest.raises(InputError) as caught:
        read_campaign(path)
    message = str(caught.value)
    assert str(path) in message and names in message and "\n" not in message


def test_telluric_bins_are_left_out_and_the_share_of_bins_decides():
    # Bins inside an excluded range are not judged; with bin_fraction q the goal needs the bin
    # ranked ceil(q n)-th from the best (definition).
    usable = stacking.sample_wavelengths_um(0.55, 0.9, noise_model.TELLURIC_BANDS_UM)
    assert not any(((usable >= lo) & (usable <= hi)).any() for lo, hi in noise_model.TELLURIC_BANDS_UM)
    assert usable[0] == 0.55 and usable[-1] == 0.9
    information = np.arange(1.0, 11.0)
    assert stacking.deciding(information, 1.0) == 1.0 and stacking.deciding(information, 0.75) == 3.0
    with pytest.raises(InputError, match="excluded"):
        stacking.sample_wavelengths_um(0.76, 0.765, noise_model.TELLURIC_BANDS_UM)


def test_hours_needed_uses_the_visits_own_baseline_ratio():
    # Photon noise only: t_in = (1 + 1/rho) R / (k m) for baseline ratio rho (the old closed form),
    # so with the median visit's rho = 0.5 three times the hours of rho = 1 over two are needed.
    planet_star = forecast.Body(*target_bodies(pd.Series(targets_table({}).iloc[0]), "invented"))
    spec = campaign_spec(noise=noise_model.PHOTON_ONLY)
    visit = pd.DataFrame({"in_transit_h": [2.0], "baseline_h": [2.0], "airmass": [1.0], "moon_illumination": [0.0],
                          "moon_sep_deg": [90.0], "elevation_m": [0.0], "ground": [True]})
    even = forecast.hours_needed(planet_star, spec, visit, 1e10)
    short = forecast.hours_needed(planet_star, spec, visit.assign(baseline_h=1.0), 1e10)
    assert short / even == pytest.approx((1 + 1 / 0.5) / (1 + 1 / 1.0), rel=1e-12)


def test_budget_names_the_terms_and_the_dominant_one(tmp_path):
    result = run(campaign_spec(noise=replace(noise_model.GROUND, red_noise_ppm=5000.0)), targets_table({}))
    budget = result.budget
    assert list(budget["term"]) == ["photon_target", "photon_comparison", "sky", "read", "scintillation",
                                    "red_noise", "floor"]
    assert budget["share_of_variance"].sum() == pytest.approx(1.0)
    assert budget.loc[budget["term"] == "red_noise", "ppm_per_bin_per_visit"].iloc[0] == pytest.approx(5000.0)
    assert forecast.dominant_term(budget) == "red_noise"
    row = result.summary.iloc[0]
    assert not row["reachable"] and row["limited_by"].endswith("(red_noise)")
    assert set(result.scenarios["scenario"]) == {"h2_clear", "high_mu", "h2_muted"}
    paths = write_campaign_csvs(result, tmp_path)
    written = pd.read_csv(tmp_path / "budget.csv")
    assert list(written.columns[:4]) == ["target", "term", "ppm_per_bin_per_visit", "share_of_variance"]
    assert {p.name for p in paths} >= {"budget.csv", "scenarios.csv"}
