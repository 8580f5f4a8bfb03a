"""One schema for every table vigil hands between stages or writes: the checks can fail, empty
tables look like full ones, and every table the commands write passes its check."""

import csv

import pytest
from astropy.time import Time
from typer.testing import CliRunner

from vigil import schema
from vigil.catalog import read_sites, read_targets
from vigil.cli import app
from vigil.errors import InputError
from vigil.export.campaign_csv import write_campaign_csvs
from vigil.export.windows_csv import COLUMNS as WINDOWS_CSV_COLUMNS
from vigil.windows import plan_windows

from conftest import DEMO_DIR
from test_cli import _restore_vigil_logger  # noqa: F401  (autouse: the CLI's logger is put back)

EXAMPLES = DEMO_DIR.parents[3] / "examples"


def _header(path) -> list[str]:
    with open(path, newline="", encoding="utf-8") as handle:
        return next(csv.reader(handle))


def _demo_windows(start="2027-01-01", end="2027-01-10", targets=None):
    targets = read_targets(DEMO_DIR / "targets.csv") if targets is None else targets
    return plan_windows(targets, read_sites(DEMO_DIR / "sites.toml"), {}, Time(start), Time(end))


def test_empty_windows_table_has_exactly_the_columns_of_a_full_one():
    full = _demo_windows()
    assert len(full) > 0
    for empty in (_demo_windows(targets=read_targets(DEMO_DIR / "targets.csv").iloc[:0]),
                  _demo_windows("2027-01-01", "2027-01-01T00:01"), schema.WINDOWS.empty()):
        assert empty.empty
        assert list(empty.columns) == list(full.columns) == list(schema.WINDOWS.names)
        assert list(empty.dtypes.astype(str)) == list(full.dtypes.astype(str))


@pytest.mark.parametrize("table", schema.TABLES, ids=lambda t: t.name)
def test_every_schema_accepts_its_empty_table_and_names_units(table):
    assert table.check(table.empty()).empty
    assert all(c.unit for c in table.columns if c.name.endswith(("_deg", "_h", "_d", "_jd_utc", "_bjd_tdb")))


def test_check_refuses_a_missing_column_a_wrong_kind_and_a_wrong_order():
    full = _demo_windows()
    with pytest.raises(schema.SchemaError, match="missing column.*mid_jd_utc"):
        schema.WINDOWS.check(full.drop(columns=["mid_jd_utc"]))
    with pytest.raises(schema.SchemaError, match="column epoch"):
        schema.WINDOWS.check(full.assign(epoch=full["epoch"].astype(float)))
    with pytest.raises(schema.SchemaError, match="out of order"):
        schema.WINDOWS.check(full[[*full.columns[1:], full.columns[0]]])
    with pytest.raises(schema.SchemaError, match="unexpected column"):
        schema.WINDOWS.check(full.assign(extra=1.0))
    with pytest.raises(schema.SchemaError, match="coverage"):
        schema.WINDOWS.check(full.assign(coverage="most"))


def test_writers_refuse_a_table_that_breaks_its_schema(tmp_path):
    from vigil.campaign.result import CampaignResult

    broken = CampaignResult(schema.SUMMARY.empty().drop(columns=["reachable"]), schema.FORECAST.empty(),
                            schema.LEDGER.empty(), {}, schema.SCENARIOS.empty(), schema.BUDGET.empty())
    with pytest.raises(schema.SchemaError, match="summary table"):
        write_campaign_csvs(broken, tmp_path)
    assert not list(tmp_path.iterdir())  # nothing half-written


def test_every_table_the_commands_write_passes_its_schema(tmp_path):
    # The writers check each table before writing (a SchemaError would fail the command); the
    # files then carry the schema's columns.
    result = CliRunner().invoke(app, ["demo", "--out", str(tmp_path / "demo")])
    assert result.exit_code == 0, result.output
    out = tmp_path / "demo"
    assert _header(out / "windows.csv") == WINDOWS_CSV_COLUMNS
    assert _header(out / "summary.csv")[:len(schema.SUMMARY.names)] == list(schema.SUMMARY.names)
    assert _header(out / "forecast.csv")[:len(schema.FORECAST.names)] == list(schema.FORECAST.names)
    assert _header(out / "scenarios.csv") == list(schema.SCENARIOS.names)
    assert _header(out / "budget.csv") == list(schema.BUDGET.names)
    times = {"mid_jd_utc": "mid_utc", "start_jd_utc": "start_utc", "end_jd_utc": "end_utc"}
    assert _header(out / "ledger.csv") == [times.get(n, n) for n in schema.LEDGER.names]
    refit = CliRunner().invoke(app, ["refit", str(EXAMPLES / "timings.csv"), "--targets", str(DEMO_DIR / "targets.csv"),
                                     "--out", str(tmp_path / "refit.csv")])
    assert refit.exit_code == 0, refit.output
    assert schema.TARGETS.check(read_targets(tmp_path / "refit.csv")).shape[0] > 0


def test_targets_schema_names_the_optional_ephemeris_columns_models_reads_and_readme_gives_their_units():
    # One place for the names: what the ephemeris model reads is what the schema lists, and the
    # README's Targets section states each with the schema's unit (project convention, no source).
    from vigil.ephemeris.models import EPOCH_ORIGIN_COLUMN, QUADRATIC_COLUMNS
    optional = {c.name: c.unit for c in schema.TARGETS.optional}
    assert set(optional) == {*QUADRATIC_COLUMNS, EPOCH_ORIGIN_COLUMN}
    readme = (DEMO_DIR.parents[3] / "README.md").read_text(encoding="utf-8")
    targets_section = readme.split("### Targets", 1)[1].split("\n### ", 1)[0]
    as_written = {"d": "d", "d^2": "d²", "": "epoch number"}
    for name, unit in optional.items():
        assert f"`{name}` ({as_written[unit]}" in targets_section, name


def test_a_quadratic_term_out_of_range_is_refused_naming_file_line_and_field(tmp_path):
    # dP/dN of a whole day per epoch is a unit mistake; the reader refuses it before any work.
    path = tmp_path / "t.csv"
    path.write_text("name,ra_deg,dec_deg,t0_bjd_tdb,t0_err_d,period_d,period_err_d,duration_h,dp_dn_d\n"
                    "Lirio-2 b,15.3,-20.5,2460412.3,0.001,2.5,0.00001,2.0,\n"
                    "Lirio-3 b,15.3,-20.5,2460412.3,0.001,2.5,0.00001,2.0,3.5\n", encoding="utf-8")
    with pytest.raises(InputError) as caught:
        read_targets(path)
    assert str(caught.value).startswith(f"{path}: line 3, target 'Lirio-3 b', field dp_dn_d: expected a number")
