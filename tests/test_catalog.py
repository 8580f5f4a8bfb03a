"""Targets CSV and sites TOML: parsing, normalisation and one-line error messages."""

import math

import pytest
from astropy.coordinates import Angle

from authorities import airmass
from vigil.catalog import read_sites, read_targets
from vigil.errors import InputError

from conftest import DEMO_DIR

HEADER = "name,ra_deg,dec_deg,t0_bjd_tdb,t0_err_d,period_d,period_err_d,duration_h"
GOOD_ROW = "Tamsin-7 b,45.20,-12.30,2460412.33710,0.00040,1.7364020,0.0000011,1.45"


def _write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def _error(reader, path) -> str:
    with pytest.raises(InputError) as caught:
        reader(path)
    message = str(caught.value)
    assert "\n" not in message  # one line (RULES.md: one clear line)
    return message


def test_demo_targets_read_with_their_documented_columns():
    targets = read_targets(DEMO_DIR / "targets.csv")
    assert len(targets) == 8
    assert {"name", "ra_deg", "dec_deg", "t0_bjd_tdb", "t0_err_d", "period_d", "period_err_d", "duration_h",
            "t0_period_cov_d2"} <= set(targets.columns)
    assert (targets["t0_period_cov_d2"] == 0.0).all()  # absent column: covariance 0 (schema.py)


def test_sexagesimal_coordinates_match_astropy_angle(tmp_path):
    rows = [("03:00:48.00", "-12:18:00.0"), ("13:32:24.5", "+48:54:00"), ("00:00:00", "-89:59:59.9")]
    text = "name,ra,dec,t0_bjd_tdb,t0_err_d,period_d,period_err_d,duration_h\n" + "".join(
        f"Sable-{i} b,{ra},{dec},2460412.3,0.001,2.5,0.00001,2.0\n" for i, (ra, dec) in enumerate(rows))
    targets = read_targets(_write(tmp_path, "sexagesimal.csv", text))
    for (ra, dec), got_ra, got_dec in zip(rows, targets["ra_deg"], targets["dec_deg"]):
        # Reference: astropy Angle (RA in hours, Dec in degrees).
        assert got_ra == pytest.approx(Angle(ra, unit="hourangle").deg, abs=1e-10)
        assert got_dec == pytest.approx(Angle(dec, unit="deg").deg, abs=1e-10)
    # By hand: 3h00m48s = 15 deg/h x (3 + 48/3600) h = 45.2 deg; -12d18m = -12.3 deg (definition).
    assert targets["ra_deg"][0] == pytest.approx(15 * (3 + 48 / 3600), abs=1e-10)
    assert targets["dec_deg"][0] == pytest.approx(-(12 + 18 / 60), abs=1e-10)


def test_unknown_extra_columns_are_kept(tmp_path):
    text = f"{HEADER},observer_note,priority\n{GOOD_ROW},bring filters,2\n"
    targets = read_targets(_write(tmp_path, "extra.csv", text))
    assert targets["observer_note"][0] == "bring filters"
    assert targets["priority"][0] == "2"


def test_text_in_period_names_file_line_and_field(tmp_path):
    bad = GOOD_ROW.replace("1.7364020", "about two days").replace("Tamsin-7 b", "Tamsin-8 b")
    path = _write(tmp_path, "broken.csv", f"{HEADER}\n{GOOD_ROW}\n{bad}\n")
    message = _error(read_targets, path)
    assert str(path) in message
    assert "line 3" in message
    assert "period_d" in message


def test_blank_lines_do_not_shift_the_reported_line(tmp_path):
    bad = GOOD_ROW.replace("1.45", "long").replace("Tamsin-7 b", "Tamsin-8 b")
    path = _write(tmp_path, "gaps.csv", f"{HEADER}\n{GOOD_ROW}\n\n{bad}\n")
    message = _error(read_targets, path)
    assert "line 4" in message and "duration_h" in message


def test_duplicate_name_reports_its_line(tmp_path):
    path = _write(tmp_path, "twice.csv", f"{HEADER}\n{GOOD_ROW}\n\n{GOOD_ROW}\n")
    message = _error(read_targets, path)
    assert "line 4" in message and "appears twice" in message


def test_t0_that_looks_like_mjd_is_refused_with_a_reason(tmp_path):
    # MJD = JD - 2400000.5 (IAU convention, from memory): 60412.3 is an MJD in 2024.
    path = _write(tmp_path, "mjd.csv", f"{HEADER}\n{GOOD_ROW.replace('2460412.33710', '60412.33710')}\n")
    message = _error(read_targets, path)
    assert "t0_bjd_tdb" in message and "MJD" in message and "line 2" in message


def test_out_of_range_ra_names_the_column_given(tmp_path):
    path = _write(tmp_path, "ra.csv", f"{HEADER}\n{GOOD_ROW.replace('45.20', '400.0')}\n")
    assert "field ra_deg" in _error(read_targets, path)


def _site_toml(**fields) -> str:
    entry = {"latitude_deg": -30.52, "longitude_deg": -70.81, "elevation_m": 2450, **fields}
    return "[sites.loma_fria]\n" + "".join(f"{k} = {v!r}\n" for k, v in entry.items())


def test_longitude_0_to_360_is_normalised_east_positive(tmp_path):
    # 289.19 deg east is the same meridian as -70.81 deg (360 deg in a circle).
    sites = read_sites(_write(tmp_path, "sites.toml", _site_toml(longitude_deg=289.19)))
    assert sites["loma_fria"].longitude_deg == pytest.approx(-70.81, abs=1e-9)
    assert -180.0 < sites["loma_fria"].longitude_deg <= 180.0


def test_bad_latitude_names_the_site_and_key(tmp_path):
    path = _write(tmp_path, "sites.toml", _site_toml(latitude_deg=95.0))
    message = _error(read_sites, path)
    assert "sites.loma_fria" in message and "latitude_deg" in message and str(path) in message


def test_standard_atmosphere_pressure_at_site_elevation(tmp_path):
    # Standard atmosphere at 2000 m (authorities.airmass).
    site = read_sites(_write(tmp_path, "sites.toml", _site_toml(elevation_m=2000)))["loma_fria"]
    assert site.air_pressure_hpa == pytest.approx(airmass.STANDARD_PRESSURE_AT_2000_M_HPA, abs=0.5)
    assert math.isclose(read_sites(_write(tmp_path, "p.toml", _site_toml(pressure_hpa=700.0)))["loma_fria"]
                        .air_pressure_hpa, 700.0)


def test_a_comment_naming_the_columns_above_a_real_header_is_kept_as_a_comment(tmp_path):
    # Catalogue exports often repeat the column names in a comment above the header (common
    # practice, no source); only a commented header with data right below it is refused.
    path = _write(tmp_path, "t.csv", f"# {HEADER}\n{HEADER}\n{GOOD_ROW}\n")
    assert read_targets(path)["name"].tolist() == ["Tamsin-7 b"]
    refused = _write(tmp_path, "u.csv", f"# {HEADER}\n{GOOD_ROW}\n")
    assert _error(read_targets, refused).startswith(f"{refused}: line 1: the header row is commented out")


def test_where_each_target_was_read_travels_with_the_table_without_being_copied():
    # pandas deep-copies a table's attrs on nearly every operation; the map of file lines is
    # shared instead (a 50,000-row catalogue would otherwise be copied on every column read),
    # and it still names the file and line of each target, also after a slice and a pickle.
    import pickle

    targets = read_targets(DEMO_DIR / "targets.csv")
    places = targets.attrs["source_rows"]
    assert targets["ra_deg"].attrs["source_rows"] is places
    assert targets.iloc[2:4].attrs["source_rows"] is places
    name = targets["name"].iat[1]
    assert places[name] == f"{DEMO_DIR / 'targets.csv'}: line 3"
    assert pickle.loads(pickle.dumps(targets.iloc[1:2])).attrs["source_rows"][name] == places[name]
