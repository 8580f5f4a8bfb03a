"""Surprises a user meets in normal use: each either does what a user expects or says what it did.

The expected behaviour is this project's convention (stated in README.md); the numbers the tests
rely on are arithmetic on the invented inputs: the timing sigma at epoch n is n * period_err_d
for t0_err_d = 0 (Ephemeris: sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2), and a target at the
north ecliptic pole (RA 18 h, Dec +66.56 deg, common practice) keeps the Sun 90 deg away all year.
"""

from pathlib import Path

from typer.testing import CliRunner

from vigil.cli import app

from test_cli import _restore_vigil_logger  # noqa: F401  (autouse: leave the 'vigil' logger as found)

GOOD = Path(__file__).resolve().parent / "corpus" / "good"
HEADER = "name,ra_deg,dec_deg,t0_bjd_tdb,t0_err_d,period_d,period_err_d,duration_h"
SPACE_SITES = '[sites.lagrange_eye]\nkind = "space"\nsun_angle_min_deg = 85\nsun_angle_max_deg = 135\n'


def _run(*args):
    return CliRunner().invoke(app, [str(a) for a in args], env={"COLUMNS": "250"})


def test_a_target_whose_phase_is_lost_is_named_once(tmp_path):
    targets = tmp_path / "t.csv"
    # sigma(n) = n * 0.012 d passes half the period (1.4 d) after 117 epochs (about 0.9 years).
    targets.write_text(f"{HEADER}\nFading-3 b,84.3,-30.1,2461020.4,0.0,2.8,0.012,2.1\n"
                       "Steady-1 b,120.5,-45.2,2460880.7741,0.0008,4.19203,0.0000052,2.75\n")
    result = _run("windows", targets, "--sites", GOOD / "sites.toml", "--start", "2027-01-01", "--end", "2028-01-01",
                  "--all")
    assert result.exit_code == 0, result.output
    lost = [line for line in result.output.splitlines() if "phase is lost" in line]
    assert len(lost) == 1 and "'Fading-3 b'" in lost[0] and "vigil refit" in lost[0], result.output
    assert "Steady-1 b" not in lost[0]


def test_constraint_options_at_a_space_site_are_said_to_be_ignored(tmp_path):
    sites, targets = tmp_path / "space.toml", tmp_path / "t.csv"
    sites.write_text(SPACE_SITES)
    targets.write_text(f"{HEADER}\nPole-1 b,270.0,66.56,2461000.5,0.001,3.3,0.00001,2.0\n")
    result = _run("windows", targets, "--sites", sites, "--start", "2030-01-01", "--end", "2030-01-20",
                  "--min-altitude", "40", "--moon-sep", "20")
    assert result.exit_code == 0, result.output
    for option in ("--min-altitude", "--moon-sep"):
        assert f"vigil: warning: {option} ignored at space site(s) lagrange_eye" in result.output
    assert "--twilight ignored" not in result.output


def test_space_seasons_run_on_across_new_year(tmp_path):
    sites, targets = tmp_path / "space.toml", tmp_path / "t.csv"
    sites.write_text(SPACE_SITES)
    targets.write_text(f"{HEADER}\nPole-1 b,270.0,66.56,2461000.5,0.001,3.3,0.00001,2.0\n")
    csv_path = tmp_path / "s.csv"
    result = _run("space-seasons", targets, "--sites", sites, "--site", "lagrange_eye", "--year", "2030",
                  "--years", "2", "--csv", csv_path)
    assert result.exit_code == 0, result.output
    rows = csv_path.read_text().splitlines()
    assert len(rows) == 2 and rows[1].endswith(",730.0"), rows
    assert "2030-01-01 to 2032-01-01 (730 d)" in result.output


def _campaign_with_journal(tmp_path: Path) -> Path:
    journal = tmp_path / "j.db"
    added = _run("journal", "add", journal, "--target", "Brisa-4 b", "--site", "alto_verde", "--epoch", 3,
                 "--start", "2025-12-19T09:00:00Z", "--end", "2025-12-19T13:00:00Z", "--outcome", "clear",
                 "--mid-bjd-tdb", "2461028.9518", "--mid-err-d", "0.0005", "--in-transit-h", "2.1",
                 "--baseline-h", "1.5")
    assert added.exit_code == 0, added.output
    campaign = tmp_path / "campaign.toml"
    text = (GOOD / "campaign.toml").read_text().replace('"targets.csv"', f'"{GOOD / "targets.csv"}"')
    campaign.write_text(text.replace('sites_file = "sites.toml"', f'sites_file = "{GOOD / "sites.toml"}"\n'
                                                                  f'journal = "{journal}"'))
    return campaign


def test_campaign_target_says_clashes_are_left_out_and_writes_nothing_unasked(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    campaign = _campaign_with_journal(tmp_path)
    before = sorted(p.name for p in tmp_path.iterdir())
    full = _run("campaign", campaign, "--out", tmp_path / "all")
    assert full.exit_code == 0, full.output
    summary = (tmp_path / "all" / "summary.csv").read_text().splitlines()
    row = next(line for line in summary if line.startswith("Orla-12 b,"))
    hours = float(row.split(",")[4])  # in_transit_hours_per_year, as in the full table
    one = _run("campaign", campaign, "--target", "Brisa-4 b")
    assert one.exit_code == 0, one.output
    assert one.output.startswith("Brisa-4 b: ")
    assert "computed for this target alone: clashes with the campaign's other targets are left out" in one.output
    assert "no files written" in one.output
    assert hours >= 0.0
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([*before, "all"])
    again = _run("campaign", campaign, "--target", "Brisa-4 b")  # a second question is not refused
    assert again.exit_code == 0, again.output


def test_campaign_target_passes_over_journal_timings_of_other_targets(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    campaign = _campaign_with_journal(tmp_path)  # the journal holds a timing of Brisa-4 b only
    one = _run("campaign", campaign, "--target", "Orla-12 b")
    assert one.exit_code == 0, one.output
    assert one.output.startswith("Orla-12 b: ")


def test_a_library_warning_reaches_the_user_as_one_vigil_line(tmp_path, monkeypatch):
    import warnings

    import numpy as np

    from vigil import cli

    shown = cli._print_summary

    def summary_with_a_warning(*args):
        np.log(np.zeros(1))  # numpy: "divide by zero encountered in log"
        warnings.warn("ERFA function \"epv00\" yielded 3 of \"warning: date outside\nthe range\"", UserWarning)
        shown(*args)

    monkeypatch.setattr(cli, "_print_summary", summary_with_a_warning)
    result = _run("windows", GOOD / "targets.csv", "--sites", GOOD / "sites.toml", "--start", "2027-03-01",
                  "--end", "2027-03-08")
    assert result.exit_code == 0, result.output
    assert "vigil: note: divide by zero encountered in log (RuntimeWarning" in result.output
    assert "vigil: note: ERFA function \"epv00\" yielded 3 of \"warning: date outside the range\"" in result.output
    assert "RuntimeWarning:" not in result.output and "warn(" not in result.output
