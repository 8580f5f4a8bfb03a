"""Notes reach the user once each, whichever engine and however many processes plan the windows.

References: PyEphem (the Sun's centre never reaches -18 deg at 68 deg N in June: it raises
AlwaysUpError), and astropy's bundled Earth-orientation table (its last date) for where the
second note must start. The site is invented.
"""

import ephem
import pytest
from astropy.time import Time
from astropy.utils import iers
from typer.testing import CliRunner

from vigil import notes, sweep
from vigil.catalog import read_sites, read_targets
from vigil.cli import app
from vigil.timescales import beyond_earth_orientation_note

from conftest import DEMO_DIR
from test_cli import _restore_vigil_logger  # noqa: F401  (autouse: the CLI's logger is put back)

START, END = "2028-05-20", "2028-07-15"
NO_DARKNESS = "no astronomical darkness"
EARTH_ORIENTATION = "Earth-orientation predictions"


@pytest.fixture
def arctic_site(tmp_path):
    path = tmp_path / "sites.toml"
    path.write_text("[sites.tundra_obs]\nlatitude_deg = 68.0\nlongitude_deg = 20.0\nelevation_m = 300.0\n",
                    encoding="utf-8")
    return path


def test_the_span_has_no_darkness_and_lies_beyond_the_earth_orientation_table():
    # The premises of the tests below, from outside vigil.
    observer = ephem.Observer()
    observer.lat, observer.lon, observer.pressure, observer.horizon = "68", "20", 0, "-18"
    observer.date = START.replace("-", "/")
    with pytest.raises(ephem.AlwaysUpError):
        observer.next_setting(ephem.Sun(), use_center=True)
    table_end = Time(iers.earth_orientation_table.get()["MJD"][-1].value, format="mjd")
    assert table_end < Time(START)


@pytest.mark.parametrize("options", [["--jobs", "1"], ["--jobs", "2"], ["--exact"]], ids=" ".join)
def test_each_note_appears_once_on_stderr(tmp_path, arctic_site, options):
    result = CliRunner().invoke(app, ["windows", str(DEMO_DIR / "targets.csv"), "--sites", str(arctic_site),
                                      "--start", START, "--end", END, *options])
    assert result.exit_code == 0, result.output
    assert result.stderr.count(NO_DARKNESS) == 1, result.stderr
    assert result.stderr.count(EARTH_ORIENTATION) == 1, result.stderr
    assert "not extrapolated" in result.stderr


def test_the_note_says_what_astropy_does_beyond_its_table():
    # astropy itself (offline, as vigil configures it): beyond the last tabulated date UT1-UTC
    # stays at the last tabulated value, a year and thirty years on.
    table = iers.earth_orientation_table.get()
    last_s = float(table["UT1_UTC"][-1].to_value("s"))
    end = Time(table["MJD"][-1].value, format="mjd", scale="utc")
    for later in (end + 365.0, end + 30 * 365.25):
        assert (later.ut1.jd1 - later.jd1 + later.ut1.jd2 - later.jd2) * 86400.0 == pytest.approx(last_s, abs=1e-6)
    (note,) = beyond_earth_orientation_note((end + 365.0).jd)
    assert f"{last_s:+.3f} s" in note.text() and end.iso[:10] in note.text()


def test_chunks_in_processes_merge_their_notes_into_one_each(arctic_site):
    targets = read_targets(DEMO_DIR / "targets.csv")
    sites = read_sites(arctic_site)
    table = sweep.plan_windows_chunked(targets, sites, {}, Time(START), Time(END), jobs=2, chunk_targets=1)
    found = notes.of(table)
    assert sorted(note.key[0] for note in found) == ["earth orientation", "no darkness"]
    darkness = next(note for note in found if note.key[0] == "no darkness")
    # The merged note spans every chunk's windows: from the first window to the last.
    assert darkness.start_jd_utc < Time(START).jd + 1 and darkness.end_jd_utc > Time(END).jd - 1


def test_a_library_warning_in_worker_processes_is_one_note(arctic_site, monkeypatch, capfd):
    # A library warning raised while planning comes back with the chunk's notes (worker processes
    # have no vigil console), one line naming its kind, said once however many chunks met it.
    # Forked workers inherit the patched stage; the warning text is the kind numpy gives.
    import multiprocessing
    import warnings
    from concurrent.futures import ProcessPoolExecutor

    from vigil import windows

    planned = windows.site_windows

    def warning_stage(*args, **kwargs):
        warnings.warn("invalid value encountered in arccos", RuntimeWarning)
        return planned(*args, **kwargs)

    monkeypatch.setattr(windows, "site_windows", warning_stage)
    targets = read_targets(DEMO_DIR / "targets.csv")
    with ProcessPoolExecutor(2, mp_context=multiprocessing.get_context("fork")) as pool:
        table = sweep.plan_windows_chunked(targets, read_sites(arctic_site), {}, Time(START), Time(END), jobs=2,
                                           chunk_targets=1, executor=pool)
    texts = [note.text() for note in notes.of(table) if note.key[0] == "library warning"]
    assert texts == ["invalid value encountered in arccos (RuntimeWarning, from tests)"]
    assert "RuntimeWarning" not in capfd.readouterr().err
