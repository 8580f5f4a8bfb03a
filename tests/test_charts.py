"""Night chart, timeline and sigma-growth charts against outside references: the plotted
altitude against astropy AltAz, the sky-shading edges against PyEphem, the meridian crossing
against astroplan, the colours against the Okabe & Ito palette, clashes by hand."""

import math

import astropy.units as u
import ephem
import numpy as np
import pandas as pd
import pytest
from astroplan import FixedTarget, Observer
from astropy.coordinates import AltAz, EarthLocation, SkyCoord
from astropy.time import Time
from typer.testing import CliRunner

from authorities.charts import (ALTITUDE_TOLERANCE_DEG, MERIDIAN_TOLERANCE_S, OKABE_ITO_RGB, SKY_LEVELS_DEG,
                                TWILIGHT_EDGE_TOLERANCE_S)
from conftest import DEMO_DIR
from vigil import windows
from vigil.catalog import read_targets
from vigil.cli import app
from vigil.export import palette
from vigil.export.night_chart import night_chart, night_curves
from vigil.export.sigma_chart import stale_sigma_min
from vigil.export.timeline_chart import clashes
from vigil.constraints import Constraints

EPHEM_EPOCH_JD = 2415020.0  # PyEphem dates count days from 1899-12-31 12:00 (Dublin JD)


@pytest.fixture(scope="module")
def charted(demo_sites):
    """Three observable demo windows at three sites (different latitudes and zones)."""
    targets = read_targets(DEMO_DIR / "targets.csv")
    table = windows.plan_windows(targets, demo_sites, {}, Time("2027-03-01"), Time("2027-03-20"))
    picked = table.groupby("site").head(1).reset_index(drop=True)
    assert len(picked) == 3
    return picked


def test_plotted_altitude_matches_astropy_altaz_at_ingress_mid_egress(charted, demo_sites):
    for window in charted.itertuples(index=False):
        site = demo_sites[window.site]
        curves = night_curves(window, site)
        location = EarthLocation.from_geodetic(site.longitude_deg * u.deg, site.latitude_deg * u.deg,
                                               site.elevation_m * u.m)
        when = Time([window.ingress_jd_utc, window.mid_jd_utc, window.egress_jd_utc], format="jd", scale="utc")
        frame = AltAz(obstime=when, location=location, pressure=site.air_pressure_hpa * u.hPa,
                      temperature=site.temperature_c * u.deg_C, relative_humidity=0, obswl=0.55 * u.micron)
        truth = SkyCoord(window.ra_deg * u.deg, window.dec_deg * u.deg).transform_to(frame).alt.deg
        assert np.max(np.abs(curves.altitude_at(when.jd) - truth)) < ALTITUDE_TOLERANCE_DEG


def _ephem_crossing(site, level_deg: float, setting: bool, near_jd: float) -> float:
    observer = ephem.Observer()
    observer.lat, observer.lon = str(site.latitude_deg), str(site.longitude_deg)
    observer.elevation, observer.pressure, observer.horizon = site.elevation_m, 0, str(level_deg)
    observer.date = ephem.Date(near_jd - 0.2 - EPHEM_EPOCH_JD)  # the crossing within 0.2 d of the edge
    search = observer.next_setting if setting else observer.next_rising
    return float(search(ephem.Sun(), use_center=True)) + EPHEM_EPOCH_JD


def test_sky_shading_edges_match_pyephem_within_a_minute(charted, demo_sites):
    checked = 0
    for window in charted.itertuples(index=False):
        site = demo_sites[window.site]
        curves = night_curves(window, site)
        lo, hi = curves.jd_utc[0], curves.jd_utc[-1]
        assert [level for level, _, _ in curves.sky] == ["civil", "nautical", "astronomical", "night"]
        for (level, starts, ends), level_deg in zip(curves.sky, SKY_LEVELS_DEG):
            for edge in starts[starts > lo]:  # Sun sinking through the level
                assert abs(_ephem_crossing(site, level_deg, True, edge) - edge) * 86400 < TWILIGHT_EDGE_TOLERANCE_S
                checked += 1
            for edge in ends[ends < hi]:  # Sun rising through it
                assert abs(_ephem_crossing(site, level_deg, False, edge) - edge) * 86400 < TWILIGHT_EDGE_TOLERANCE_S
                checked += 1
    assert checked >= 12


def test_meridian_crossing_matches_astroplan(charted, demo_sites):
    checked = 0
    for window in charted.itertuples(index=False):
        site = demo_sites[window.site]
        curves = night_curves(window, site)
        if not math.isfinite(curves.meridian_jd_utc):
            continue
        observer = Observer(latitude=site.latitude_deg * u.deg, longitude=site.longitude_deg * u.deg,
                            elevation=site.elevation_m * u.m)
        target = FixedTarget(SkyCoord(window.ra_deg * u.deg, window.dec_deg * u.deg))
        truth = observer.target_meridian_transit_time(Time(curves.meridian_jd_utc - 0.1, format="jd"), target,
                                                      which="next", n_grid_points=400)
        assert abs(truth.utc.jd - curves.meridian_jd_utc) * 86400 < MERIDIAN_TOLERANCE_S
        checked += 1
    assert checked >= 1


def test_chart_colours_are_the_okabe_ito_palette():
    def rgb(hex_colour: str) -> tuple:
        return tuple(int(hex_colour[i:i + 2], 16) for i in (1, 3, 5))

    assert {rgb(c) for c in palette.SERIES} == set(OKABE_ITO_RGB.values())
    # Coverage classes: distinct palette colours, 'none' a neutral grey.
    observable = [palette.COVERAGE[c] for c in ("full", "ingress", "egress", "partial")]
    assert len(set(observable)) == 4 and all(rgb(c) in OKABE_ITO_RGB.values() for c in observable)


def test_clashes_are_overlaps_of_different_targets_at_one_site():
    bars = pd.DataFrame({"target": ["a", "b", "a", "c", "d"], "site": ["s", "s", "s", "t", "s"],
                         "start_jd_utc": [0.0, 0.10, 0.15, 0.12, 5.0], "end_jd_utc": [0.2, 0.3, 0.18, 0.3, 5.1]})
    # a/b overlap at s (and the second a overlaps b); c is at another site; d is alone in time.
    assert clashes(bars).tolist() == [True, True, True, False, False]
    same_target = pd.DataFrame({"target": ["a", "a"], "site": ["s", "s"], "start_jd_utc": [0.0, 0.1],
                                "end_jd_utc": [0.2, 0.3]})
    assert clashes(same_target).tolist() == [False, False]


def test_stale_threshold_is_the_stale_flag_rule():
    # By hand: K = 2, duration 2 h -> quarter 0.5 h; baseline 1 h; the limit is 0.5 h / 2 = 15 min.
    assert stale_sigma_min(2.0, Constraints(sigma_k=2.0, baseline_h=1.0)) == pytest.approx(15.0)
    assert stale_sigma_min(8.0, Constraints(sigma_k=1.0, baseline_h=1.0)) == pytest.approx(60.0)
    assert stale_sigma_min(2.0, Constraints(sigma_k=0.0)) == math.inf


def _not_blank(path) -> bool:
    import matplotlib.image

    pixels = matplotlib.image.imread(path)[..., :3]
    return float(pixels.std()) > 0.05 and float((pixels.mean(axis=-1) < 0.9).mean()) > 0.01


def test_chart_commands_write_pictures(tmp_path):
    runner = CliRunner()
    common = [str(DEMO_DIR / "targets.csv"), "--sites", str(DEMO_DIR / "sites.toml")]
    night = runner.invoke(app, ["chart", "night", *common, "--target", "Morrow-5 b", "--start", "2027-03-01",
                                "--end", "2027-03-05", "--count", "2", "--out", str(tmp_path / "n.png")])
    assert night.exit_code == 0, night.output
    line = runner.invoke(app, ["chart", "timeline", *common, "--start", "2027-03-01", "--end", "2027-03-31",
                               "--out", str(tmp_path / "t.png")])
    assert line.exit_code == 0, line.output
    sigma = runner.invoke(app, ["chart", "sigma", str(DEMO_DIR / "targets.csv"), "--start", "2027-01-01",
                                "--out", str(tmp_path / "s.png")])
    assert sigma.exit_code == 0, sigma.output
    assert all(_not_blank(tmp_path / name) for name in ("n.png", "t.png", "s.png"))
    missing = runner.invoke(app, ["chart", "night", *common, "--target", "Nobody b", "--start", "2027-03-01",
                                  "--out", str(tmp_path / "x.png")])
    assert missing.exit_code == 2 and "Nobody b" in missing.output and not (tmp_path / "x.png").exists()


def test_night_chart_refuses_an_empty_table(demo_sites):
    from vigil.errors import InputError

    with pytest.raises(InputError, match="no windows"):
        night_chart(pd.DataFrame(), demo_sites, {})
