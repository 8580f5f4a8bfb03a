"""One invented catalogue in every form vigil reads gives the same windows; right ascension is never guessed.

Forms: vigil's CSV, CSV after a '#' comment preamble, ECSV with units (astropy APE 6), VOTable
(IVOA VOTable 1.4), IPAC table, and a CSV in a layout of its own read through a column
mapping. Unit factors are those of the SI Brochure (tests/authorities/catalogue_units.py).
"""

import logging
from pathlib import Path

import astropy.units as u
import pytest
from astropy.coordinates import Angle
from astropy.table import Table
from typer.testing import CliRunner

from vigil.catalog import read_targets
from vigil.cli import app
from vigil.errors import InputError
from vigil.target_source import CatalogueOptions

from authorities.catalogue_units import DAY_S, DEG_PER_HOUR_OF_RA, ECSV_SIGNATURE, MINUTE_S
from conftest import DEMO_DIR

CORE = ["name", "ra_deg", "dec_deg", "t0_bjd_tdb", "t0_err_d", "period_d", "period_err_d", "duration_h"]
DATES = ("--start", "2027-03-01", "--end", "2027-03-15")


@pytest.fixture(scope="module")
def demo_table():
    """The demo's core columns as numbers (the catalogue every form below carries)."""
    table = Table.read(DEMO_DIR / "targets.csv", format="ascii.csv")
    return table[CORE]


def _csv(table, path, preamble=""):
    body = (DEMO_DIR / "targets.csv").read_text().splitlines()
    columns = body[0].split(",")
    keep = [columns.index(c) for c in CORE]
    rows = [",".join(line.split(",")[i] for i in keep) for line in body]
    path.write_text(preamble + "\n".join(rows) + "\n", encoding="utf-8")
    return path, ()


def _with_units(table):
    """The same numbers with units stated: durations in minutes, RA under `ra` in degrees."""
    out = table.copy()
    out["duration_h"] = out["duration_h"] * (3600.0 / 60.0)
    out["duration_h"].unit = u.min
    out.rename_column("ra_deg", "ra")
    out["ra"].unit = u.deg
    out["dec_deg"].unit = u.deg
    for name in ("t0_bjd_tdb", "t0_err_d", "period_d", "period_err_d"):
        out[name].unit = u.day
    return out


def _ecsv(table, path):
    _with_units(table).write(path, format="ascii.ecsv")
    assert path.read_text().startswith(ECSV_SIGNATURE)  # APE 6: the file says what it is
    return path, ()


def _votable(table, path):
    _with_units(table).write(path, format="votable")
    return path, ()


def _ipac(table, path):
    _with_units(table).write(path, format="ascii.ipac")
    return path, ()


MAPPING = """[columns]
name = "planet"
ra_deg = { column = "ra_icrs", unit = "deg" }
dec_deg = { column = "de_icrs", unit = "deg" }
t0_bjd_tdb = { column = "tc_reduced", unit = "d", offset = 2450000 }
t0_err_d = { plus = "tc_hi", minus = "tc_lo", unit = "d", combine = "mean" }
period_d = { column = "orbit", unit = "d" }
period_err_d = { plus = "orbit_hi", minus = "orbit_lo", unit = "d" }
duration_h = { column = "span_min", unit = "min" }
"""


def _remapped(table, path):
    """A layout of its own: reduced times, +/- uncertainty columns, durations in minutes."""
    lines = ["# exported by an invented spreadsheet", "planet,orbit,orbit_hi,orbit_lo,tc_reduced,tc_hi,tc_lo,"
             "span_min,ra_icrs,de_icrs"]
    t0_text = {line.split(",")[0]: line.split(",")[3] for line in (DEMO_DIR / "targets.csv").read_text().splitlines()}
    for row in table:
        reduced = f"{int(t0_text[row['name']][:7]) - 2450000}{t0_text[row['name']][7:]}"  # the digits, exactly
        v = {k: repr(float(row[k])) for k in CORE[1:]}
        lines.append(f"{row['name']},{v['period_d']},{v['period_err_d']},-{v['period_err_d']},{reduced},"
                     f"{v['t0_err_d']},-{v['t0_err_d']},{float(row['duration_h']) * 60!r},{v['ra_deg']},{v['dec_deg']}")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    mapping = path.with_name("columns.toml")
    mapping.write_text(MAPPING, encoding="utf-8")
    return path, ("--columns", mapping)


FORMS = {
    "csv": lambda t, d: _csv(t, d / "targets.csv"),
    "csv_with_comments": lambda t, d: _csv(t, d / "export.csv", "# invented export\n# columns as in vigil\n#\n"),
    "ecsv_with_units": lambda t, d: _ecsv(t, d / "targets.ecsv"),
    "votable": lambda t, d: _votable(t, d / "targets.xml"),
    "ipac": lambda t, d: _ipac(t, d / "targets.tbl"),
    "remapped_csv": lambda t, d: _remapped(t, d / "layout.csv"),
}


def _windows_csv(path, options, out):
    result = CliRunner().invoke(app, ["windows", str(path), "--sites", str(DEMO_DIR / "sites.toml"), *DATES,
                                      "--all", "--csv", str(out), *map(str, options)])
    assert result.exit_code == 0, result.output
    return out.read_bytes()


def test_every_form_gives_identical_windows(demo_table, tmp_path):
    produced = {}
    for form, write in FORMS.items():
        folder = tmp_path / form
        folder.mkdir()
        path, options = write(demo_table, folder)
        produced[form] = _windows_csv(path, options, folder / "windows.csv")
    assert produced["csv"].count(b"\n") > 20  # a real table: every demo target at three sites
    for form, content in produced.items():
        assert content == produced["csv"], form


def test_units_stated_in_ecsv_are_converted(demo_table, tmp_path):
    path, _ = _ecsv(demo_table, tmp_path / "t.ecsv")
    targets = read_targets(path)
    # 1 min = 60 s and 1 h = 3600 s (SI Brochure): the minutes written come back as the hours given.
    for got, given in zip(targets["duration_h"], demo_table["duration_h"]):
        assert got == pytest.approx(given * 3600.0 / MINUTE_S * MINUTE_S / 3600.0, rel=1e-14)
    assert list(targets["ra_deg"]) == pytest.approx(list(demo_table["ra_deg"]), rel=1e-15)


def _one_target(tmp_path, ra_header, ra_text, suffix=".csv"):
    path = tmp_path / f"one{suffix}"
    path.write_text(f"name,{ra_header},dec,t0_bjd_tdb,t0_err_d,period_d,period_err_d,duration_h\n"
                    f"Lirio-2 b,{ra_text},-20:30:00,2460412.3,0.001,2.5,0.00001,2.0\n", encoding="utf-8")
    return path


def test_bare_decimal_ra_is_refused_never_read_as_hours(tmp_path):
    with pytest.raises(InputError) as caught:
        read_targets(_one_target(tmp_path, "ra", "15.30"))
    message = str(caught.value)
    assert "field ra" in message and "bare number" in message and "15:18:00" in message and "ra_deg" in message
    assert "229.5" not in message


@pytest.mark.parametrize("text, expected_deg", [
    ("15:18:00", 15.3 * DEG_PER_HOUR_OF_RA),   # sexagesimal hours, 1 h = 15 deg
    ("15.30h", 15.3 * DEG_PER_HOUR_OF_RA),     # hours stated
    ("15.30d", 15.30),                        # degrees stated
])
def test_right_ascension_with_its_unit_stated(tmp_path, text, expected_deg):
    targets = read_targets(_one_target(tmp_path, "ra", text))
    assert targets["ra_deg"][0] == pytest.approx(expected_deg, abs=1e-9)
    assert targets["ra_deg"][0] == pytest.approx(Angle(text, unit="hourangle").deg, abs=1e-9)  # astropy agrees


def test_ecsv_ra_in_degrees_is_read_as_degrees(tmp_path):
    table = Table({"name": ["Lirio-2 b"], "ra": [15.30], "dec": [-20.5], "t0_bjd_tdb": [2460412.3],
                   "t0_err_d": [0.001], "period_d": [2.5], "period_err_d": [1e-5], "duration_h": [2.0]})
    table["ra"].unit = u.deg
    table["dec"].unit = u.deg
    table.write(tmp_path / "one.ecsv", format="ascii.ecsv")
    assert read_targets(tmp_path / "one.ecsv")["ra_deg"][0] == 15.30


def test_format_option_overrides_the_extension_in_any_case(tmp_path, demo_table):
    path, _ = _votable(demo_table, tmp_path / "targets.dat")
    targets = read_targets(path, CatalogueOptions(format="VOTable"))
    assert list(targets["name"]) == list(demo_table["name"])


def test_rows_missing_required_values_are_left_out_with_a_list_or_refused(tmp_path, caplog):
    path = tmp_path / "gaps.csv"
    path.write_text("name,ra_deg,dec_deg,t0_bjd_tdb,t0_err_d,period_d,period_err_d,duration_h\n"
                    "Lirio-2 b,10,-20,2460412.3,0.001,2.5,0.00001,2.0\n"
                    "Lirio-3 b,11,-21,2460412.3,,2.5,0.00001,2.0\n"
                    "Lirio-4 b,12,-22,2460412.3,0.001,2.5,0.00001,\n", encoding="utf-8")
    with caplog.at_level(logging.WARNING, logger="vigil"):
        targets = read_targets(path)
    assert list(targets["name"]) == ["Lirio-2 b"]
    assert "2 of 3 rows" in caplog.text and "line 3 (t0_err_d)" in caplog.text and "line 4 (duration_h)" in caplog.text
    with pytest.raises(InputError, match=r"line 3, field t0_err_d: .*empty cell"):
        read_targets(path, CatalogueOptions(strict=True))


def test_masked_votable_cells_count_as_missing(tmp_path, demo_table, caplog):
    table = _with_units(demo_table)
    table = Table(table, masked=True)
    table["period_err_d"].mask[2] = True
    table.write(tmp_path / "gaps.xml", format="votable")
    with caplog.at_level(logging.WARNING, logger="vigil"):
        targets = read_targets(tmp_path / "gaps.xml")
    assert len(targets) == len(demo_table) - 1 and "row 3 (period_err_d)" in caplog.text
    assert demo_table["name"][2] not in set(targets["name"])


EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def test_the_example_layout_reads_through_its_mapping(caplog):
    with caplog.at_level(logging.WARNING, logger="vigil"):
        targets = read_targets(EXAMPLES / "team_planets.csv",
                               CatalogueOptions(columns=EXAMPLES / "team_columns.toml")).set_index("name")
    assert "Tesela b" not in targets.index and "line 8 (duration_h)" in caplog.text  # no duration: left out
    b = targets.loc["Corvina b"]
    # By hand, from the row of Corvina b: 138 min = 2.3 h (SI Brochure); 10688.43120 + 2450000;
    # larger of |+0.00042|, |-0.00051|; mean of 3.1e-6 and 2.7e-6; 05:41:12 = 15 x 5.6867 h.
    assert b["duration_h"] == pytest.approx(138 * MINUTE_S / 3600.0, rel=1e-15)
    assert b["t0_bjd_tdb"] == pytest.approx(2460688.43120, abs=1e-9)
    assert b["t0_err_d"] == pytest.approx(0.00051, rel=1e-12)
    assert b["period_err_d"] == pytest.approx(2.9e-6, rel=1e-9)
    assert b["ra_deg"] == pytest.approx(DEG_PER_HOUR_OF_RA * (5 + 41 / 60 + 12 / 3600), abs=1e-9)
    assert b["host"] == targets.loc["Corvina c", "host"] == "Corvina"


def test_campaign_file_names_the_catalogue_format_and_mapping(tmp_path):
    from vigil.campaign.spec import read_campaign

    text = (Path(__file__).resolve().parents[1] / "configs" / "campaign.example.toml").read_text()
    text = text.replace("# targets_format", "targets_format").replace("# targets_columns", "targets_columns")
    (tmp_path / "campaign.toml").write_text(text.replace('"sites.example.toml"', '"sites.toml"'))
    (tmp_path / "sites.toml").write_text((DEMO_DIR / "sites.toml").read_text())
    options = read_campaign(tmp_path / "campaign.toml").targets_options
    assert options.format == "ecsv" and options.columns == tmp_path / "../examples/team_columns.toml"


def test_quadratic_ephemeris_columns_in_stated_units_are_converted_to_their_names_units(tmp_path):
    # dP/dN stated in seconds per epoch and its covariances in s^2 become days and d^2 (1 d = 86 400 s,
    # SI Brochure); t0_epoch is a plain number. The columns are those schema.TARGETS lists as optional.
    table = Table({"name": ["Lirio-2 b"], "ra_deg": [15.30], "dec_deg": [-20.5], "t0_bjd_tdb": [2460412.3],
                   "t0_err_d": [0.001], "period_d": [2.5], "period_err_d": [1e-5], "duration_h": [2.0],
                   "t0_epoch": [12], "dp_dn_d": [-8.64e-5], "dp_dn_err_d": [8.64e-6],
                   "t0_dp_dn_cov_d2": [0.5 * 0.001 * 1e-10 * DAY_S], "period_dp_dn_cov_d2": [0.0]})
    for name in ("dp_dn_d", "dp_dn_err_d"):
        table[name].unit = u.s
    table["t0_dp_dn_cov_d2"].unit = u.d * u.s
    table["period_dp_dn_cov_d2"].unit = u.s ** 2
    table.write(tmp_path / "one.ecsv", format="ascii.ecsv")
    targets = read_targets(tmp_path / "one.ecsv")
    assert targets["dp_dn_d"][0] == pytest.approx(-8.64e-5 / DAY_S, rel=1e-12)
    assert targets["dp_dn_err_d"][0] == pytest.approx(8.64e-6 / DAY_S, rel=1e-12)
    assert targets["t0_dp_dn_cov_d2"][0] == pytest.approx(0.5 * 0.001 * 1e-10, rel=1e-12)  # correlation 0.5
    assert targets["t0_epoch"][0] == 12.0
