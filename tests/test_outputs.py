"""A run's outputs are one transaction: all new, or all as they were (vigil.export.files).

Injected failures: a full disk (ENOSPC) at each output's write, a read-only folder (EACCES /
EROFS), and SIGKILL at random moments of a real run. After each, the folder must hold exactly
what it held before (byte for byte, hidden files included, except a killed run's hidden
temporaries, which the next run removes), and the error line names the user's output.
The rules (same path twice, output that is an input, symbolic links, missing folders) are
this project's convention (module docstring of vigil.export.files), not an outside source.
"""

import errno
import os
import random
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from typer.testing import CliRunner

from vigil.cli import CAMPAIGN_FILES, app
from vigil.export import files

from test_cli import _restore_vigil_logger  # noqa: F401  (autouse: leave the 'vigil' logger as found)
from test_journal_damage import mounted  # noqa: F401  (fixture: a small tmpfs, root only)

GOOD = Path(__file__).resolve().parent / "corpus" / "good"
DATES = ("--start", "2027-03-01", "--end", "2027-03-08")
OLD = b"an earlier result that must survive\n"


def _run(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


def _snapshot(folder: Path) -> dict:
    return {p.relative_to(folder): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def _one_error_line(result) -> str:
    # The only note allowed beside the error: an earlier .ics that is not a calendar restarts SEQUENCE numbers.
    lines = result.output.splitlines()
    notes = [line for line in lines if line.startswith("vigil: note: ")]
    assert all("SEQUENCE" in note for note in notes), result.output
    errors = [line for line in lines if line not in notes]
    assert result.exit_code == 2 and "Traceback" not in result.output, result.output
    assert len(errors) == 1 and errors[0].startswith("vigil: error: "), result.output
    return errors[0]


def _commands(out: Path) -> dict:
    """command -> (arguments writing into `out`, the outputs it writes)."""
    refit_outputs = [out / "refit.csv", out / "refit_o_minus_c.csv", out / "refit_o_minus_c.png"]
    return {
        "windows": (("windows", GOOD / "targets.csv", "--sites", GOOD / "sites.toml", *DATES,
                     "--csv", out / "w.csv", "--ics", out / "w.ics"), [out / "w.csv", out / "w.ics"]),
        "campaign": (("campaign", GOOD / "campaign.toml", "--out", out), [out / n for n in CAMPAIGN_FILES]),
        "refit": (("refit", GOOD / "timings.csv", "--targets", GOOD / "targets.csv", "--out", out / "refit.csv"),
                  refit_outputs),
    }


WRITES = [(command, point) for command, count in (("windows", 2), ("campaign", len(CAMPAIGN_FILES)), ("refit", 3))
          for point in range(1, count + 1)]


@pytest.mark.parametrize("earlier", [False, True], ids=["fresh", "over-earlier-outputs"])
@pytest.mark.parametrize("command, point", WRITES, ids=[f"{c}-write{p}" for c, p in WRITES])
def test_full_disk_at_any_write_leaves_everything_as_it_was(tmp_path, monkeypatch, command, point, earlier):
    out = tmp_path / "out"
    out.mkdir()
    args, outputs = _commands(out)[command]
    if earlier:
        for path in outputs:
            path.write_bytes(OLD)
    before = _snapshot(out)
    calls = []

    def fsync(descriptor):
        calls.append(descriptor)
        if len(calls) == point:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(files.os, "fsync", fsync)
    line = _one_error_line(_run(*args, *(("--force",) if earlier else ())))
    assert len(calls) == point  # the failure struck at the intended write
    assert "disk is full" in line and f"cannot write {outputs[point - 1]}:" in line
    assert ".vigil-tmp" not in line
    assert _snapshot(out) == before
    assert sorted(out.iterdir()) == sorted(outputs if earlier else [])


@pytest.mark.parametrize("code, words", [(errno.EACCES, "permission denied"), (errno.EROFS, "read-only")])
def test_unwritable_folder_is_one_line_naming_the_output(tmp_path, monkeypatch, code, words):
    out = tmp_path / "out"
    out.mkdir()
    args, outputs = _commands(out)["windows"]

    def mkstemp(prefix, suffix, dir):
        raise OSError(code, os.strerror(code), str(Path(dir) / f"{prefix}x{suffix}"))

    monkeypatch.setattr(files.tempfile, "mkstemp", mkstemp)
    line = _one_error_line(_run(*args))
    assert f"cannot write {outputs[0]}:" in line and words in line and ".vigil-tmp" not in line
    assert list(out.iterdir()) == []


def test_campaign_folder_is_not_left_behind_by_a_failed_run(tmp_path, monkeypatch):
    out = tmp_path / "new" / "campaign"
    monkeypatch.setattr(files.os, "fsync", lambda _: (_ for _ in ()).throw(OSError(errno.ENOSPC, "full")))
    _one_error_line(_run("campaign", GOOD / "campaign.toml", "--out", out))
    assert not out.exists()


def test_same_path_twice_is_refused(tmp_path):
    path = tmp_path / "x"
    line = _one_error_line(_run("windows", GOOD / "targets.csv", "--sites", GOOD / "sites.toml", *DATES,
                                "--csv", path, "--ics", path))
    assert "two outputs" in line and str(path) in line
    assert list(tmp_path.iterdir()) == []


def test_same_file_through_a_link_is_refused(tmp_path):
    path, link = tmp_path / "x.csv", tmp_path / "link.ics"
    path.write_bytes(OLD)
    link.symlink_to(path)
    line = _one_error_line(_run("windows", GOOD / "targets.csv", "--sites", GOOD / "sites.toml", *DATES,
                                "--csv", path, "--ics", link, "--force"))
    assert "two outputs" in line
    assert path.read_bytes() == OLD


@pytest.mark.parametrize("option", ["--csv", "--ics"])
def test_output_that_is_an_input_is_refused_even_with_force(tmp_path, option):
    targets = tmp_path / "targets.csv"
    targets.write_bytes((GOOD / "targets.csv").read_bytes())
    line = _one_error_line(_run("windows", targets, "--sites", GOOD / "sites.toml", *DATES, option, targets, "--force"))
    assert "also an input" in line and str(targets) in line
    assert targets.read_bytes() == (GOOD / "targets.csv").read_bytes()


def test_refit_output_over_its_timings_is_refused(tmp_path):
    timings = tmp_path / "timings.csv"
    timings.write_bytes((GOOD / "timings.csv").read_bytes())
    line = _one_error_line(_run("refit", timings, "--out", timings, "--force"))
    assert "also an input" in line
    assert timings.read_bytes() == (GOOD / "timings.csv").read_bytes()


def test_force_through_a_symlink_replaces_its_target_and_keeps_the_link(tmp_path):
    real = tmp_path / "data" / "w.csv"
    real.parent.mkdir()
    real.write_bytes(OLD)
    os.chmod(real, 0o640)
    link = tmp_path / "w.csv"
    link.symlink_to(real)
    args = ("windows", GOOD / "targets.csv", "--sites", GOOD / "sites.toml", *DATES, "--csv", link)
    assert "exists; pass --force" in _one_error_line(_run(*args))
    assert _run(*args, "--force").exit_code == 0
    assert link.is_symlink() and os.readlink(link) == str(real)
    assert real.read_bytes().startswith(b"target,site,event")
    assert real.stat().st_mode & 0o777 == 0o640  # a replaced file keeps its permissions
    assert sorted(p.name for p in real.parent.iterdir()) == ["w.csv"]


def test_force_through_a_dangling_symlink_creates_its_target(tmp_path):
    real, link = tmp_path / "later.csv", tmp_path / "w.csv"
    link.symlink_to(real)
    args = ("windows", GOOD / "targets.csv", "--sites", GOOD / "sites.toml", *DATES, "--csv", link)
    assert "exists; pass --force" in _one_error_line(_run(*args))  # a link counts as existing
    assert _run(*args, "--force").exit_code == 0
    assert link.is_symlink() and real.read_bytes().startswith(b"target,site,event")


def test_missing_output_folder_is_refused_not_created(tmp_path):
    path = tmp_path / "no" / "such" / "w.csv"
    line = _one_error_line(_run("windows", GOOD / "targets.csv", "--sites", GOOD / "sites.toml", *DATES,
                                "--csv", path))
    assert "does not exist" in line and str(path) in line
    assert not (tmp_path / "no").exists()


def test_abandoned_temporaries_of_a_dead_process_are_removed(tmp_path):
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    leftover = tmp_path / f".w.csv.{dead.pid}.abc{files._TEMP_MARK}"
    live = tmp_path / f".w.csv.{os.getpid()}.abc{files._TEMP_MARK}"
    leftover.write_bytes(b"half")
    live.write_bytes(b"in progress")
    files.write_atomic(tmp_path / "w.csv", b"new\n")
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(["w.csv", live.name])


def _visible(folder: Path) -> dict:
    return {p.name: p.read_bytes() for p in folder.iterdir() if not p.name.startswith(".")}


def test_kill_9_at_random_moments_leaves_old_or_new_outputs_never_a_mix(tmp_path):
    """SIGKILL a real `vigil campaign --force` at random moments; the set must be all old or all new."""
    vigil = [sys.executable, "-c", "from vigil.cli import app; app()"]
    out = tmp_path / "out"
    out.mkdir()
    args = [*vigil, "campaign", str(GOOD / "campaign.toml"), "--out", str(out), "--force"]
    started = time.monotonic()
    subprocess.run(args, check=True, capture_output=True)
    full_s = time.monotonic() - started
    new = _visible(out)
    old = {name: OLD for name in new}
    rng = random.Random(int(os.environ.get("VIGIL_KILL_SEED", "17")))
    outcomes = []
    for _ in range(int(os.environ.get("VIGIL_KILL_TRIALS", "4"))):
        for name in old:
            (out / name).write_bytes(OLD)
        process = subprocess.Popen(args, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        time.sleep(rng.uniform(0.3, 1.1) * full_s)
        process.send_signal(signal.SIGKILL)
        process.wait()
        now = _visible(out)
        assert now in (old, new), "a killed run left a mixed set of outputs"
        outcomes.append("new" if now == new else "old")
    subprocess.run(args, check=True, capture_output=True)  # the next run removes what a killed one left
    assert not [p.name for p in out.iterdir() if p.name.startswith(".")]
    print("kill -9 outcomes:", outcomes)


def test_a_really_full_disk_leaves_the_earlier_outputs(mounted):
    """On a small real file system: the new outputs do not fit; the earlier ones stay as they were."""
    w_csv, w_ics = mounted / "w.csv", mounted / "w.ics"
    w_csv.write_bytes(OLD)
    w_ics.write_bytes(OLD)
    filler = mounted / "filler"
    filler.write_bytes(b"\0" * (256 * 1024 - 3 * 4096))
    result = _run("windows", GOOD / "targets.csv", "--sites", GOOD / "sites.toml", "--start", "2027-01-01",
                  "--end", "2027-07-01", "--csv", w_csv, "--ics", w_ics, "--force")
    line = _one_error_line(result)
    assert "disk is full" in line and (f"cannot write {w_csv}:" in line or f"cannot write {w_ics}:" in line)
    assert w_csv.read_bytes() == OLD and w_ics.read_bytes() == OLD
    assert sorted(p.name for p in mounted.iterdir()) == ["filler", "w.csv", "w.ics"]
