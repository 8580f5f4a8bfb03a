"""`vigil journal` commands: add, list, export, import, and the duplicate refusal."""

import csv

from typer.testing import CliRunner

from vigil.cli import app

VISIT = ["--target", "Tamsin-7 b", "--site", "mirador_sur", "--epoch", "580", "--start", "2027-01-03T02:00:00Z",
         "--end", "2027-01-03T05:30:00Z", "--outcome", "clear", "--mid-bjd-tdb", "2461408.6", "--mid-err-d", "0.0004"]


def test_add_list_export_import_and_refuse_duplicate(tmp_path):
    runner = CliRunner()
    db, copy, exported = tmp_path / "j.db", tmp_path / "k.db", tmp_path / "j.csv"
    assert runner.invoke(app, ["journal", "add", str(db), *VISIT]).exit_code == 0
    duplicate = runner.invoke(app, ["journal", "add", str(db), *VISIT])
    assert duplicate.exit_code == 2 and "already in the journal" in duplicate.output
    assert "Traceback" not in duplicate.output
    listed = runner.invoke(app, ["journal", "list", str(db)])
    assert listed.exit_code == 0 and "Tamsin-7 b" in listed.output
    assert runner.invoke(app, ["journal", "export", str(db), str(exported)]).exit_code == 0
    assert runner.invoke(app, ["journal", "export", str(db), str(exported)]).exit_code == 2  # no --force
    with exported.open(newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert len(rows) == 1 and rows[0]["epoch"] == "580" and float(rows[0]["mid_bjd_tdb"]) == 2461408.6
    assert runner.invoke(app, ["journal", "import", str(copy), str(exported)]).exit_code == 0
    assert runner.invoke(app, ["journal", "list", str(copy)]).output == listed.output
