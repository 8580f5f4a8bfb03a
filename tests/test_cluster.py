"""The windows computation on a dask.distributed cluster gives the table of one process.

Reference: `vigil windows --jobs 1` on the same invented catalog (the contract the cluster
backend must keep: the same CSV, byte for byte). Two clusters: a LocalCluster of two worker
processes started by vigil (--scheduler local), and a scheduler and two workers started here
as separate processes, joined by address. All traffic stays on 127.0.0.1; every process is
stopped at the end of its test, and the scheduler stops by itself after two idle minutes.
"""

import json
import subprocess
import sys
import time
from pathlib import Path

import pytest

from vigil.cli import app
from vigil.errors import InputError

from conftest import DEMO_DIR, random_targets

pytest.importorskip("distributed", reason="dask.distributed is an optional extra: pip install 'vigil[dask]'")
pytest.importorskip("pyarrow", reason="pyarrow is part of the optional extra: pip install 'vigil[dask]'")

from typer.testing import CliRunner  # noqa: E402

from vigil import cluster  # noqa: E402

SPAN = ["--start", "2027-03-01", "--end", "2027-05-01"]
START_TIMEOUT_S = 60
STOP_TIMEOUT_S = 20


@pytest.fixture(scope="module")
def targets_csv(tmp_path_factory):
    """Thirty invented targets over the whole sky, periods 0.7-15 d, as a targets CSV."""
    path = tmp_path_factory.mktemp("catalog") / "targets.csv"
    random_targets(30, 16, "Veyra-{} b", periods_d=(0.7, 15.0), t0_base=2461000.0, t0_err_d=(1e-4, 1e-3),
                   duration_h=(1.0, 4.0)).to_csv(path, index=False)
    return path


def _windows_csv(targets_csv, out: Path, *options) -> bytes:
    result = CliRunner().invoke(app, ["windows", str(targets_csv), "--sites", str(DEMO_DIR / "sites.toml"), *SPAN,
                                      "--all", "--moon-sep", "15", "--csv", str(out), *options])
    assert result.exit_code == 0, result.output
    return out.read_bytes()


@pytest.fixture(scope="module")
def one_process(targets_csv, tmp_path_factory):
    return _windows_csv(targets_csv, tmp_path_factory.mktemp("one") / "windows.csv", "--jobs", "1")


def test_local_cluster_of_two_processes_matches_one_process(targets_csv, one_process, tmp_path):
    chunks = tmp_path / "chunks"
    chunks.mkdir()
    got = _windows_csv(targets_csv, tmp_path / "windows.csv", "--scheduler", "local", "--jobs", "2",
                       "--chunk-dir", str(chunks))
    assert one_process.count(b"\n") > 1000
    assert got == one_process
    assert list(chunks.iterdir()) == []  # every chunk file read and removed


def _start(*command) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-m", *command], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)


def _scheduler_address(scheduler_file: Path, scheduler: subprocess.Popen) -> str:
    deadline = time.monotonic() + START_TIMEOUT_S
    while time.monotonic() < deadline and scheduler.poll() is None:
        if scheduler_file.exists() and scheduler_file.stat().st_size:
            return json.loads(scheduler_file.read_text())["address"]
        time.sleep(0.2)
    pytest.fail(f"the dask scheduler did not start within {START_TIMEOUT_S} s")


def _stop(processes) -> None:
    for process in processes:
        process.terminate()
    for process in processes:
        try:
            process.wait(timeout=STOP_TIMEOUT_S)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait()


def test_separate_scheduler_and_two_workers_match_one_process(targets_csv, one_process, tmp_path):
    scheduler_file = tmp_path / "scheduler.json"
    processes = [_start("distributed.cli.dask_scheduler", "--host", "127.0.0.1", "--port", "0", "--no-dashboard",
                        "--scheduler-file", str(scheduler_file), "--idle-timeout", "120s")]
    try:
        address = _scheduler_address(scheduler_file, processes[0])
        assert address.startswith("tcp://127.0.0.1:")
        for _ in range(2):
            processes.append(_start("distributed.cli.dask_worker", "--scheduler-file", str(scheduler_file),
                                    "--host", "127.0.0.1", "--nthreads", "1", "--no-dashboard",
                                    "--death-timeout", "60s"))
        got = _windows_csv(targets_csv, tmp_path / "windows.csv", "--scheduler", address)
    finally:
        _stop(processes)
    assert got == one_process


def test_scheduler_address_must_be_local_or_tcp():
    with pytest.raises(InputError, match="^scheduler: expected 'local' or tcp://"):
        with cluster.workers_for("udp://127.0.0.1:1"):
            pass


def test_unreachable_scheduler_is_one_error(targets_csv, tmp_path, monkeypatch):
    # Nothing listens on port 9 (discard) of the loopback: the client gives up quickly.
    monkeypatch.setattr(cluster, "CONNECT_TIMEOUT_S", 2)
    result = CliRunner().invoke(app, ["windows", str(targets_csv), "--sites", str(DEMO_DIR / "sites.toml"), *SPAN,
                                      "--scheduler", "tcp://127.0.0.1:9", "--csv", str(tmp_path / "w.csv")])
    assert result.exit_code == 2
    assert "cannot reach tcp://127.0.0.1:9" in result.output
    assert not (tmp_path / "w.csv").exists()
