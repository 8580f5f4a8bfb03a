"""Tests of a stellar spectrum supplied by the observer (star_spectrum_file) in place of the model.

Reference values and their sources are in tests/authorities/star_spectra.py and stars.py.
"""

import os
import runpy
from importlib import resources
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import vigil  # noqa: F401  (configures astropy offline before astropy is used)
from astropy import units as u
from astropy.table import QTable, Table

from vigil import forecast, spectrum, star_spectra, stars, visit_budget
from vigil.api import read_targets
from vigil.campaign.spec import read_campaign
from vigil.errors import InputError
from vigil.noise_model import GROUND

from authorities import star_spectra as refs
from authorities import stars as star_refs
from test_campaign import GIANT, campaign_spec, run, targets_table

# Sampled finely (R ~ 30,000 in ln lambda) across 0.3-3 um: V to Ks and the instruments below.
FINE_UM = np.geomspace(0.3, 3.0, 70_000)
GIANT_MODEL = stars.flux_at_earth_w_m2_um(GIANT["star_teff_k"], GIANT["star_radius_sun"], GIANT["magnitude"],
                                          GIANT["mag_band"])
BIN_UM = np.linspace(0.6, 1.0, 40)


def _model_at(wavelength_um, model=GIANT_MODEL):
    """The built-in model sampled at `wavelength_um` (its own log-log interpolation)."""
    return np.exp(np.interp(np.log(wavelength_um), np.log(stars.GRID_UM), np.log(model)))


def _write_csv(path: Path, header: str, rows) -> Path:
    lines = [header] + [",".join(repr(float(v)) if not isinstance(v, str) else v for v in row) for row in rows]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _write_ecsv(path: Path, wavelength, flux) -> Path:
    QTable({"wavelength": wavelength, "flux": flux}).write(path, format="ascii.ecsv", overwrite=True)
    return path


@pytest.fixture
def model_file(tmp_path):
    """The GIANT's built-in model written as an ECSV spectrum (W m^-2 um^-1, at an arbitrary scale)."""
    return _write_ecsv(tmp_path / "giant.ecsv", FINE_UM * u.um, 1e7 * _model_at(FINE_UM) * u.W / (u.m**2 * u.um))


def _photon_variance(flux):
    visit = pd.DataFrame({"in_transit_h": [2.0], "baseline_h": [2.0], "airmass": [1.2], "moon_illumination": [0.3],
                          "moon_sep_deg": [70.0], "elevation_m": [2000.0], "ground": [True]})
    instrument = campaign_spec().instrument
    return visit_budget.term_variances(flux, instrument, GROUND, visit, BIN_UM, 100.0, 1.0)["photon_target"][0]


def test_model_written_as_a_file_gives_the_models_photons_per_bin(model_file):
    # The built-in model is the reference here: its own samples, scaled again to the same V
    # magnitude, give the same photon-noise variance per bin (tolerance in authorities).
    from_file = star_spectra.flux_at_earth_w_m2_um(model_file, GIANT["magnitude"], GIANT["mag_band"])
    assert _photon_variance(from_file) == pytest.approx(_photon_variance(GIANT_MODEL), rel=refs.SAME_MODEL_TOLERANCE)
    assert np.all(np.isfinite(_photon_variance(from_file)))


def test_model_written_as_a_file_gives_the_models_forecast(model_file):
    # A whole campaign (schedule, weather, stacking) with the file in place of the model.
    spec = campaign_spec(horizon_years=2.0)
    built_in = run(spec, targets_table({}))
    from_file = run(spec, targets_table({"star_spectrum_file": str(model_file)}))
    for column in ("hours_needed", "years_to_goal_p50", "in_transit_hours_per_year"):
        assert from_file.summary[column].to_numpy() == pytest.approx(built_in.summary[column].to_numpy(),
                                                                     rel=refs.SAME_MODEL_TOLERANCE), column
    assert from_file.summary["limited_by"].tolist() == built_in.summary["limited_by"].tolist()
    assert from_file.budget["ppm_per_bin_per_visit"].to_numpy() == pytest.approx(
        built_in.budget["ppm_per_bin_per_visit"].to_numpy(), rel=refs.SAME_MODEL_TOLERANCE)


def test_a_changed_spectrum_changes_the_photons(model_file, tmp_path):
    # The check above can fail: a star with half the flux redward of 0.8 um, scaled to the same
    # V, gives twice the photon variance there and the same blueward of 0.7 um.
    dimmer = np.where(FINE_UM > 0.8, 0.5, 1.0) * _model_at(FINE_UM)
    path = _write_ecsv(tmp_path / "dimmer.ecsv", FINE_UM * u.um, dimmer * u.W / (u.m**2 * u.um))
    ratio = _photon_variance(star_spectra.flux_at_earth_w_m2_um(path, 10.0, "V")) / _photon_variance(GIANT_MODEL)
    assert ratio[BIN_UM > 0.81] == pytest.approx(2.0, rel=refs.SAME_MODEL_TOLERANCE)
    assert ratio[BIN_UM < 0.7] == pytest.approx(1.0, rel=refs.SAME_MODEL_TOLERANCE)


def test_flat_f_nu_spectrum_at_v0_gives_the_v0_photon_rate(tmp_path):
    # Common practice (tests/authorities/stars.py): a V = 0 star gives about 1000 photons
    # s^-1 cm^-2 A^-1 near 550 nm; a spectrum flat in f_nu has the colours of that zero point.
    wavelength_um = np.geomspace(0.3, 1.2, 500)
    path = _write_csv(tmp_path / "flat.csv", "wavelength_um,flux_jy", [(w, 1.0) for w in wavelength_um])
    flux = star_spectra.flux_at_earth_w_m2_um(path, 0.0, "V")
    per_cm2_a = float(stars.photon_flux(flux, 0.55)) * 1e-4 * 1e-4
    assert per_cm2_a == pytest.approx(star_refs.V0_PHOTONS_S_CM2_A, rel=star_refs.V0_TOLERANCE)


def test_flat_f_nu_spectrum_is_flat_in_f_nu_after_scaling(tmp_path):
    # f_nu = f_lambda lambda^2 / c (authorities): the scaled spectrum's f_lambda falls as lambda^-2.
    wavelength_um = np.geomspace(0.3, 1.2, 500)
    path = _write_csv(tmp_path / "flat.csv", "wavelength_nm,flux_mjy", [(w * 1e3, 7.0) for w in wavelength_um])
    flux = star_spectra.flux_at_earth_w_m2_um(path, 3.0, "V")
    inside = (stars.GRID_UM > 0.31) & (stars.GRID_UM < 1.19)
    f_nu = flux[inside] * 1e6 * (stars.GRID_UM[inside] * 1e-6) ** 2 / refs.SPEED_OF_LIGHT_M_S
    assert f_nu == pytest.approx(np.full(f_nu.size, f_nu[0]), rel=1e-6)


def test_per_frequency_per_wavelength_and_photon_forms_agree(tmp_path):
    # One spectrum (a 3400 K dwarf of the model) written three ways, converted by hand with
    # f_nu = f_lambda lambda^2 / c and photons = f_lambda lambda / (h c) (authorities).
    model = stars.flux_at_earth_w_m2_um(3400.0, 0.3, 11.0, "J")
    wavelength_m = np.geomspace(0.4, 2.6, 5000) * 1e-6
    f_lambda_si = _model_at(wavelength_m * 1e6, model) * 1e6  # W m^-3
    per_a = _write_csv(tmp_path / "per_a.csv", "wavelength_a,flux_erg_s_cm2_a",
                       zip(wavelength_m * 1e10, f_lambda_si * 1e7 * 1e-4 * 1e-10))
    per_hz = _write_csv(tmp_path / "per_hz.csv", "wavelength_nm,flux_w_m2_hz",
                        zip(wavelength_m * 1e9, f_lambda_si * wavelength_m**2 / refs.SPEED_OF_LIGHT_M_S))
    photons = _write_ecsv(tmp_path / "photons.ecsv", wavelength_m * 1e6 * u.um,
                          f_lambda_si * wavelength_m / (refs.PLANCK_J_S * refs.SPEED_OF_LIGHT_M_S) * 1e-4 * 1e-10
                          * u.photon / (u.s * u.cm**2 * u.AA))
    read = [star_spectra.read_star_spectrum(p) for p in (per_a, per_hz, photons)]
    for spectrum in read:
        assert spectrum.wavelength_um == pytest.approx(wavelength_m * 1e6, rel=refs.UNIT_FORMS_TOLERANCE)
        assert spectrum.flux_w_m2_um == pytest.approx(f_lambda_si * 1e-6, rel=refs.UNIT_FORMS_TOLERANCE)
    scaled = [star_spectra.flux_at_earth_w_m2_um(p, 11.0, "J") for p in (per_a, per_hz, photons)]
    known = np.isfinite(scaled[0])
    for flux in scaled[1:]:
        assert flux[known] == pytest.approx(scaled[0][known], rel=refs.UNIT_FORMS_TOLERANCE)


def test_spectrum_path_is_relative_to_the_targets_file(tmp_path, model_file, monkeypatch):
    folder = tmp_path / "catalogue"
    (folder / "spectra").mkdir(parents=True)
    model_file.rename(folder / "spectra" / "giant.ecsv")
    row = {**GIANT, "star_spectrum_file": "spectra/giant.ecsv"}
    pd.DataFrame([row]).to_csv(folder / "targets.csv", index=False)
    monkeypatch.chdir(tmp_path)
    targets = read_targets(Path("catalogue/targets.csv"))
    named = Path(targets["star_spectrum_file"].iloc[0])
    assert named.resolve() == (folder / "spectra" / "giant.ecsv").resolve()
    assert np.isfinite(star_spectra.flux_at_earth_w_m2_um(named, 10.0, "V")).sum() > 1000


def test_uncertainty_and_other_columns_are_ignored(tmp_path):
    path = _write_csv(tmp_path / "s.csv", "wavelength_nm,flux_err_w_m2_um,flux_w_m2_um,order",
                      [(300.0, 9.0, 1.0, 1), (3000.0, 9.0, 2.0, 1)])
    assert star_spectra.read_star_spectrum(path).flux_w_m2_um.tolist() == [1.0, 2.0]


def test_a_rewritten_file_is_read_again(tmp_path):
    path = _write_csv(tmp_path / "s.csv", "wavelength_um,flux_w_m2_um", [(0.3, 1.0), (3.0, 1.0)])
    first = star_spectra.star_spectrum(path).flux_w_m2_um
    _write_csv(path, "wavelength_um,flux_w_m2_um", [(0.3, 2.0), (1.0, 2.0), (3.0, 2.0)])
    os.utime(path, ns=(1, 1))  # a different modification time, whatever the clock's resolution
    assert star_spectra.star_spectrum(path).flux_w_m2_um.tolist() == [2.0, 2.0, 2.0] != first.tolist()


# --- refused files -----------------------------------------------------------------------------

GOOD_ROWS = [(0.3, 1.0), (0.5, 1.1), (0.8, 1.2), (1.5, 0.8), (3.0, 0.2)]


@pytest.mark.parametrize("header, rows, message", [
    ("wavelength_um,flux_w_m2_um", [(0.3, 1.0), (0.5, 1.1), (0.5, 1.2), (3.0, 0.2)],
     r"s\.csv: line 4, field wavelength_um: 0\.5 does not follow 0\.5 \(line 3\); expected strictly increasing"),
    ("wavelength_um,flux_w_m2_um", [(0.3, 1.0), (0.8, 1.1), (0.5, 1.2), (3.0, 0.2)],
     r"s\.csv: line 4, field wavelength_um: 0\.5 does not follow 0\.8"),
    ("wavelength_um,flux_w_m2_um", [(0.3, 1.0), (0.5, -1.1), (3.0, 0.2)],
     r"s\.csv: line 3, field flux_w_m2_um: -1\.1 is negative; expected a flux density >= 0"),
    ("wavelength_um,flux_w_m2_um", [(0.3, 1.0), (0.5, "nan"), (3.0, 0.2)],
     r"s\.csv: line 3, field flux_w_m2_um: expected a flux density, got 'nan'"),
    ("wavelength_um,flux_w_m2_um", [(0.3, 1.0), (0.5, "inf"), (3.0, 0.2)],
     r"s\.csv: line 3, field flux_w_m2_um: expected a flux density, got 'inf'"),
    ("wavelength_um,flux_w_m2_um", [(0.3, 1.0), ("", 1.0), (3.0, 0.2)],
     r"s\.csv: line 3, field wavelength_um: expected a wavelength, got an empty cell"),
    ("wavelength_hz,flux_w_m2_um", GOOD_ROWS, r"s\.csv: line 1: column 'wavelength_hz' is in Hz, not a length"),
    ("wavelength_um,flux_w_m2", GOOD_ROWS, r"s\.csv: line 1: column 'flux_w_m2' is in W / m2, not a flux density"),
    ("wavelength_um,flux_w_m2_um_s", GOOD_ROWS, r"column 'flux_w_m2_um_s' is in .*, not a flux density"),
    ("wavelength_um,flux_erg_s_cm2_q", GOOD_ROWS, r"s\.csv: line 1: column 'flux_erg_s_cm2_q' states no unit vigil "
                                                  r"knows \('q'\)"),
    ("wavelength,flux_w_m2_um", GOOD_ROWS, r"column 'wavelength' states no unit vigil knows in its name"),
    ("lambda_um,flux_w_m2_um", GOOD_ROWS, r"s\.csv: line 1: expected one wavelength column .* found none"),
    ("wavelength_um,flux_jy,flux_w_m2_um", [(0.3, 1.0, 1.0), (3.0, 1.0, 1.0)],
     r"expected one flux column .* found 2 \(flux_jy, flux_w_m2_um\)"),
])
def test_bad_csv_spectrum_is_refused_naming_file_and_line(tmp_path, header, rows, message):
    path = _write_csv(tmp_path / "s.csv", header, rows)
    with pytest.raises(InputError, match=message):
        star_spectra.read_star_spectrum(path)


@pytest.mark.parametrize("flux_unit, message", [
    (u.W / (u.m**2 * u.um * u.sr), r"s\.ecsv: header: column 'flux' is in .*sr.*, not a flux density"),
    (u.dimensionless_unscaled, r"column 'flux' is in no unit, not a flux density"),
])
def test_ecsv_flux_of_the_wrong_kind_is_refused(tmp_path, flux_unit, message):
    path = _write_ecsv(tmp_path / "s.ecsv", np.array([0.3, 3.0]) * u.um, np.array([1.0, 1.0]) * flux_unit)
    with pytest.raises(InputError, match=message):
        star_spectra.read_star_spectrum(path)


def test_ecsv_rows_are_named_by_their_line(tmp_path):
    path = _write_ecsv(tmp_path / "s.ecsv", np.array([0.3, 0.5, 3.0]) * u.um, np.array([1.0, -2.0, 1.0]) * u.Jy)
    data_line = path.read_text().splitlines().index("0.5 -2.0") + 1
    with pytest.raises(InputError, match=rf"s\.ecsv: line {data_line}, field flux: -2 is negative"):
        star_spectra.read_star_spectrum(path)


def test_spectrum_short_of_the_normalising_band_is_refused(tmp_path):
    path = _write_csv(tmp_path / "red.csv", "wavelength_um,flux_w_m2_um", [(0.6, 1.0), (2.5, 1.0)])
    with pytest.raises(InputError, match=r"red\.csv: the spectrum covers 0\.6-2\.5 um; the normalising band V needs "
                                         r"0\.47-0\.7 um \(missing 0\.47-0\.6 um\)"):
        star_spectra.flux_at_earth_w_m2_um(path, 10.0, "V")
    assert np.isfinite(star_spectra.flux_at_earth_w_m2_um(path, 9.0, "J")).any()


def test_spectrum_with_no_flux_in_the_band_is_refused(tmp_path):
    path = _write_csv(tmp_path / "dark.csv", "wavelength_um,flux_w_m2_um", [(0.3, 0.0), (0.9, 0.0), (1.0, 1.0)])
    with pytest.raises(InputError, match=r"dark\.csv: no flux in the normalising band V"):
        star_spectra.flux_at_earth_w_m2_um(path, 10.0, "V")


def test_campaign_refuses_a_spectrum_short_of_the_instruments_range(tmp_path):
    # The instrument reads 0.6-1.0 um; the file stops at 0.95 um (V is covered).
    inside = FINE_UM[FINE_UM < 0.95]
    path = _write_ecsv(tmp_path / "short.ecsv", inside * u.um, _model_at(inside) * u.W / (u.m**2 * u.um))
    with pytest.raises(InputError, match=r"^invented_targets\.csv, field star_spectrum_file: target 'Brasa-4 b': "
                                         r".*short\.ecsv: the spectrum covers 0\.3-0\.95 um; the forecast \(the "
                                         r"instrument's wavelength range\) needs 0\.6-1 um \(missing 0\.95-1 um\)$"):
        run(campaign_spec(), targets_table({"star_spectrum_file": str(path)}))


def test_campaign_names_a_missing_spectrum_file(tmp_path):
    with pytest.raises(InputError, match=r"field star_spectrum_file: target 'Brasa-4 b': .*nowhere\.ecsv: cannot read"):
        run(campaign_spec(), targets_table({"star_spectrum_file": str(tmp_path / "nowhere.ecsv")}))


def test_spectrum_file_needs_a_magnitude_to_scale_it(tmp_path, model_file):
    row = {"star_spectrum_file": str(model_file), "magnitude": "", "mag_band": "", "distance_pc": 40.0}
    with pytest.raises(InputError, match=r"field star_spectrum_file: target 'Brasa-4 b': the spectrum is scaled to "
                                         r"the star's magnitude; expected magnitude and mag_band, not distance_pc"):
        run(campaign_spec(), targets_table(row))


# --- the invented example --------------------------------------------------------------------

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def test_example_spectrum_is_what_its_script_writes():
    # The example's documented recipe (examples/make_star_spectrum.py) gives the file's values.
    again = runpy.run_path(str(EXAMPLES / "make_star_spectrum.py"))["example_table"]()
    shipped = Table.read(EXAMPLES / "star_spectrum.ecsv", format="ascii.ecsv")
    for name in ("wavelength", "flux"):
        assert shipped[name].unit == again[name].unit
        assert np.array_equal(shipped[name], again[name]), name


def test_example_spectrum_serves_the_demo_instrument():
    spec = read_campaign(resources.files("vigil") / "data" / "demo" / "campaign.toml")
    star = spectrum.Star(radius_sun=0.28, teff_k=3300.0, magnitude=10.2, band="J")
    flux = star_spectra.star_light(EXAMPLES / "star_spectrum.ecsv", star, spec.instrument)
    # Its invented band takes half the light at 0.58 um (the script's docstring), against the
    # model's shape a little away from it.
    ratio = stars.photon_flux(flux, [0.58, 0.80]) / stars.photon_flux(forecast.star_flux(star), [0.58, 0.80])
    assert ratio[0] / ratio[1] == pytest.approx(0.5, rel=0.01)


# --- from the files, as the command line reads them ---------------------------------------------


def _demo_copy(folder: Path, spectrum_cell: str) -> Path:
    """The demo's files in `folder`, two campaign years and ten trials, Vessa-11 c's row naming
    `spectrum_cell` in a star_spectrum_file column; returns the campaign file."""
    demo = resources.files("vigil") / "data" / "demo"
    lines = (demo / "targets.csv").read_text(encoding="utf-8").splitlines()
    rows = [lines[0] + ",star_spectrum_file"] + [f"{line},{spectrum_cell if line.startswith('Vessa-11 c') else ''}"
                                                 for line in lines[1:]]
    (folder / "targets.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / "sites.toml").write_text((demo / "sites.toml").read_text(encoding="utf-8"), encoding="utf-8")
    campaign = (demo / "campaign.toml").read_text(encoding="utf-8")
    campaign = campaign.replace("horizon_years = 30", "horizon_years = 2").replace("trials = 200", "trials = 10")
    (folder / "campaign.toml").write_text(campaign, encoding="utf-8")
    return folder / "campaign.toml"


def test_campaign_file_reads_the_spectrum_beside_its_targets_file(tmp_path, monkeypatch):
    # The example's invented band (half the light at 0.58 um) costs the M dwarf photons in the
    # bluest bins: more hours needed than with the model, and the deciding bin moves off 0.55 um.
    (tmp_path / "cat" / "spectra").mkdir(parents=True)
    (tmp_path / "cat" / "spectra" / "own.ecsv").write_bytes((EXAMPLES / "star_spectrum.ecsv").read_bytes())
    with_file = _demo_copy(tmp_path / "cat", "spectra/own.ecsv")
    (tmp_path / "plain").mkdir()
    without = _demo_copy(tmp_path / "plain", "")
    monkeypatch.chdir(tmp_path / "plain")  # the spectrum is found from the targets file, not from here
    own = vigil.run_campaign(with_file, target="Vessa-11 c")
    model = vigil.run_campaign(without, target="Vessa-11 c")
    assert own.summary["hours_needed"].iloc[0] > 1.2 * model.summary["hours_needed"].iloc[0]
    assert model.budget["wavelength_um"].iloc[0] == pytest.approx(0.55)
    assert own.budget["wavelength_um"].iloc[0] > 0.56


def test_campaign_file_with_a_bad_spectrum_names_the_targets_row_and_the_spectrum_line(tmp_path):
    _write_csv(tmp_path / "bad.csv", "wavelength_um,flux_w_m2_um", [(0.4, 1.0), (0.6, 1.0), (0.5, 1.0), (2.5, 1.0)])
    campaign = _demo_copy(tmp_path, "bad.csv")
    with pytest.raises(InputError, match=r"targets\.csv: line 4, field star_spectrum_file: target 'Vessa-11 c': "
                                         r".*bad\.csv: line 4, field wavelength_um: 0\.5 does not follow 0\.6"):
        vigil.run_campaign(campaign, target="Vessa-11 c")


def test_campaign_says_which_stars_shine_with_their_own_spectrum(model_file):
    result = run(campaign_spec(), targets_table({"star_spectrum_file": str(model_file)}))
    said = [note.text() for note in result.notes]
    assert f"Brasa-4 b: the star's light is the spectrum in {model_file}, scaled to V = 10, in place of the built-in " \
           "model" in said
    assert not any("own spectrum" in text or "star's light" in text for text in
                   (note.text() for note in run(campaign_spec(), targets_table({})).notes))


def test_a_table_built_in_python_names_spectra_from_the_working_directory(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    targets = read_targets(pd.DataFrame([{**GIANT, "star_spectrum_file": "spectra/giant.ecsv"}]))
    assert Path(targets["star_spectrum_file"].iloc[0]) == tmp_path / "spectra" / "giant.ecsv"
