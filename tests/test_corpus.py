"""Malformed inputs from tests/corpus/ through the command line, as a user meets them.

Each bad file has exactly one fault next to the valid companions in tests/corpus/good/. An
error must be one line `vigil: error: ...` naming the file, the line or TOML key and the field
with what was expected, exit status 2, no traceback, and no output file created or changed.
Plausible but odd values are accepted with a warning; harmless variants (byte-order mark,
CRLF line ends, 0-360 longitudes, a TOML date) give the same result as the companions.
The expected words come from vigil's own messages (catalog.py, textfile.py, campaign/spec.py, bodies.py):
what a message must say is this project's convention (RULES.md), not an outside source.
"""

from pathlib import Path

import pytest
from typer.testing import CliRunner

from vigil.cli import app

from test_cli import _restore_vigil_logger  # noqa: F401  (autouse: leave the 'vigil' logger as found)

CORPUS = Path(__file__).resolve().parent / "corpus"
GOOD = CORPUS / "good"
WINDOW_DATES = ("--start", "2027-03-01", "--end", "2027-03-08")
SENTINEL = b"an earlier result that must survive\n"

# file (relative to the corpus) -> words the error line must hold besides the file's path.
TARGET_ERRORS = {
    "missing_column.csv": ("line 1", "missing column", "period_err_d"),
    "misspelt_column.csv": ("line 1", "missing column", "period_d", "'peroid_d'"),
    "missing_coordinates.csv": ("line 1", "ra_deg", "dec_deg"),
    "duplicate_column.csv": ("line 1", "'period_d'", "appears twice"),
    "empty.csv": ("empty", "header line"),
    "blank_lines_only.csv": ("empty", "header line"),
    "header_only.csv": ("header only", "one row per target"),
    "header_commented_out.csv": ("line 2", "header row is commented out", "'# name,ra_deg,...'", "remove the '#'"),
    "nan_period.csv": ("line 3", "field period_d", "positive period in days", "'NaN'"),
    "infinite_duration.csv": ("line 3", "field duration_h", "duration in hours", "'inf'"),
    "text_in_dec.csv": ("line 2", "field dec_deg", "declination in degrees", "'minus thirty'"),
    "text_in_radius.csv": ("line 3", "field planet_radius_earth", "a number", "'large'"),
    "negative_period.csv": ("line 2", "field period_d", "period of at least", "-2.84631"),
    "zero_period.csv": ("line 3", "field period_d", "period of at least", "got 0"),
    "period_err_exceeds_period.csv": ("line 2", "field period_err_d", "smaller than half the period", "3.1"),
    "negative_t0_err.csv": ("line 3", "field t0_err_d", ">= 0"),
    "t0_err_over_half_period.csv": ("line 3", "field t0_err_d", "smaller than half the period", "2.5 d"),
    "covariance_too_large.csv": ("line 3", "field t0_period_cov_d2", "t0_err_d * period_err_d"),
    "dec_beyond_90.csv": ("line 3", "field dec_deg", "-90 <= Dec <= 90", "-95.2"),
    "ra_beyond_360.csv": ("line 2", "field ra_deg", "0 <= RA < 360", "384.3"),
    "ra_negative.csv": ("line 2", "field ra_deg", "0 <= RA < 360", "-84.3"),
    "bad_sexagesimal.csv": ("line 3", "field ra", "hh:mm:ss", "'25:61:00'"),
    "t0_mjd.csv": ("line 2", "field t0_bjd_tdb", "MJD", "BJD_TDB"),
    "t0_jd_minus_2450000.csv": ("line 3", "field t0_bjd_tdb", "JD - 2450000", "2460880.77410", "BJD_TDB"),
    "t0_far_beyond_jd.csv": ("line 2", "field t0_bjd_tdb", "full Julian date", "BJD_TDB"),
    "t0_hjd_utc_column.csv": ("line 1", "'t0_hjd_utc'", "t0_bjd_tdb", "BJD_TDB"),
    "t0_jd_utc_column.csv": ("line 1", "'t0_jd_utc'", "t0_bjd_tdb", "BJD_TDB"),
    "duration_longer_than_period.csv": ("line 2", "field duration_h", "duration < period", "70 h"),
    "duplicate_names.csv": ("line 3", "field name", "'Brisa-4 b'", "appears twice", "line 2"),
    "semicolons_decimal_commas.csv": ("line 1", "semicolons", "comma-separated", "decimal mark"),
    "tabs.csv": ("line 1", "tabs", "comma-separated"),
    "decimal_commas.csv": ("line 2", "17 fields", "header has 15", "decimal comma"),
    "decimal_comma_quoted.csv": ("line 2", "field ra_deg", "decimal comma", "84.30"),
    "too_many_fields.csv": ("line 3", "17 fields", "header has 15"),
    "latin1_name.csv": ("line 3", "not UTF-8", "0xE9"),
    "nul_byte.csv": ("line 2", "control character U+0000", "plain text"),
    "unclosed_quote.csv": ("line 3", "quotes"),
    "very_long_line.csv": ("line 3", "characters long", "at most 10000"),
    "magnitude_minus_800.csv": ("line 3", "field magnitude", "'Orla-12 b'", "from -5 to 30", "-800"),
    "star_radius_denormal.csv": ("line 3", "field star_radius_sun", "'Orla-12 b'", "solar radii", "5e-324"),
    "planet_mass_1e300.csv": ("line 3", "field planet_mass_earth", "'Orla-12 b'", "Earth masses", "1e300"),
    "teq_below_absolute_zero.csv": ("line 3", "field teq_k", "from 10 to 6000 K", "-20"),
    "name_bidi_mark.csv": ("line 3", "field name", "U+200F", "RIGHT-TO-LEFT MARK", "visible characters"),
    "name_only_override.csv": ("line 3", "field name", "U+202E", "RIGHT-TO-LEFT OVERRIDE"),
    "name_zero_width_space.csv": ("line 3", "field name", "U+200B", "ZERO WIDTH SPACE"),
    "names_same_after_nfc.csv": ("line 3", "field name", "'Orla-\u00e9 b'", "appears twice", "line 2"),
    "no_complete_row.csv": ("no row has every required value", "line 2 (t0_err_d)"),
    "ra_bare_number.csv": ("line 2", "field ra", "bare number", "hours or degrees", "ra_deg"),
    "wrong_unit.ecsv": ("column 'period_d'", "unit 'm'", "cannot be read as d"),
    "unknown_unit.ecsv": ("column 'period_d'", "'fortnights_x'", "not a unit vigil knows"),
    "broken.xml": ("not a readable VOTable table", "--format"),
    "broken.tbl": ("not a readable IPAC table", "header line"),
}
# Rows lacking a required value are left out with a warning; --strict refuses them instead.
STRICT_TARGET_ERRORS = {
    "empty_duration.csv": ("line 2", "field duration_h", "duration in hours", "empty cell"),
    "empty_name.csv": ("line 3", "field name", "target name", "empty cell"),
}
# Column mappings (--columns) with the good targets file: mapping -> words.
MAPPING_ERRORS = {
    "mapping_missing_column.toml": ("[columns] period_d", "'orbital_period'", "is not in", "good/targets.csv"),
}
SITE_ERRORS = {
    "latitude_out_of_range.toml": ("[sites.alto_verde] latitude_deg", "from -90 to 90 degrees", "-95.0"),
    "latitude_nan.toml": ("[sites.alto_verde] latitude_deg", "from -90 to 90 degrees", "nan"),
    "longitude_out_of_range.toml": ("[sites.alto_verde] longitude_deg", "from -180 to 360 degrees east", "400.0"),
    "missing_latitude.toml": ("[sites.alto_verde] latitude_deg", "required", "from -90 to 90"),
    "misspelt_latitude.toml": ("[sites.alto_verde] latitude_deg", "required", "'latitude'"),
    "text_elevation.toml": ("[sites.alto_verde] elevation_m", "metres", "'2600 m'"),
    "pressure_out_of_range.toml": ("[sites.alto_verde] pressure_hpa", "hPa", "2000"),
    "bad_timezone.toml": ("[sites.alto_verde] timezone", "IANA time zone", "'Mars/Olympus_Mons'"),
    "bad_twilight.toml": ("[sites.alto_verde] twilight", "civil, nautical or astronomical", "'dusk'"),
    "min_altitude_out_of_range.toml": ("[sites.alto_verde] min_altitude_deg", "from -5 to 89 degrees", "95"),
    "site_not_a_table.toml": ("[sites.alto_verde]", "table of site fields"),
    "no_sites_table.toml": ("[sites]", "[sites.NAME]", "found: site"),
    "empty.toml": ("[sites]", "[sites.NAME]"),
    "syntax_error.toml": ("TOML syntax error", "line 5"),
    "latin1_comment.toml": ("line 1", "not UTF-8"),
}
CAMPAIGN_ERRORS = {
    "syntax_error.toml": ("TOML syntax error", "line 9"),
    "missing_campaign_table.toml": ("[campaign] table missing", "start"),
    "missing_goal.toml": ("[goal] table missing", "[goal] resolution", "snr"),
    "horizon_zero.toml": ("[campaign] horizon_years", "from 0.1 to 200 years", "got 0"),
    "horizon_10000_years.toml": ("[campaign] horizon_years", "from 0.1 to 200 years", "10000"),
    "start_not_a_date.toml": ("[campaign] start", "UTC date", "'next spring'"),
    "trials_fractional.toml": ("[campaign] trials", "whole number", "4.5"),
    "coverage_unknown.toml": ("[campaign] coverage", "full, ingress, egress, partial", "'most'"),
    "sites_empty_list.toml": ("[campaign] sites", "list of site names"),
    "site_not_in_sites_file.toml": ("[campaign] sites", "'cima_lejana'", "good/sites.toml", "alto_verde"),
    "min_altitude_out_of_range.toml": ("[campaign] min_altitude_deg", "from -5 to 89 degrees", "120"),
    "weather_missing.toml": ("[weather.alto_verde] clear_fraction", "required", "12 monthly fractions"),
    "weather_not_a_table.toml": ("[weather]", "a table", "0.7"),
    "clear_fraction_eleven_months.toml": ("[weather.alto_verde] clear_fraction", "12 numbers from 0 to 1"),
    "clear_fraction_above_one.toml": ("[weather.alto_verde] clear_fraction", "12 numbers from 0 to 1", "1.8"),
    "clear_fraction_text.toml": ("[weather.alto_verde] clear_fraction", "12 numbers from 0 to 1", "'clear'"),
    "throughput_above_one.toml": ("[instrument] throughput", "from 1e-06 to 1", "1.5"),
    "wavelengths_reversed.toml": ("[instrument] wavelength_max_um", "wavelength_min_um", "0.5"),
    "goal_snr_negative.toml": ("[goal] snr", "from 0.1 to 10000", "-3"),
    "latin1_comment.toml": ("line 1", "not UTF-8"),
    "ends_after_2300.toml": ("[campaign] horizon_years", "100 years", "2300-12-31", "2350-01-02"),
    "ephemeris_table_missing.toml": ("[campaign] ephemeris_table", "companions/ttv_missing.csv",
                                     "cannot read the ephemeris table"),
}
# campaign files whose fault sits in a companion file: (companion it names, words).
CAMPAIGN_COMPANION_ERRORS = {
    "targets_file_missing.toml": ("../good/no_such_targets.csv", ("cannot read file",)),
    "targets_without_radius.toml": ("companions/targets_without_radius.csv",
                                    ("line 2", "field planet_radius_earth", "needs planet_radius_earth")),
    "targets_bad_band.toml": ("companions/targets_bad_band.csv", ("line 3", "field mag_band", "V, J, H, Ks", "'Q'")),
    "ephemeris_table_gap.toml": ("companions/ttv_gap.csv", ("ephemeris_table_gap.toml: [campaign] ephemeris_table",
                                                         "line 4", "field epoch", "consecutive epochs", "137 then 139")),
}
TIMING_ERRORS = {
    "missing_column.csv": ("line 1", "missing column", "mid_err_d"),
    "mid_hjd_utc_column.csv": ("line 1", "'mid_hjd_utc'", "mid_bjd_tdb", "BJD_TDB"),
    "mjd.csv": ("line 3", "field mid_bjd_tdb", "MJD", "BJD_TDB"),
    "text_in_time.csv": ("line 2", "field mid_bjd_tdb", "full Julian date", "'tonight'"),
    "negative_error.csv": ("line 4", "field mid_err_d", "positive uncertainty in days", "-0.0006"),
    "empty_target.csv": ("line 4", "field target", "target name", "empty cell"),
    "empty.csv": ("empty", "one row per timing"),
    "header_only.csv": ("header only", "one row per timing"),
    "semicolons.csv": ("line 1", "semicolons", "comma-separated"),
}
# Bad command-line values for `vigil windows` with valid files: (options, words).
OPTION_ERRORS = {
    "end_before_start": (("--start", "2027-03-08", "--end", "2027-03-01"), ("--end", "after", "start 2027-03-08")),
    "start_not_a_date": (("--start", "soon", "--end", "2027-03-08"), ("--start", "UTC date", "'soon'")),
    "unknown_site": ((*WINDOW_DATES, "--site", "cima_lejana"), (str(GOOD / "sites.toml"), "'cima_lejana'")),
    "bad_twilight_option": ((*WINDOW_DATES, "--twilight", "dusk"), ("twilight", "civil, nautical or astronomical")),
    "min_altitude_option": ((*WINDOW_DATES, "--min-altitude", "95"), ("--min-altitude", "from -5 to 89")),
    "start_year_999": (("--start", "0999-03-01", "--end", "2027-03-08"), ("--start", "1950-01-01", "year 999")),
    "start_year_1899": (("--start", "1899-03-01", "--end", "1899-03-08"), ("--start", "2300-12-31", "1899-03-01")),
    "end_year_2301": (("--start", "2300-12-25", "--end", "2301-01-02"), ("--end", "2300-12-31", "2301-01-0")),
}


def _run(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


def _windows(targets, sites, out: Path, *options, dates=WINDOW_DATES):
    return ("windows", targets, "--sites", sites, *dates, "--csv", out / "windows.csv", "--ics", out / "windows.ics",
            *options)


def _outputs(command: str, out: Path) -> list[Path]:
    """The files a command writes for the arguments built in this module."""
    names = {"windows": ("windows.csv", "windows.ics"),
             "campaign": tuple(f"campaign/{n}" for n in ("summary.csv", "forecast.csv", "ledger.csv",
                                                          "resolution.png", "hours.png")),
             "refit": ("refit.csv", "refit_o_minus_c.csv", "refit_o_minus_c.png")}[command]
    return [out / n for n in names]


def _arguments(command: str, path: Path, out: Path, options=WINDOW_DATES) -> tuple:
    if command == "campaign":
        return "campaign", path, "--out", out / "campaign"
    if command == "refit":
        return "refit", path, "--out", out / "refit.csv"
    if path.suffix == ".toml":
        return _windows(GOOD / "targets.csv", path, out, dates=options)
    return _windows(path, GOOD / "sites.toml", out, dates=options)


def _snapshot(folder: Path) -> dict:
    return {p.relative_to(folder): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def _error_cases():
    for table, folder, command in ((TARGET_ERRORS, "targets", "windows"), (SITE_ERRORS, "sites", "windows"),
                                   (CAMPAIGN_ERRORS, "campaign", "campaign"), (TIMING_ERRORS, "timings", "refit")):
        for name, words in table.items():
            yield pytest.param(command, CORPUS / folder / name, CORPUS / folder / name, words, WINDOW_DATES,
                               id=f"{folder}/{name}")
    for name, (companion, words) in CAMPAIGN_COMPANION_ERRORS.items():
        path = CORPUS / "campaign" / name
        yield pytest.param("campaign", path, path.parent / companion, words, WINDOW_DATES, id=f"campaign/{name}")
    for name, words in STRICT_TARGET_ERRORS.items():
        path = CORPUS / "targets" / name
        yield pytest.param("windows", path, path, words, (*WINDOW_DATES, "--strict"), id=f"targets/{name}-strict")
    for name, words in MAPPING_ERRORS.items():
        mapping = CORPUS / "targets" / name
        yield pytest.param("windows", GOOD / "targets.csv", mapping, words, (*WINDOW_DATES, "--columns", mapping),
                           id=f"targets/{name}")
    for name, (options, words) in OPTION_ERRORS.items():
        yield pytest.param("windows", GOOD / "targets.csv", None, words, options, id=f"options/{name}")


def _assert_one_error_line(result, named: Path | None, words) -> str:
    assert result.exit_code == 2, result.output
    assert isinstance(result.exception, SystemExit)
    assert "Traceback" not in result.output
    lines = result.output.splitlines()
    assert len(lines) == 1, result.output
    assert lines[0].startswith("vigil: error: ")
    if named is not None:
        assert str(named) in lines[0]
    missing = [w for w in words if w not in lines[0]]
    assert not missing, f"{missing} not in: {lines[0]}"
    return lines[0]


def test_corpus_is_large_enough():
    cases = [p for p in CORPUS.rglob("*") if p.is_file() and "good" not in p.parts and "companions" not in p.parts]
    assert len(cases) >= 40
    listed = {f"targets/{n}" for n in (*TARGET_ERRORS, *STRICT_TARGET_ERRORS, *MAPPING_ERRORS)} | {f"sites/{n}" for n in SITE_ERRORS} | \
             {f"campaign/{n}" for n in (*CAMPAIGN_ERRORS, *CAMPAIGN_COMPANION_ERRORS)} | \
             {f"timings/{n}" for n in (*TIMING_ERRORS, "single_timing.csv")} | \
             {str(Path(*a)) for a, *_ in ACCEPTED + WARNED}
    assert {str(p.relative_to(CORPUS)) for p in cases} == listed  # every file is exercised


@pytest.mark.parametrize("forced", [False, True], ids=["fresh", "existing-outputs-forced"])
@pytest.mark.parametrize("command, path, named, words, options", list(_error_cases()))
def test_bad_input_is_one_error_line_and_touches_nothing(no_network, tmp_path, forced, command, path, named, words,
                                                         options):
    out = tmp_path / "out"
    out.mkdir()
    if forced:
        for target in _outputs(command, out):
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_bytes(SENTINEL)
    before = _snapshot(out)
    args = _arguments(command, path, out, options)
    result = _run(*args, *(("--force",) if forced else ()))
    _assert_one_error_line(result, named, words)
    assert _snapshot(out) == before


@pytest.mark.parametrize("command, path", [
    ("windows", CORPUS / "targets" / "nan_period.csv"),
    ("campaign", CORPUS / "campaign" / "missing_goal.toml"),
    ("refit", CORPUS / "timings" / "mjd.csv"),
])
def test_existing_outputs_without_force_are_refused_and_kept(tmp_path, command, path):
    out = tmp_path / "out"
    for target in _outputs(command, out):
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(SENTINEL)
    before = _snapshot(out)
    line = _assert_one_error_line(_run(*_arguments(command, path, out)), None, ("exists", "--force"))
    assert str(_outputs(command, out)[0]) in line
    assert _snapshot(out) == before


@pytest.fixture(scope="module")
def good_windows_csv(tmp_path_factory) -> bytes:
    out = tmp_path_factory.mktemp("good_windows")
    result = _run(*_windows(GOOD / "targets.csv", GOOD / "sites.toml", out))
    assert result.exit_code == 0, result.output
    return (out / "windows.csv").read_bytes()


@pytest.fixture(scope="module")
def good_campaign(tmp_path_factory) -> dict:
    out = tmp_path_factory.mktemp("good_campaign")
    result = _run("campaign", GOOD / "campaign.toml", "--out", out)
    assert result.exit_code == 0, result.output
    return {name: (out / name).read_bytes() for name in ("summary.csv", "forecast.csv", "ledger.csv")}


# Variants vigil must accept as the same input: (folder, file, words a note must hold or None).
ACCEPTED = [
    (("targets", "byte_order_mark.csv"), None),
    (("targets", "windows_line_endings.csv"), None),
    (("sites", "byte_order_mark.toml"), None),
    # 289.60 deg east and -70.40 deg are one meridian (360 deg in a circle); vigil says how it read it.
    (("sites", "longitude_0_to_360.toml"), ("vigil: note:", "longitude_deg 289.6", "0-360", "-70.4")),
    (("campaign", "start_as_toml_date.toml"), None),
]


@pytest.mark.parametrize("parts, note", ACCEPTED, ids=["/".join(p) for p, _ in ACCEPTED])
def test_harmless_variants_give_the_companions_result(no_network, tmp_path, parts, note, good_windows_csv,
                                                      good_campaign):
    path = CORPUS.joinpath(*parts)
    command = "campaign" if parts[0] == "campaign" else "windows"
    result = _run(*_arguments(command, path, tmp_path))
    assert result.exit_code == 0, result.output
    assert "vigil: error" not in result.output and "vigil: warning" not in result.output
    if note is not None:
        line = next(line for line in result.output.splitlines() if line.startswith("vigil: note:"))
        assert str(path) in line and all(w in line for w in note), line
    if command == "windows":
        assert (tmp_path / "windows.csv").read_bytes() == good_windows_csv
    else:
        assert {n: (tmp_path / "campaign" / n).read_bytes() for n in good_campaign} == good_campaign


# Plausible but odd values: accepted, with a warning naming the file, the line or key and the field.
WARNED = [
    (("targets", "period_err_over_1_percent.csv"), ("line 2", "field period_err_d", "1 %", "0.05 d")),
    (("targets", "t0_err_longer_than_transit.csv"), ("line 3", "field t0_err_d", "0.2 d", "2.75 h")),
    (("targets", "duration_over_half_period.csv"), ("line 2", "field duration_h", "40 h", "half the period")),
    (("sites", "unknown_key.toml"), ("[sites.alto_verde]", "unknown key 'humidity'")),
    (("sites", "low_altitude_limit.toml"), ("[sites.alto_verde] min_altitude_deg 5", "below 10 degrees")),
    (("sites", "high_elevation.toml"), ("[sites.alto_verde] elevation_m 5600", "above 5000 m")),
    (("campaign", "unknown_key.toml"), ("[campaign]", "unknown key 'horizon_yeras'", "did you mean 'horizon_years'")),
    (("sites", "misspelt_min_altitude.toml"), ("[sites.alto_verde]", "unknown key 'min_altitude'", "default is used",
                                               "did you mean 'min_altitude_deg'")),
    (("campaign", "unknown_table.toml"), ("unknown table [wether]", "'weather'")),
]


@pytest.mark.parametrize("parts, words", WARNED, ids=["/".join(p) for p, _ in WARNED])
def test_odd_values_warn_and_the_command_succeeds(no_network, tmp_path, parts, words):
    path = CORPUS.joinpath(*parts)
    command = "campaign" if parts[0] == "campaign" else "windows"
    result = _run(*_arguments(command, path, tmp_path))
    assert result.exit_code == 0, result.output
    assert "Traceback" not in result.output and "vigil: error" not in result.output
    warnings = [line for line in result.output.splitlines() if line.startswith("vigil: warning: ")]
    assert len(warnings) == 1, result.output
    assert str(path) in warnings[0] and all(w in warnings[0] for w in words), warnings[0]
    assert all(p.stat().st_size > 0 for p in _outputs(command, tmp_path))


# Faults only the command line can report well: bad options, refit errors, unwritable outputs.
CLI_GAPS = [
    pytest.param(lambda out: _windows(GOOD / "targets.csv", GOOD / "sites.toml", out, "--min-altitude", "95"),
                 ("--min-altitude", "from -5 to 89"), id="option-named"),
    pytest.param(lambda out: ("refit", CORPUS / "timings" / "single_timing.csv", "--out", out / "refit.csv"),
                 (str(CORPUS / "timings" / "single_timing.csv"), "'Brisa-4 b'", "two or more distinct epochs"),
                 id="refit-names-timings-file"),
    pytest.param(lambda out: (*_windows(GOOD / "targets.csv", GOOD / "sites.toml", out)[:-4], "--csv", out,
                              "--force"),
                 (), id="output-is-a-folder"),
]


@pytest.mark.parametrize("arguments, words", CLI_GAPS)
def test_command_line_faults_are_one_error_line(tmp_path, arguments, words):
    out = tmp_path / "out"
    out.mkdir()
    _assert_one_error_line(_run(*arguments(out)), None, words)
    assert _snapshot(out) == {}


def test_a_lost_phase_is_none_without_exhausting_memory():
    # K sigma beyond half a period: the transit could fall anywhere in the orbit, so it cannot be
    # planned (vigil's stated rule); the engine must not be asked for a days-wide window.
    import numpy as np
    import pandas as pd
    from astropy.time import Time

    from vigil.catalog import read_sites
    from vigil.windows import plan_windows

    targets = pd.DataFrame([{"name": "Lost-1 b", "ra_deg": 100.0, "dec_deg": -30.0, "t0_bjd_tdb": 2600000.0,
                             "t0_err_d": 0.001, "period_d": 40.49, "period_err_d": 17.35, "duration_h": 3.0,
                             "t0_period_cov_d2": 0.0}])
    sites = read_sites(GOOD / "sites.toml")
    windows = plan_windows(targets, sites, {}, Time("2027-03-01"), Time("2027-04-01"), include_unobservable=True)
    assert len(windows) and (windows["coverage"] == "none").all()
    assert np.all(windows["observable_fraction"] == 0)
