"""Column mappings and stated units: source columns, unit conversion, asymmetric uncertainties."""

from pathlib import Path

import astropy.units as u
import pandas as pd
import pytest

from vigil.column_map import apply_column_map, read_column_map
from vigil.errors import InputError
from vigil.field_units import in_field_units
from vigil.table_formats import SourceTable

from authorities.catalogue_units import DAY_S, DEG_PER_HOUR_OF_RA, HOUR_S, JUPITER_RADIUS_M, MINUTE_S
from authorities.spectrum_refs import EARTH_RADIUS_M

FIELDS = ["name", "ra_deg", "dec_deg", "ra", "dec", "t0_bjd_tdb", "t0_err_d", "period_d", "period_err_d",
          "duration_h", "planet_radius_earth", "host"]


def _map(tmp_path, text):
    path = tmp_path / "columns.toml"
    path.write_text(text, encoding="utf-8")
    return read_column_map(path, FIELDS)


def _source(columns: dict, units=None) -> SourceTable:
    return SourceTable(Path("survey.csv"), pd.DataFrame(columns, index=range(2, 2 + len(next(iter(columns.values())))),
                                                        dtype=str), units or {})


def _error(call, *args) -> str:
    with pytest.raises(InputError) as caught:
        call(*args)
    assert "\n" not in str(caught.value)
    return str(caught.value)


def test_units_convert_by_the_si_definitions(tmp_path):
    mapping = _map(tmp_path, '[columns]\nduration_h = { column = "t14", unit = "min" }\n'
                             'period_d = { column = "per", unit = "h" }\n'
                             'planet_radius_earth = { column = "rp", unit = "jupiterRad" }\n')
    table = apply_column_map(mapping, _source({"t14": ["150", "97"], "per": ["36", "60.5"], "rp": ["1", "0.5"]}))
    cells = table.cells
    # BIPM SI Brochure Table 8: 1 min = 60 s, 1 h = 3600 s, 1 d = 86400 s.
    assert float(cells["duration_h"][3]) == pytest.approx(97 * MINUTE_S / HOUR_S, rel=1e-15)
    assert float(cells["period_d"][3]) == pytest.approx(60.5 * HOUR_S / DAY_S, rel=1e-15)
    # IAU 2015 B3 nominal radii: R_J / R_E = 7.1492e7 / 6.3781e6.
    assert float(cells["planet_radius_earth"][2]) == pytest.approx(JUPITER_RADIUS_M / EARTH_RADIUS_M, rel=1e-6)
    assert "t14" not in cells.columns  # the source column is read under the field's name only


@pytest.mark.parametrize("combine, expected", [("larger", 0.0009), ("mean", 0.0007)])
def test_asymmetric_uncertainties_combine_as_stated(tmp_path, combine, expected):
    mapping = _map(tmp_path, f'[columns]\nt0_err_d = {{ plus = "up", minus = "lo", unit = "d", combine = "{combine}" }}\n')
    table = apply_column_map(mapping, _source({"up": ["0.0005", ""], "lo": ["-0.0009", "0.0004"]}))
    # By hand: |+0.0005|, |-0.0009| -> larger 0.0009, mean 0.0007; one side empty -> the other (0.0004).
    assert float(table.cells["t0_err_d"][2]) == pytest.approx(expected, rel=1e-12)
    assert float(table.cells["t0_err_d"][3]) == pytest.approx(0.0004, rel=1e-12)


def test_stated_value_and_offset(tmp_path):
    mapping = _map(tmp_path, '[columns]\nt0_err_d = { value = 1.2, unit = "min" }\n'
                             't0_bjd_tdb = { column = "tmid", offset = 2450000 }\n')
    table = apply_column_map(mapping, _source({"tmid": ["10412.3371", ""]}))
    assert float(table.cells["t0_err_d"][2]) == pytest.approx(1.2 * MINUTE_S / DAY_S, rel=1e-15)
    assert float(table.cells["t0_bjd_tdb"][2]) == pytest.approx(2460412.3371, abs=1e-9)
    assert table.cells["t0_bjd_tdb"][3] == ""  # missing stays missing, for the reader to count


def test_mapping_naming_a_missing_column_is_one_line(tmp_path):
    mapping = _map(tmp_path, '[columns]\nperiod_d = { column = "peroid", unit = "d" }\n')
    message = _error(apply_column_map, mapping, _source({"period": ["1.5"]}))
    assert "[columns] period_d" in message and "'peroid'" in message and "did you mean 'period'" in message


@pytest.mark.parametrize("text, words", [
    ('[columns]\nperiod = "P"\n', ("not a vigil field", "period_d")),
    ('[columns]\nperiod_d = { column = "P", unit = "parsecs_x" }\n', ("unit 'parsecs_x'",)),
    ('[columns]\nperiod_d = { column = "P", unit = "m" }\n', ("cannot be read as d", "period_d")),
    ('[columns]\nt0_err_d = { plus = "up" }\n', ("needs its partner", "minus")),
    ('[columns]\nt0_err_d = { plus = "u", minus = "l", combine = "max" }\n', ("larger or mean", "'max'")),
    ('[columns]\nperiod_d = { column = "P", value = 2.0 }\n', ("one of column",)),
    ('[columns]\nperiod_d = { column = "P", scale = 2.0 }\n', ("unknown key 'scale'",)),
    ('[colums]\nperiod_d = "P"\n', ("[columns]",)),
])
def test_bad_mappings_are_one_line(tmp_path, text, words):
    message = _error(_map, tmp_path, text)
    assert "columns.toml" in message and all(w in message for w in words)


def test_stated_units_convert_and_ra_in_degrees_stays_degrees():
    source = _source({"ra": ["229.5"], "dec": ["-12.5"], "duration_h": ["150"]},
                     {"ra": u.deg, "dec": u.deg, "duration_h": u.min})
    cells = in_field_units(source).cells
    assert float(cells["ra_deg"][2]) == 229.5 and float(cells["dec_deg"][2]) == -12.5
    assert float(cells["duration_h"][2]) == pytest.approx(2.5, rel=1e-15)
    assert "ra" not in cells.columns


def test_ra_stated_in_hours_is_an_hour_angle():
    cells = in_field_units(_source({"ra": ["15.3", "15:18:00"], "dec": ["10", "10"]}, {"ra": u.hourangle})).cells
    # 1 h of right ascension = 15 degrees (definition).
    assert float(cells["ra_deg"][2]) == pytest.approx(15.3 * DEG_PER_HOUR_OF_RA, rel=1e-15)
    assert float(cells["ra_deg"][3]) == pytest.approx(15.3 * DEG_PER_HOUR_OF_RA, rel=1e-15)
    assert float(cells["dec_deg"][2]) == 10.0


def test_stated_unit_of_the_wrong_kind_is_refused():
    message = _error(in_field_units, _source({"period_d": ["3"]}, {"period_d": u.m}))
    assert "survey.csv: column 'period_d'" in message and "cannot be read as d" in message
