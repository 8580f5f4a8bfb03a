"""A campaign that names a per-epoch ephemeris table uses it exactly as `vigil windows --ephemeris-table`.

The reference is the table itself (invented timing variations of 5 min amplitude on an invented
planet of the corpus): the windows command must give its rows' mid-times unchanged, and the
campaign's visits must be those windows (one target, no caps, every coverage class counted).
"""

from pathlib import Path
import shutil

import numpy as np
import pandas as pd
from typer.testing import CliRunner

from vigil.cli import app

from test_cli import _restore_vigil_logger  # noqa: F401  (autouse: leave the 'vigil' logger as found)

GOOD = Path(__file__).resolve().parent / "corpus" / "good"
TARGET = "Brisa-4 b"
T0_BJD_TDB, PERIOD_D = 2461020.41230, 2.8463100  # its row in corpus/good/targets.csv
CAMPAIGN_END = "2027-07-02T15:00:00"  # 2027-01-01 + 0.5 Julian years (corpus/good/campaign.toml)


def _run(*args):
    return CliRunner().invoke(app, [str(a) for a in args])


def _setup(folder: Path, first_epoch=120, last_epoch=220, extra="") -> Path:
    """The good corpus files in `folder` with a table ttv.csv and a campaign naming it (paths relative)."""
    for name in ("targets.csv", "sites.toml"):
        shutil.copy(GOOD / name, folder / name)
    epochs = np.arange(first_epoch, last_epoch + 1)
    mids = T0_BJD_TDB + epochs * PERIOD_D + 5 / 1440 * np.sin(epochs / 7.0)
    pd.DataFrame({"target": TARGET, "epoch": epochs, "mid_bjd_tdb": np.round(mids, 6),
                  "mid_err_d": 4e-4}).to_csv(folder / "ttv.csv", index=False)
    text = (GOOD / "campaign.toml").read_text(encoding="utf-8").replace(
        "seed = 11", f'seed = 11\nephemeris_table = "ttv.csv"\ncoverage = ["full", "ingress", "egress", "partial"]\n'
                     f"{extra}")
    (folder / "campaign.toml").write_text(text, encoding="utf-8")
    return folder / "campaign.toml"


def test_campaign_visits_are_the_windows_of_the_same_table(tmp_path):
    campaign = _setup(tmp_path)
    done = _run("windows", tmp_path / "targets.csv", "--sites", tmp_path / "sites.toml", "--ephemeris-table",
                tmp_path / "ttv.csv", "--start", "2027-01-01", "--end", CAMPAIGN_END, "--csv", tmp_path / "w.csv")
    assert done.exit_code == 0, done.output
    windows = pd.read_csv(tmp_path / "w.csv")
    windows = windows[windows["target"] == TARGET]
    table = pd.read_csv(tmp_path / "ttv.csv").set_index("epoch")
    # The windows' mid-times are the table's rows (to the CSV's 1e-5 d), not the linear ephemeris.
    np.testing.assert_allclose(windows["mid_bjd_tdb"], table.loc[windows["epoch"], "mid_bjd_tdb"], atol=6e-6)
    linear = T0_BJD_TDB + windows["epoch"] * PERIOD_D
    assert np.abs(windows["mid_bjd_tdb"] - linear).max() * 1440 > 2.0
    done = _run("campaign", campaign, "--target", TARGET, "--out", tmp_path / "out")
    assert done.exit_code == 0, done.output
    ledger = pd.read_csv(tmp_path / "out" / "ledger.csv")
    assert len(ledger) == len(windows) > 5
    assert ledger["epoch"].tolist() == windows["epoch"].tolist()
    assert ledger["coverage"].tolist() == windows["coverage"].tolist()
    assert ledger["mid_utc"].tolist() == windows["mid_utc"].tolist()
    assert ledger["start_utc"].tolist() == windows["observable_start_utc"].tolist()
    assert ledger["end_utc"].tolist() == windows["observable_end_utc"].tolist()


def _one_error_line(result) -> str:
    assert result.exit_code == 2, result.output
    lines = result.output.splitlines()
    assert len(lines) == 1 and lines[0].startswith("vigil: error: "), result.output
    return lines[0]


def test_campaign_refuses_dates_beyond_the_table_unless_extrapolation_is_asked(tmp_path):
    campaign = _setup(tmp_path, last_epoch=180)  # ends in mid-April 2027, before the campaign does
    line = _one_error_line(_run("campaign", campaign, "--target", TARGET, "--out", tmp_path / "out"))
    assert f"ephemeris table of '{TARGET}' covers" in line and "extrapolate_table = true" in line
    assert not (tmp_path / "out").exists()
    campaign = _setup(tmp_path, last_epoch=180, extra="extrapolate_table = true\n")
    done = _run("campaign", campaign, "--target", TARGET, "--out", tmp_path / "out")
    assert done.exit_code == 0, done.output
    assert pd.read_csv(tmp_path / "out" / "ledger.csv")["epoch"].max() > 180


def test_bad_extrapolate_value_and_table_of_an_unknown_target_are_one_line(tmp_path):
    campaign = _setup(tmp_path, extra='extrapolate_table = "yes"\n')
    line = _one_error_line(_run("campaign", campaign, "--out", tmp_path / "out"))
    assert str(campaign) in line and "[campaign] extrapolate_table: expected true or false" in line
    campaign = _setup(tmp_path)
    (tmp_path / "ttv.csv").write_text((tmp_path / "ttv.csv").read_text().replace(TARGET, "Brisa-5 b"))
    line = _one_error_line(_run("campaign", campaign, "--out", tmp_path / "out"))
    assert str(tmp_path / "ttv.csv") in line and "'Brisa-5 b' is not in the targets table" in line
