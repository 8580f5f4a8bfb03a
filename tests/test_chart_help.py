"""The chart commands' `--help`, byte for byte, against the text the CLI itself printed before
their shared options were folded into one declaration (cli_options.with_window_options).

The snapshots in tests/snapshots/ were written by `_help` below from the commands as they were
declared one option at a time (project convention, no source). A missing snapshot is written
and the test fails, so that a deliberate change of a help text is looked at and committed.
"""

from pathlib import Path

import pytest
from typer.testing import CliRunner

from vigil.cli import app

SNAPSHOTS = Path(__file__).resolve().parent / "snapshots"
WIDTH = {"COLUMNS": "100"}  # click wraps help text to the terminal's width


def _help(*command: str) -> str:
    result = CliRunner().invoke(app, [*command, "--help"], prog_name="vigil", env=WIDTH)
    assert result.exit_code == 0, result.output
    return result.output


@pytest.mark.parametrize("command", [("chart",), ("chart", "night"), ("chart", "timeline"), ("chart", "sigma")],
                         ids=" ".join)
def test_help_is_byte_identical_to_the_snapshot(command):
    path = SNAPSHOTS / f"help_{'_'.join(command)}.txt"
    text = _help(*command)
    if not path.exists():
        path.parent.mkdir(exist_ok=True)
        path.write_text(text, encoding="utf-8")
        pytest.fail(f"{path.name} written from the CLI; check it and commit it")
    assert text == path.read_text(encoding="utf-8")


def test_shared_window_options_reach_the_command_gathered_in_their_place():
    import typer

    from vigil.cli_options import WindowOptions, with_window_options

    seen = []
    scratch = typer.Typer(add_completion=False)

    @scratch.command()
    @with_window_options
    def draw(first: str = typer.Option("a", "--first"), window_options: WindowOptions = WindowOptions(),
             last: int = typer.Option(0, "--last")):
        seen.append((first, window_options, last))

    result = CliRunner().invoke(scratch, ["--min-altitude", "25", "--coverage", "full,ingress", "--last", "3"])
    assert result.exit_code == 0, result.output
    assert seen == [("a", WindowOptions(min_altitude=25.0, coverage="full,ingress"), 3)]
    assert seen[0][1].constraints["min_altitude"] == 25.0 and seen[0][1].constraints["sigma"] is None
    flags = [p.opts[0] for p in typer.main.get_command(scratch).params]
    assert flags == ["--first", "--min-altitude", "--twilight", "--baseline", "--sigma", "--moon-sep", "--coverage",
                     "--min-fraction", "--last"]
