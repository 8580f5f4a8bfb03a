"""Same inputs, same bytes: `vigil windows` and `vigil campaign`, each run twice into two
different folders, write byte-identical CSV, ICS, PNG and HTML files.

The two runs are separate processes with different string-hash seeds (PYTHONHASHSEED) and
working folders, so nothing may hang on set or dict order of one interpreter.

Reproducible-builds convention (reproducible-builds.org, SOURCE_DATE_EPOCH specification):
SOURCE_DATE_EPOCH is the build time as whole seconds since 1970-01-01T00:00:00Z, used instead
of the current time in anything written.
"""

import os
import subprocess
import sys
from pathlib import Path

import pytest

from conftest import DEMO_DIR

# 2027-01-01T00:00:00Z by hand: 57 years from 1970 with 14 leap days (1972..2024) = 20819 days.
EPOCH_2027_S = 20_819 * 86_400
CAMPAIGN = """\
[campaign]
start = "2027-01-01"
horizon_years = 1
targets = "{targets}"
sites_file = "{sites}"
sites = ["mirador_sur", "cumbre_alta"]
trials = 12
seed = 5

[allocation]
per_target_per_semester = 6
overhead_h = 0.5

[instrument]
aperture_m = 4.0
throughput = 0.25
wavelength_min_um = 0.6
wavelength_max_um = 1.0
noise_floor_ppm = 20

[goal]
resolution = 50
snr = 3

[weather.mirador_sur]
clear_fraction = [0.8, 0.8, 0.75, 0.7, 0.6, 0.55, 0.55, 0.6, 0.7, 0.75, 0.8, 0.8]

[weather.cumbre_alta]
clear_fraction = [0.6, 0.6, 0.7, 0.75, 0.85, 0.9, 0.9, 0.9, 0.8, 0.7, 0.6, 0.6]
"""


def _run(*args, hash_seed: int, cwd: Path):
    """`vigil ARGS` in a fresh interpreter (the CLI entry point), with SOURCE_DATE_EPOCH set."""
    env = {**os.environ, "SOURCE_DATE_EPOCH": str(EPOCH_2027_S), "PYTHONHASHSEED": str(hash_seed)}
    cwd.mkdir(parents=True, exist_ok=True)
    done = subprocess.run([sys.executable, "-c", "from vigil.cli import app; app()", *map(str, args)], cwd=cwd,
                          env=env, capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr


def _files(folder: Path) -> dict:
    return {p.relative_to(folder): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def test_windows_outputs_are_byte_identical(tmp_path):
    runs = []
    for seed, name in enumerate(("first", "second"), start=1):
        out = tmp_path / name
        _run("windows", DEMO_DIR / "targets.csv", "--sites", DEMO_DIR / "sites.toml", "--start", "2027-01-01",
             "--end", "2027-02-01", "--csv", "windows.csv", "--ics", "windows.ics", "--html", "plan.html",
             hash_seed=seed, cwd=out)
        runs.append(_files(out))
    assert set(runs[0]) == {Path("windows.csv"), Path("windows.ics"), Path("plan.html")}
    assert runs[0][Path("windows.csv")].count(b"\n") > 10  # a real table, not two empty files
    assert runs[0] == runs[1]
    # The calendar's DTSTAMP is SOURCE_DATE_EPOCH (RFC 5545 3.8.7.2: UTC date-time form).
    stamps = {line for line in runs[0][Path("windows.ics")].splitlines() if line.startswith(b"DTSTAMP")}
    assert stamps == {b"DTSTAMP:20270101T000000Z"}


@pytest.fixture
def small_campaign(tmp_path) -> Path:
    path = tmp_path / "campaign.toml"
    path.write_text(CAMPAIGN.format(targets=DEMO_DIR / "targets.csv", sites=DEMO_DIR / "sites.toml"), encoding="utf-8")
    return path


def test_campaign_outputs_are_byte_identical(tmp_path, small_campaign):
    runs = []
    for seed, name in enumerate(("first", "second"), start=1):
        _run("campaign", small_campaign, "--out", "out", "--html", "out/plan.html", hash_seed=seed, cwd=tmp_path / name)
        runs.append(_files(tmp_path / name / "out"))
    assert set(runs[0]) == {Path(n) for n in ("summary.csv", "scenarios.csv", "forecast.csv", "ledger.csv",
                                              "budget.csv", "resolution.png", "hours.png", "budget.png", "plan.html")}
    assert runs[0][Path("ledger.csv")].count(b"\n") > 10  # visits were simulated
    differing = sorted(str(name) for name in runs[0] if runs[0][name] != runs[1][name])
    assert not differing
