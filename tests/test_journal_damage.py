"""Damaged, foreign, newer, older and read-only journals (vigil.journal_file).

Every command that opens a journal must answer a damaged one with one line `vigil: error:`
naming the file and what to do, exit status 2, and leave the file byte for byte as it was.
The damage is made with SQLite's own documented file layout (https://www.sqlite.org/fileformat.html:
page size at header offset 16, application id at offset 68, user_version at offset 60) through
the sqlite3 module or by overwriting a page; the expected words are this project's messages.
"""

import os
import shutil
import sqlite3
import subprocess
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from vigil.cli import app
from vigil.journal import COLUMNS, open_journal
from vigil.journal_file import JOURNAL_APPLICATION_ID, SCHEMA_VERSION

from test_cli import _restore_vigil_logger  # noqa: F401  (autouse: leave the 'vigil' logger as found)
from test_corpus import _assert_one_error_line

GOOD = Path(__file__).resolve().parent / "corpus" / "good"
VISIT = ("--site", "alto_verde", "--start", "2027-03-04T22:15:00Z", "--end", "2027-03-05T02:15:00Z",
         "--outcome", "clear")


def _run(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


def _one_error_line(result) -> str:
    return _assert_one_error_line(result, None, ())


def _journal(path: Path, visits: int = 300) -> Path:
    """A journal with enough visits to fill several pages."""
    with open_journal(path) as journal:
        for epoch in range(visits):
            journal.add({"target": "Brisa-4 b", "site": "alto_verde", "epoch": epoch, "status": "executed",
                         "start_utc": "2027-03-04T22:15:00Z", "end_utc": "2027-03-05T02:15:00Z",
                         "outcome": "clear", "notes": f"visit {epoch}: a note long enough to take some room"})
    return path


def _corrupt_page(path: Path) -> None:
    data = bytearray(path.read_bytes())
    page = int.from_bytes(data[16:18], "big")
    assert len(data) >= 4 * page
    data[2 * page:3 * page] = b"\xa5" * page  # a whole b-tree page of garbage
    path.write_bytes(bytes(data))


def _missing_column(path: Path) -> None:
    with sqlite3.connect(path) as db:
        db.execute("CREATE TABLE visit (target TEXT, site TEXT, epoch INTEGER)")
        db.execute(f"PRAGMA application_id = {JOURNAL_APPLICATION_ID}")
        db.execute(f"PRAGMA user_version = {SCHEMA_VERSION}")


def _newer(path: Path) -> None:
    _journal(path, 2)
    with sqlite3.connect(path) as db:
        db.execute(f"PRAGMA user_version = {SCHEMA_VERSION + 1}")


def _foreign(path: Path) -> None:
    with sqlite3.connect(path) as db:
        db.execute("CREATE TABLE recipes (name TEXT)")
        db.execute("PRAGMA application_id = 1234")


def _not_sqlite(path: Path) -> None:
    path.write_text("just some text, not a database\n" * 40)


def _truncated(path: Path) -> None:
    _journal(path)
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2 + 100])


DAMAGE = {
    "corrupt-page": (lambda p: _corrupt_page(_journal(p)), ("damaged", ".recover", "backup")),
    "truncated": (_truncated, ("damaged", "backup")),
    "missing-column": (_missing_column, ("lacks column(s) start_utc", "backup")),
    "newer-schema": (_newer, (f"schema version {SCHEMA_VERSION + 1}", "newer")),
    "foreign-sqlite": (_foreign, ("not a vigil journal", "another program")),
    "not-sqlite": (_not_sqlite, ("not a vigil journal", "not an SQLite database")),
}


def _commands(path: Path, tmp_path: Path) -> dict:
    csv_in = tmp_path / "in.csv"
    csv_in.write_text(",".join(COLUMNS) + "\nBrisa-4 b,alto_verde,999,2027-03-04T22:15:00Z,2027-03-05T02:15:00Z,"
                      "executed,clear,,,,,\n")
    campaign = tmp_path / "campaign.toml"
    text = (GOOD / "campaign.toml").read_text().replace('targets = "targets.csv"',
                                                        f'targets = "{GOOD / "targets.csv"}"')
    campaign.write_text(text.replace('sites_file = "sites.toml"', f'sites_file = "{GOOD / "sites.toml"}"\n'
                                                                  f'journal = "{path}"'))
    return {
        "add": ("journal", "add", path, "--target", "Brisa-4 b", "--epoch", 1000, *VISIT),
        "import": ("journal", "import", path, csv_in),
        "list": ("journal", "list", path),
        "export": ("journal", "export", path, tmp_path / "out.csv"),
        "campaign": ("campaign", campaign, "--out", tmp_path / "campaign"),
    }


@pytest.mark.parametrize("command", ["add", "import", "list", "export", "campaign"])
@pytest.mark.parametrize("damage", list(DAMAGE))
def test_damaged_journal_is_one_line_and_left_as_it_was(tmp_path, damage, command):
    path = tmp_path / "j.db"
    make, words = DAMAGE[damage]
    make(path)
    before = path.read_bytes()
    line = _one_error_line(_run(*_commands(path, tmp_path)[command]))
    assert str(path) in line
    missing = [w for w in words if w not in line]
    assert not missing, f"{missing} not in: {line}"
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(["j.db", "in.csv", "campaign.toml"])


def _version_1(path: Path) -> None:
    """A journal as vigil 0.1 wrote it: schema version 1, no application id."""
    _journal(path, 3)
    with sqlite3.connect(path) as db:
        db.execute("PRAGMA application_id = 0")
        db.execute("PRAGMA user_version = 1")


def test_older_schema_is_migrated_after_a_backup_copy(tmp_path):
    path = tmp_path / "j.db"
    _version_1(path)
    before = path.read_bytes()
    assert _run("journal", "list", path).exit_code == 0
    assert path.read_bytes() == before  # a read takes it as it is
    result = _run("journal", "add", path, "--target", "Brisa-4 b", "--epoch", 1000, *VISIT)
    assert result.exit_code == 0, result.output
    assert "migrated from schema version 1 to 2" in result.output
    backup = tmp_path / "j.db.schema1-backup"
    with sqlite3.connect(backup) as db:
        assert db.execute("PRAGMA user_version").fetchone()[0] == 1
        assert db.execute("SELECT COUNT(*) FROM visit").fetchone()[0] == 3
    with sqlite3.connect(path) as db:
        assert db.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
        assert db.execute("PRAGMA application_id").fetchone()[0] == JOURNAL_APPLICATION_ID
        assert db.execute("SELECT COUNT(*) FROM visit").fetchone()[0] == 4


def test_a_read_never_creates_a_journal(tmp_path):
    path = tmp_path / "missing.db"
    for args in (("journal", "list", path), ("journal", "export", path, tmp_path / "x.csv")):
        line = _one_error_line(_run(*args))
        assert "no journal here" in line and str(path) in line
    assert list(tmp_path.iterdir()) == []


def _can_mount() -> bool:
    return os.geteuid() == 0 and shutil.which("mount") is not None


@pytest.fixture
def mounted(tmp_path):
    """A small tmpfs at tmp_path / 'mnt' (root only); yields its path and unmounts."""
    if not _can_mount():
        pytest.skip("needs root to mount a small file system")
    point = tmp_path / "mnt"
    point.mkdir()
    if subprocess.run(["mount", "-t", "tmpfs", "-o", "size=256k", "tmpfs", str(point)]).returncode != 0:
        pytest.skip("mount is not permitted here")
    yield point
    subprocess.run(["umount", "-l", str(point)], check=False)


def test_read_only_medium_is_one_line_and_reads_still_work(mounted):
    path = _journal(mounted / "j.db", 3)
    subprocess.run(["mount", "-o", "remount,ro", str(mounted)], check=True)
    line = _one_error_line(_run("journal", "add", path, "--target", "Brisa-4 b", "--epoch", 1000, *VISIT))
    assert "read-only" in line and str(path) in line
    listed = CliRunner().invoke(app, ["journal", "list", str(path)], env={"COLUMNS": "200"})  # names untruncated
    assert listed.exit_code == 0 and listed.output.count("Brisa-4 b") == 3


def test_new_journal_on_a_full_disk_leaves_no_file(mounted):
    (mounted / "filler").write_bytes(b"\0" * (256 * 1024 - 4096))
    path = mounted / "j.db"
    line = _one_error_line(_run("journal", "add", path, "--target", "Brisa-4 b", "--epoch", 1, *VISIT))
    assert str(path) in line and ("disk is full" in line or "cannot" in line)
    assert sorted(p.name for p in mounted.iterdir()) == ["filler"]


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(notes=st.text(st.characters(blacklist_categories=("Cs",)), max_size=12)
       | st.sampled_from(["'", "''", "'); DROP TABLE visit;--", "=cmd|' /C calc'!A0", "'=1", "-", "\t@x"]))
def test_notes_round_trip_exactly_through_export_and_import(tmp_path, notes):
    # Reference: the text put in; the rule is stated in vigil.export.table.
    first, second, csv_path = tmp_path / "a.db", tmp_path / "b.db", tmp_path / "visits.csv"
    for path in (first, second, csv_path):
        path.unlink(missing_ok=True)
    with open_journal(first) as journal:
        journal.add({"target": "Brisa-4 b", "site": "alto_verde", "epoch": 1, "status": "executed",
                     "start_utc": "2027-03-04T22:15:00Z", "end_utc": "2027-03-05T02:15:00Z", "outcome": "clear",
                     "notes": notes})
        stored = journal.entries()["notes"][0]
        journal.export_csv(csv_path)
    with open_journal(second) as journal:
        journal.import_csv(csv_path)
        assert journal.entries()["notes"][0] == stored
    given_text = notes.replace("\r\n", "\n").replace("\r", "\n")  # line breaks are stored as LF
    assert stored == (given_text if given_text.strip() else None)
