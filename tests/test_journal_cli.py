"""`vigil journal` commands: add, list, export, import, and the duplicate refusal."""

import csv
from pathlib import Path

from astropy.time import Time

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


def test_timing_far_from_prediction_is_refused_unless_forced(tmp_path):
    # The mid-time of a visit 0.97 d from the catalogue prediction (invented demo target, epoch 580):
    # refused in one line with --targets; --force records it, marked, with its epoch.
    from vigil.catalog import read_targets
    from vigil.ephemeris.models import target_ephemerides
    from vigil.journal import open_journal
    targets_file = Path(__file__).resolve().parents[1] / "src" / "vigil" / "data" / "demo" / "targets.csv"
    model = target_ephemerides(read_targets(targets_file).query("name == 'Tamsin-7 b'"))[0]
    predicted = float(model.mid_bjd_tdb(580))
    start = Time(predicted - 0.2, format="jd", scale="utc").isot[:19] + "Z"
    end = Time(predicted + 1.2, format="jd", scale="utc").isot[:19] + "Z"
    visit = ["--target", "Tamsin-7 b", "--site", "mirador_sur", "--epoch", "580", "--start", start, "--end", end,
             "--outcome", "clear", "--mid-bjd-tdb", f"{predicted + 0.97:.5f}", "--mid-err-d", "0.0004",
             "--targets", str(targets_file)]
    runner, db = CliRunner(), tmp_path / "j.db"
    refused = runner.invoke(app, ["journal", "add", str(db), *visit])
    assert refused.exit_code == 2 and "combined sigma" in refused.output and "--force" in refused.output
    assert len(refused.output.strip().splitlines()) == 1
    forced = runner.invoke(app, ["journal", "add", str(db), *visit, "--force"])
    assert forced.exit_code == 0 and "forced" in forced.output
    with open_journal(db) as journal:
        timings = journal.timings()
    assert timings["forced"].tolist() == [True] and timings["epoch"].tolist() == [580]
