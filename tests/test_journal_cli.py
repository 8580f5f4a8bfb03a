"""`vigil journal` commands: add, list, export, import, and the duplicate refusal."""

import csv
from pathlib import Path

import pandas as pd
from astropy.time import Time

from typer.testing import CliRunner

from vigil import open_journal
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


def test_unknown_target_is_one_line_naming_the_closest(tmp_path):
    # A misspelt --target (lower case, a missing space) is named with the closest known name, in one
    # line, whether the names come from --targets or from the journal's own visits (difflib ratio,
    # Python standard library: the helper behind every "did you mean" of vigil).
    runner, db = CliRunner(), tmp_path / "j.db"
    targets_file = Path(__file__).resolve().parents[1] / "src" / "vigil" / "data" / "demo" / "targets.csv"
    misspelt = [("Tamsin-7b" if word == "Tamsin-7 b" else word) for word in VISIT]
    refused = runner.invoke(app, ["journal", "add", str(db), *misspelt, "--targets", str(targets_file)])
    assert refused.exit_code == 2 and not db.exists()
    assert refused.output.strip() == f"vigil: error: {targets_file}: no target 'Tamsin-7b'; did you mean 'Tamsin-7 b'?"
    assert runner.invoke(app, ["journal", "add", str(db), *VISIT]).exit_code == 0
    listed = runner.invoke(app, ["journal", "list", str(db), "--target", "tamsin-7 b"])
    assert listed.exit_code == 2 and len(listed.output.strip().splitlines()) == 1
    assert "no visits of 'tamsin-7 b'; did you mean 'Tamsin-7 b'?" in " ".join(listed.output.split())
    quiet = runner.invoke(app, ["journal", "list", str(db), "--target", "Tamsin-7 b", "--status", "planned"])
    assert quiet.exit_code == 0 and quiet.output.strip() == "no visits recorded"


def test_python_gets_datetimes_while_the_command_line_prints_the_stored_text(tmp_path):
    # Reference: the times as typed (ISO 8601 UTC); the command line shows the stored text as it did
    # before entries() handed out datetimes: "YYYY-MM-DD HH:MM" in list, the ISO text in export.
    runner, db, exported = CliRunner(), tmp_path / "j.db", tmp_path / "j.csv"
    assert runner.invoke(app, ["journal", "add", str(db), *VISIT]).exit_code == 0
    listed = runner.invoke(app, ["journal", "list", str(db)]).output
    assert runner.invoke(app, ["journal", "export", str(db), str(exported)]).exit_code == 0
    with exported.open(newline="") as handle:
        row = next(csv.DictReader(handle))
    assert (row["start_utc"], row["end_utc"]) == ("2027-01-03T02:00:00Z", "2027-01-03T05:30:00Z")
    assert "2027-01-03 02:00" in listed and "+00:00" not in listed
    with open_journal(db, write=False) as journal:
        entries = journal.entries()
    assert str(entries["start_utc"].dtype) == "datetime64[s, UTC]"
    assert entries["start_utc"][0] == pd.Timestamp("2027-01-03T02:00:00Z")
    assert entries["end_utc"][0] == pd.Timestamp("2027-01-03T05:30:00Z")
