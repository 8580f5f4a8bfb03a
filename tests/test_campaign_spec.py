"""One validation for every way into a campaign: the campaign file, a CampaignSpec built in
Python, dataclasses.replace and keyword arguments to vigil.run_campaign refuse the same bad
value with the same words. The bad values are those of the campaign corpus (tests/corpus)."""

import dataclasses
import datetime
from pathlib import Path

import pytest
from astropy.time import Time

import vigil
import vigil.noise_model
from vigil.campaign import spec_checks
from vigil.campaign.spec import CampaignSpec, read_campaign
from vigil.errors import ArgumentError, InputError

CORPUS = Path(__file__).parent / "corpus"
GOOD = CORPUS / "good" / "campaign.toml"
# The corpus files name their companions as ../good/..., so the file's messages carry that path.
BAD_SITES = CORPUS / "campaign" / "../good/sites.toml"


def _good() -> CampaignSpec:
    return dataclasses.replace(read_campaign(GOOD), sites_file=BAD_SITES)


def _clear(months) -> dict:
    return {"alto_verde": months}


def _instrument(**changes):
    return lambda spec: dataclasses.replace(spec, instrument=dataclasses.replace(spec.instrument, **changes))


MONTHS = [0.8, 0.8, 0.75, 0.7, 0.6, 0.55, 0.55, 0.6, 0.7, 0.75, 0.8, 0.8]
# Corpus file -> the same bad value given in Python (a change to the good campaign's spec).
SAME_VALUE = {
    "horizon_zero.toml": {"horizon_years": 0},
    "horizon_10000_years.toml": {"horizon_years": 10000},
    "start_not_a_date.toml": {"start": "next spring"},
    "trials_fractional.toml": {"trials": 4.5},
    "coverage_unknown.toml": {"coverage": ["most"]},
    "sites_empty_list.toml": {"site_names": []},
    "site_not_in_sites_file.toml": {"site_names": ["alto_verde", "cima_lejana"],
                                    "clear_fraction": {"alto_verde": MONTHS, "cima_lejana": [0.5] * 12}},
    "min_altitude_out_of_range.toml": {"constraints": {"min_altitude_deg": 120}},
    "weather_missing.toml": {"clear_fraction": {}},
    "clear_fraction_eleven_months.toml": {"clear_fraction": _clear(MONTHS[:11])},
    "clear_fraction_above_one.toml": {"clear_fraction": _clear([1.8, *MONTHS[1:]])},
    "clear_fraction_text.toml": {"clear_fraction": _clear(["clear", *MONTHS[1:]])},
    "goal_snr_negative.toml": {"goal_snr": -3},
    "ends_after_2300.toml": {"start": "2250-01-01", "horizon_years": 100},
    "ephemeris_table_missing.toml": {"ephemeris_table": CORPUS / "campaign" / "companions/ttv_missing.csv"},
    "ephemeris_table_gap.toml": {"ephemeris_table": CORPUS / "campaign" / "companions/ttv_gap.csv"},
}
# Instrument values are checked by the Instrument itself, which the campaign file's reader builds.
SAME_INSTRUMENT = {
    "throughput_above_one.toml": {"throughput": 1.5},
    "wavelengths_reversed.toml": {"wavelength_max_um": 0.5},
}


def _file_error(name: str) -> str:
    with pytest.raises(InputError) as caught:
        read_campaign(CORPUS / "campaign" / name)
    return str(caught.value)


@pytest.mark.parametrize("name", sorted(SAME_VALUE))
@pytest.mark.parametrize("way", ["constructor", "replace", "run_campaign"])
def test_python_refuses_each_corpus_value_as_the_file_does(name, way):
    good, changes = _good(), SAME_VALUE[name]
    with pytest.raises(ArgumentError) as caught:
        if way == "constructor":
            CampaignSpec(**{**{f.name: getattr(good, f.name) for f in dataclasses.fields(good)}, **changes})
        elif way == "replace":
            dataclasses.replace(good, **changes)
        else:
            vigil.run_campaign(good, **changes)
    error = caught.value
    # The same words about the same value; only the field's name differs (file key vs Python name).
    assert f"{CORPUS / 'campaign' / name}: {spec_checks.file_key(error.argument)}: {error.detail}" == _file_error(name)
    assert str(error).startswith(f"{error.argument}: ")
    assert not str(error).startswith(("[", str(CORPUS)))


@pytest.mark.parametrize("name", sorted(SAME_INSTRUMENT))
def test_python_refuses_each_corpus_instrument_as_the_file_does(name):
    with pytest.raises(ArgumentError) as caught:
        _instrument(**SAME_INSTRUMENT[name])(_good())
    error = caught.value
    assert f"{CORPUS / 'campaign' / name}: [instrument] {error.argument}: {error.detail}" == _file_error(name)


def test_corpus_value_cases_cover_every_value_fault_of_the_corpus():
    # Faults of the file's shape (syntax, encoding, missing tables, missing files) have no
    # Python counterpart: a missing field is the dataclass's own TypeError.
    shape_only = {"syntax_error.toml", "latin1_comment.toml", "missing_campaign_table.toml", "missing_goal.toml",
                  "weather_not_a_table.toml", "start_as_toml_date.toml", "unknown_key.toml", "unknown_table.toml",
                  "targets_file_missing.toml", "targets_without_radius.toml", "targets_bad_band.toml"}
    corpus = {p.name for p in (CORPUS / "campaign").glob("*.toml")}
    assert corpus - shape_only == set(SAME_VALUE) | set(SAME_INSTRUMENT)


def test_a_valid_spec_round_trips():
    spec = read_campaign(GOOD)
    fields = {f.name: getattr(spec, f.name) for f in dataclasses.fields(spec)}
    assert CampaignSpec(**fields) == spec
    assert dataclasses.replace(spec) == spec
    assert dataclasses.replace(spec, trials=9).trials == 9


def test_python_values_are_normalised_like_the_files():
    spec = read_campaign(GOOD)
    built = dataclasses.replace(
        spec, start=datetime.datetime(2027, 1, 1, tzinfo=datetime.timezone.utc), horizon_years=1,
        site_names=["alto_verde"], coverage=["full", "ingress"], sites_file=str(spec.sites_file),
        clear_fraction={"alto_verde": [0.5] * 12})
    assert built.start == Time("2027-01-01", scale="utc") and built.start.scale == "utc"
    assert isinstance(built.horizon_years, float) and built.site_names == ("alto_verde",)
    assert built.coverage == ("full", "ingress") and built.sites_file == spec.sites_file
    assert built.clear_fraction == {"alto_verde": (0.5,) * 12}


@pytest.mark.parametrize("changes, words", [
    ({"constraints": {"min_altitude": 30}}, ("constraints", "unknown key 'min_altitude'", "'min_altitude_deg'")),
    ({"constraints": {"twilight": "dusk"}}, ("constraints['twilight']", "'dusk'")),
    ({"site_names": "alto_verde"}, ("site_names", "list of site names")),
    ({"site_names": ["alto_verde", "alto_verde"]}, ("site_names", "listed twice")),
    ({"seed": -1}, ("seed", "whole number")),
    ({"per_target_per_semester": 2.5}, ("per_target_per_semester", "whole number")),
    ({"overhead_h": 30}, ("overhead_h", "0 to 24 hours")),
    ({"goal_bin_fraction": 0}, ("goal_bin_fraction", "above 0")),
    ({"instrument": "4 m"}, ("instrument", "Instrument")),
    ({"targets_file": 5}, ("targets_file", "file path")),
    ({"refresh_every_years": 1.0, "refresh_timing_err_d": 0.0}, ("refresh_timing_err_d", "600 minutes")),
    ({"start": datetime.datetime(2027, 1, 1)}, ("start", "time zone")),
    ({"extrapolate_table": True}, ("extrapolate_table", "needs ephemeris_table")),
])
def test_values_only_python_can_give_are_refused_naming_the_field(changes, words):
    with pytest.raises(ArgumentError) as caught:
        dataclasses.replace(read_campaign(GOOD), **changes)
    assert all(w in str(caught.value) for w in words), str(caught.value)
    assert caught.value.argument.split("[")[0] == words[0].split("[")[0]


def test_run_campaign_refuses_an_unknown_setting_with_a_suggestion():
    with pytest.raises(TypeError, match="'trials'"):
        vigil.run_campaign(GOOD, trails=5)


def test_a_file_value_out_of_range_in_the_refresh_table_names_its_key(tmp_path):
    path = _campaign_file(tmp_path, extra="\n[refresh]\nevery_years = 500\ntiming_err_min = 1.0\n")
    with pytest.raises(InputError, match=r"\[refresh\] every_years: expected a number from 0.1 to 100 years, got 500"):
        read_campaign(path)


def _campaign_file(tmp_path, instrument_line: str = "", extra: str = "") -> Path:
    """The good campaign, its companions named by absolute path, with a line added to [instrument]."""
    text = GOOD.read_text(encoding="utf-8").replace('targets = "targets.csv"', f'targets = "{GOOD.parent}/targets.csv"')
    text = text.replace('sites_file = "sites.toml"', f'sites_file = "{GOOD.parent}/sites.toml"')
    text = text.replace('kind = "ground"\n', f'kind = "ground"\n{instrument_line}\n')
    path = tmp_path / "campaign.toml"
    path.write_text(text + extra, encoding="utf-8")
    return path


@pytest.mark.parametrize("key, toml_value, value", [
    ("exposure_s", "0", 0), ("comparison_mag_delta", "20", 20), ("extinction", '"yes"', "yes"),
    ("excluded_um", "[[1.0, 0.5]]", [[1.0, 0.5]]), ("impact_parameter", "1.0", 1.0), ("red_noise_ppm", "-1", -1),
])
def test_noise_settings_are_refused_alike_from_a_file_and_from_python(tmp_path, key, toml_value, value):
    with pytest.raises(ArgumentError) as caught:
        dataclasses.replace(vigil.noise_model.GROUND, **{key: value})
    assert str(caught.value).startswith(f"{key}: expected ")
    path = _campaign_file(tmp_path, f"{key} = {toml_value}")
    with pytest.raises(InputError) as in_file:
        read_campaign(path)
    assert str(in_file.value) == f"{path}: [instrument] {caught.value}"
