"""Keywords in any case; names matched exactly, with the near misses offered."""

from typer.testing import CliRunner

from vigil.cli import app

from conftest import DEMO_DIR

DATES = ("--start", "2027-03-01", "--end", "2027-03-04")


def _windows(tmp_path, *options):
    out = tmp_path / "w.csv"
    result = CliRunner().invoke(app, ["windows", str(DEMO_DIR / "targets.csv"), "--sites", str(DEMO_DIR / "sites.toml"),
                                      *DATES, "--csv", str(out), "--force", *options])
    return result, out


def test_keywords_in_any_case_give_the_same_windows(tmp_path):
    lower, out = _windows(tmp_path, "--twilight", "astronomical", "--event", "occultation")
    assert lower.exit_code == 0, lower.output
    expected = out.read_bytes()
    mixed, out = _windows(tmp_path, "--twilight", "Astronomical", "--event", "Occultation")
    assert mixed.exit_code == 0, mixed.output
    assert out.read_bytes() == expected


def test_a_site_name_miss_offers_the_near_names(tmp_path):
    result, out = _windows(tmp_path, "--site", "Mirador_Sur")
    assert result.exit_code == 2 and not out.exists()
    assert "no site named 'Mirador_Sur'; did you mean 'mirador_sur'?" in result.output


def test_a_target_name_miss_offers_the_near_names(tmp_path):
    result = CliRunner().invoke(app, ["campaign", str(DEMO_DIR / "campaign.toml"), "--target", "tamsin-7 b",
                                      "--out", str(tmp_path / "c")])
    assert result.exit_code == 2
    assert "no target named 'tamsin-7 b'; did you mean 'Tamsin-7 b'?" in result.output
