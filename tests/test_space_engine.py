"""Sites of kind space: the Sun-angle engine, interruptions and blackouts, the sites TOML.

References: astropy (get_sun, get_body with the builtin ephemeris, the GCRS frame,
Time.light_travel_time) for positions and times; the geometry of the ecliptic (a pole sits
90 deg from the Sun all year; on the ecliptic the elongation runs 0-180-0 deg at the Sun's
mean rate, 360 deg / tropical year = 0.9856 deg/day, authorities.sun_moon); the definition of the
interruptions and blackouts (sites.SpaceSettings), checked by brute-force sampling.
All sites and targets are invented.
"""

import logging

import astropy.units as u
import numpy as np
import pandas as pd
import pytest
from astropy.coordinates import GCRS, BarycentricMeanEcliptic, EarthLocation, SkyCoord, get_body, get_sun, solar_system_ephemeris
from astropy.time import Time

from authorities import sun_moon
from vigil import windows
from vigil.catalog import read_sites
from vigil.engines import space as space_engine
from vigil.sites import Site, SpaceSettings
from vigil.errors import InputError
from vigil.export.space_plots import annual_visibility_plot

from conftest import DEMO_DIR

SUN_ANGLE_TOLERANCE_DEG = 0.05  # the brief's bound; places_of_date's Sun is good to about 0.01 deg
MOON_TOLERANCE_DEG = 0.05  # places_of_date's Moon: main terms of Meeus ch. 47, about 0.02 deg
MID_TOLERANCE_S = 0.1
SUN_MEAN_RATE_DEG_PER_D = 360.0 / sun_moon.TROPICAL_YEAR_D
# The Earth's orbital eccentricity e = 0.0167 (authorities.sun_moon) makes the Sun's apparent rate vary
# by about +-2e = +-3.3 %: +-1.7 days on a 50.7-day window.
WINDOW_LENGTH_TOLERANCE_D = 2.0
YEAR = 2031
WANDERER = Site.in_space("wanderer", SpaceSettings(sun_angle_min_deg=85.0, sun_angle_max_deg=135.0))


def _ecliptic_icrs(lon_deg, lat_deg):
    return SkyCoord(lon=lon_deg * u.deg, lat=lat_deg * u.deg, frame=BarycentricMeanEcliptic(equinox=Time("J2031"))).icrs


def _year_bounds_jd(year=YEAR):
    return Time([f"{year}-01-01", f"{year + 1}-01-01"], scale="utc").jd


def _write(tmp_path, text, name="sites.toml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_sun_angle_matches_astropy_in_gcrs():
    # Reference: astropy get_sun (apparent geocentric Sun, GCRS) and the targets transformed to
    # the same GCRS frame (aberration applied to both), separation computed there.
    rng = np.random.default_rng(20310101)
    n = 300
    ra = rng.uniform(0.0, 360.0, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n)))
    jd = Time("2025-01-01", scale="utc").jd + rng.uniform(0.0, 25 * 365.25, n)
    times = Time(jd, format="jd", scale="utc")
    targets = SkyCoord(ra=ra * u.deg, dec=dec * u.deg, frame="icrs").transform_to(GCRS(obstime=times))
    reference = get_sun(times).separation(targets).deg
    worst = np.abs(space_engine.sun_angle_deg(ra, dec, jd) - reference).max()
    assert worst < SUN_ANGLE_TOLERANCE_DEG, worst


def test_geocentric_mid_time_inverts_astropy_light_travel_time():
    # Reference: astropy Time.light_travel_time at the Earth's centre; BJD_TDB = t_TDB + delay.
    geocentre = EarthLocation.from_geocentric(0.0, 0.0, 0.0, unit=u.m)
    seen = Time(f"{YEAR}-01-01", scale="utc") + np.linspace(0.0, 365.0, 60) * u.day
    rows = []
    for ra, dec in [(10.0, 5.0), (200.0, -40.0), (271.0, 66.0)]:
        target = SkyCoord(ra=ra * u.deg, dec=dec * u.deg)
        bjd = seen.tdb + seen.light_travel_time(target, kind="barycentric", location=geocentre)
        rows.append(pd.DataFrame({"mid_bjd_tdb": bjd.jd, "ra_deg": ra, "dec_deg": dec, "seen_jd": seen.utc.jd}))
    transits = pd.concat(rows, ignore_index=True)
    mid = space_engine.site_mid_jd_utc(transits, WANDERER)
    worst_s = np.abs(mid - transits["seen_jd"].to_numpy()).max() * 86400.0
    assert worst_s < MID_TOLERANCE_S, worst_s


def test_ecliptic_pole_target_is_full_all_year_and_never_in_a_band_beyond_90(make_targets):
    # Geometry: the ecliptic pole is 90 deg from the Sun all year (the Sun stays on the
    # ecliptic to about 1"), so it is inside an 85-135 band and outside a 95-135 band.
    pole = _ecliptic_icrs(0.0, 90.0)
    targets = make_targets({"name": "Pole-1 b", "ra_deg": pole.ra.deg, "dec_deg": pole.dec.deg,
                            "t0_bjd_tdb": 2462867.3, "period_d": 1.37, "duration_h": 2.5})
    start, end = Time(f"{YEAR}-01-01", scale="utc"), Time(f"{YEAR + 1}-01-01", scale="utc")
    beyond = Site.in_space("beyond", SpaceSettings(sun_angle_min_deg=95.0, sun_angle_max_deg=135.0))
    table = windows.plan_windows(targets, {"wanderer": WANDERER, "beyond": beyond}, {}, start, end,
                                 include_unobservable=True)
    inside = table[table["site"] == "wanderer"]
    assert len(inside) > 260  # 365 / 1.37 transits
    assert (inside["coverage"] == "full").all()
    assert (inside["observable_fraction"] == 1.0).all()
    assert (table.loc[table["site"] == "beyond", "coverage"] == "none").all()


@pytest.mark.parametrize("lon_deg", [75.0, 105.0, 120.0, 285.0, 300.0])
def test_ecliptic_target_has_two_windows_of_fifty_days(lon_deg):
    # Geometry: on the ecliptic the Sun-target angle is the elongation, which runs from 0 to
    # 180 deg and back at the Sun's mean rate; the 85-135 band covers 50 deg of it on each
    # side: two windows of 50 / 0.9856 = 50.7 days. These longitudes keep both inside the year.
    target = _ecliptic_icrs(lon_deg, 0.0)
    found = space_engine.annual_windows(target.ra.deg, target.dec.deg, WANDERER, YEAR)
    lo, hi = _year_bounds_jd()
    assert len(found) == 2
    expected_d = (WANDERER.space.sun_angle_max_deg - WANDERER.space.sun_angle_min_deg) / SUN_MEAN_RATE_DEG_PER_D
    for start, end in found:
        assert lo < start.jd < end.jd < hi
        assert abs((end.jd - start.jd) - expected_d) < WINDOW_LENGTH_TOLERANCE_D, (end.jd - start.jd, expected_d)
    # Geometry: between the windows lie 90 deg of elongation through opposition (91 d) or
    # 170 deg through conjunction (172 d), each within the +-3.3 % of the Sun's changing rate.
    gap_d = found[1][0].jd - found[0][1].jd
    expected_gaps_d = np.array([90.0, 170.0]) / SUN_MEAN_RATE_DEG_PER_D
    assert (np.abs(gap_d - expected_gaps_d) < 0.04 * expected_gaps_d).any(), gap_d


def test_annual_windows_edges_have_the_band_limits_by_astropy():
    # Reference: astropy get_sun and GCRS as above: at each interpolated edge the Sun angle
    # is one of the band limits.
    target = _ecliptic_icrs(105.0, 20.0)
    found = space_engine.annual_windows(target.ra.deg, target.dec.deg, WANDERER, YEAR)
    edges = Time([t.jd for pair in found for t in pair], format="jd", scale="utc")
    coords = SkyCoord(ra=target.ra, dec=target.dec, frame="icrs").transform_to(GCRS(obstime=edges))
    angle = get_sun(edges).separation(coords).deg
    limits = np.array([WANDERER.space.sun_angle_min_deg, WANDERER.space.sun_angle_max_deg])
    assert np.abs(angle[:, None] - limits).min(axis=1).max() < SUN_ANGLE_TOLERANCE_DEG


def _pole_windows(make_targets, site, period_d=0.731, start=f"{YEAR}-03-01", days=30.0):
    """All windows of an ecliptic-pole target (always in the 85-135 band) at `site`."""
    pole = _ecliptic_icrs(0.0, 90.0)
    targets = make_targets({"name": "Pole-2 b", "ra_deg": pole.ra.deg, "dec_deg": pole.dec.deg,
                            "t0_bjd_tdb": 2462927.61, "period_d": period_d, "duration_h": 3.1})
    lo = Time(start, scale="utc")
    return windows.plan_windows(targets, {site.name: site}, {}, lo, lo + days * u.day, include_unobservable=True)


def _allowed(jd, space: SpaceSettings):
    """Brute force from the definition: not in an interruption, not in a blackout."""
    ok = np.ones(jd.shape, dtype=bool)
    if space.interruption_period_h is not None:
        phase_h = ((jd - space.interruption_start_jd_utc) * 24.0) % space.interruption_period_h
        ok &= phase_h >= space.interruption_h
    for lo, hi in space.blackouts_jd_utc:
        ok &= (jd < lo) | (jd >= hi)
    return ok


def test_blackouts_remove_observable_time(make_targets):
    # Reference: the blackout definition; the pole target is always in the band (geometry).
    plain = _pole_windows(make_targets, WANDERER)
    first, second = plain.iloc[3], plain.iloc[7]
    whole = (first["window_start_jd_utc"] - 0.01, first["window_end_jd_utc"] + 0.01)
    first_half = (second["window_start_jd_utc"] - 0.2, second["mid_jd_utc"])
    site = Site.in_space("shaded", SpaceSettings(blackouts_jd_utc=tuple(sorted([whole, first_half]))))
    shaded = _pole_windows(make_targets, site)
    assert shaded.iloc[3]["coverage"] == "none"
    assert shaded.iloc[3]["observable_fraction"] == 0.0
    assert shaded.iloc[7]["coverage"] == "partial"
    half = (second["egress_jd_utc"] - second["mid_jd_utc"]) / (second["egress_jd_utc"] - second["ingress_jd_utc"])
    assert shaded.iloc[7]["observable_fraction"] == pytest.approx(half, abs=1e-9)
    assert shaded.iloc[7]["observable_start_jd_utc"] == pytest.approx(second["mid_jd_utc"], abs=1e-9)
    untouched = np.ones(len(plain), dtype=bool)
    untouched[[3, 7]] = False
    assert (shaded.loc[untouched, "coverage"] == "full").all()


def test_interruptions_and_blackouts_match_brute_force_sampling(make_targets):
    # Reference: the definitions of interruptions and blackouts, sampled every 2 s across
    # each transit; the sampled fraction is within one sample of the interval arithmetic.
    blackout = Time(["2031-03-09T04:00", "2031-03-10T19:30"], scale="utc").jd
    space = SpaceSettings(interruption_period_h=5.0, interruption_h=1.5,
                          interruption_start_jd_utc=Time("2031-02-27T01:20", scale="utc").jd,
                          blackouts_jd_utc=(tuple(blackout),))
    table = _pole_windows(make_targets, Site.in_space("blinking", space))
    step_d = 2.0 / 86400.0
    sampled = []
    for row in table.itertuples():
        jd = np.arange(row.ingress_jd_utc + step_d / 2, row.egress_jd_utc, step_d)
        sampled.append(_allowed(jd, space).mean())
    sampled = np.array(sampled)
    duration_d = (table["egress_jd_utc"] - table["ingress_jd_utc"]).to_numpy()
    assert np.abs(table["observable_fraction"].to_numpy() - sampled).max() <= 1.5 * step_d / duration_d.min()
    assert set(table["coverage"]) >= {"none", "partial"}  # the blackout and the interruptions both bite
    # Definition: 1.5 h lost in every 5 h; transits fall at all phases, so about 70 % on average
    outside = np.array([not (blackout[0] < r.egress_jd_utc and r.ingress_jd_utc < blackout[1]) for r in table.itertuples()])
    assert table.loc[outside, "observable_fraction"].mean() == pytest.approx(1.0 - 1.5 / 5.0, abs=0.06)


def test_conditions_at_mid_have_no_horizon_and_a_geocentric_moon():
    # Reference: astropy get_body("moon") (builtin ephemeris, geocentric GCRS) separation.
    rng = np.random.default_rng(7)
    n = 50
    frame = pd.DataFrame({"ra_deg": rng.uniform(0.0, 360.0, n), "dec_deg": rng.uniform(-80.0, 80.0, n),
                          "mid_jd_utc": Time(f"{YEAR}-01-01", scale="utc").jd + rng.uniform(0.0, 365.0, n)})
    conditions = space_engine.conditions_at_mid(frame, WANDERER)
    times = Time(frame["mid_jd_utc"].to_numpy(), format="jd", scale="utc")
    with solar_system_ephemeris.set("builtin"):
        moon = get_body("moon", times)
    targets = SkyCoord(ra=frame["ra_deg"].to_numpy() * u.deg, dec=frame["dec_deg"].to_numpy() * u.deg)
    reference = moon.separation(targets.transform_to(moon.frame)).deg
    assert np.abs(conditions["moon_sep_deg"].to_numpy() - reference).max() < MOON_TOLERANCE_DEG
    for column in ("alt_mid_deg", "airmass_mid", "sun_alt_mid_deg"):
        assert conditions[column].isna().all()
    far = Site.in_space("far", SpaceSettings(distance_from_earth_km=1.5e6))
    assert space_engine.conditions_at_mid(frame, far)["moon_sep_deg"].isna().all()


def test_ground_sites_are_unchanged_beside_a_space_site(make_targets, demo_sites):
    # Reference: the ground-only run of the same engine (a space site must not change it).
    targets = make_targets({"name": "Mix-1 b", "ra_deg": 120.0, "dec_deg": -20.0, "t0_bjd_tdb": 2462867.9,
                            "period_d": 1.9})
    start, end = Time(f"{YEAR}-01-01", scale="utc"), Time(f"{YEAR}-03-01", scale="utc")
    ground = {"mirador_sur": demo_sites["mirador_sur"]}
    alone = windows.plan_windows(targets, ground, {}, start, end, include_unobservable=True)
    mixed = windows.plan_windows(targets, {**ground, "wanderer": WANDERER}, {}, start, end, include_unobservable=True)
    pd.testing.assert_frame_equal(mixed[mixed["site"] == "mirador_sur"].reset_index(drop=True), alone)
    assert (mixed["site"] == "wanderer").sum() > 0
    assert demo_sites["mirador_sur"].kind == "ground"


SPACE_TOML = """
[sites.drifter]
kind = "space"
sun_angle_min_deg = 80
sun_angle_max_deg = 140.5
interruption_period_h = 24
interruption_h = 2.5
interruption_start_utc = "2031-01-01T03:00"
blackouts = [["2031-06-01T00:00", "2031-06-03T12:00"], [2031-02-01T00:00:00Z, 2031-02-02T00:00:00+02:00]]
distance_from_earth_km = 1.5e6
baseline_h = 2
min_altitude_deg = 40

[sites.plainview]
latitude_deg = 12.5
longitude_deg = -60.25
elevation_m = 300
"""


def test_space_site_parses_from_toml(tmp_path, caplog):
    # Reference: astropy Time for the UTC instants; the light time d / c (c = 299792.458 km/s,
    # SI definition) for the distance note.
    with caplog.at_level(logging.INFO, logger="vigil"):
        sites = read_sites(_write(tmp_path, SPACE_TOML))
    drifter, plainview = sites["drifter"], sites["plainview"]
    assert (drifter.kind, plainview.kind) == ("space", "ground")
    space = drifter.space
    assert (space.sun_angle_min_deg, space.sun_angle_max_deg) == (80.0, 140.5)
    assert (space.interruption_period_h, space.interruption_h) == (24.0, 2.5)
    assert space.interruption_start_jd_utc == pytest.approx(Time("2031-01-01T03:00", scale="utc").jd, abs=1e-9)
    expected = sorted([tuple(Time(["2031-06-01T00:00", "2031-06-03T12:00"], scale="utc").jd),
                       tuple(Time(["2031-02-01T00:00", "2031-02-01T22:00"], scale="utc").jd)])
    assert np.allclose(np.array(space.blackouts_jd_utc), np.array(expected), atol=1e-9, rtol=0.0)
    assert space.distance_from_earth_km == 1.5e6
    assert drifter.defaults == {"baseline_h": 2, "min_altitude_deg": 40}
    assert np.isnan(drifter.latitude_deg) and plainview.latitude_deg == 12.5
    messages = " ".join(r.getMessage() for r in caplog.records)
    assert f"{1.5e6 / 299792.458:.2f} s" in messages  # 5.00 s
    assert "min_altitude_deg ignored" in messages


def test_space_defaults_and_demo_sites_unchanged(tmp_path):
    # Reference: the defaults stated in catalog.py (85-135 deg, no interruptions, no blackouts).
    site = read_sites(_write(tmp_path, '[sites.plain]\nkind = "space"\n'))["plain"]
    assert site.space == SpaceSettings()
    assert (site.space.sun_angle_min_deg, site.space.sun_angle_max_deg) == (85.0, 135.0)
    assert all(s.kind == "ground" for s in read_sites(DEMO_DIR / "sites.toml").values())


@pytest.mark.parametrize("body, field", [
    ('kind = "space"\nlatitude_deg = 10.0', "latitude_deg"),
    ('kind = "space"\nelevation_m = 10.0', "elevation_m"),
    ('kind = "orbit"', "kind"),
    ('kind = "space"\nsun_angle_min_deg = 120\nsun_angle_max_deg = 100', "sun_angle_max_deg"),
    ('kind = "space"\nsun_angle_max_deg = 190', "sun_angle_max_deg"),
    ('kind = "space"\ninterruption_h = 1', "interruption_period_h"),
    ('kind = "space"\ninterruption_period_h = 2\ninterruption_h = 2', "interruption_h"),
    ('kind = "space"\nduty_cycle = 0.8', "duty_cycle"),
    ('kind = "space"\nblackouts = ["2031-01-01"]', "blackouts"),
    ('kind = "space"\nblackouts = [["2031-01-02", "2031-01-01"]]', "blackouts (pair 1)"),
    ('kind = "space"\nblackouts = [["2031-01-01", "soon"]]', "blackouts (pair 1) end"),
    ('kind = "space"\ndistance_from_earth_km = -5', "distance_from_earth_km"),
])
def test_bad_space_sites_are_one_line_errors_naming_the_field(tmp_path, body, field):
    # Reference: RULES.md (bad input raises InputError naming the field in one line).
    with pytest.raises(InputError) as caught:
        read_sites(_write(tmp_path, f"[sites.odd]\n{body}\n"))
    message = str(caught.value)
    assert "\n" not in message
    assert f"[sites.odd] {field}" in message


def test_space_keys_on_a_ground_site_warn(tmp_path, caplog):
    # Reference: catalog.py's policy (odd but valid input is accepted with a warning).
    with caplog.at_level(logging.WARNING, logger="vigil"):
        site = read_sites(_write(tmp_path, "[sites.hill]\nlatitude_deg = 1\nlongitude_deg = 2\nelevation_m = 3\n"
                                           "sun_angle_min_deg = 80\n"))["hill"]
    assert site.kind == "ground"
    assert any("sun_angle_min_deg" in r.getMessage() and "space" in r.getMessage() for r in caplog.records)


def test_annual_visibility_plot_writes_a_png(tmp_path):
    # Reference: the PNG signature (ISO/IEC 15948) and matplotlib's own reader.
    from matplotlib.image import imread

    blackout = tuple(Time(["2031-04-01", "2031-04-20"], scale="utc").jd)
    site = Site.in_space("wanderer", SpaceSettings(blackouts_jd_utc=(blackout,)))
    targets = pd.DataFrame({"name": ["Ecl-1 b", "Pole-3 b"], "ra_deg": [_ecliptic_icrs(100.0, 0.0).ra.deg, 270.0],
                            "dec_deg": [_ecliptic_icrs(100.0, 0.0).dec.deg, 66.56]})
    path = tmp_path / "out" / "annual.png"
    annual_visibility_plot(targets, site, range(YEAR, YEAR + 2), path)
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert imread(path).shape[0] > 100
    with pytest.raises(InputError):
        annual_visibility_plot(targets, Site("hill", 1.0, 2.0, 3.0), [YEAR], tmp_path / "ground.png")


def test_space_seasons_command_writes_ranges_and_chart(tmp_path):
    # The command lists what annual_windows computes (checked above against geometry and astropy).
    from typer.testing import CliRunner

    from vigil.cli import app

    sites = tmp_path / "space.toml"
    sites.write_text('[sites.lagrange_eye]\nkind = "space"\nsun_angle_min_deg = 85\nsun_angle_max_deg = 135\n')
    targets = tmp_path / "t.csv"
    targets.write_text("name,ra_deg,dec_deg,t0_bjd_tdb,t0_err_d,period_d,period_err_d,duration_h\n"
                       "Pole-1 b,270.0,66.56,2461000.5,0.001,3.3,0.00001,2.0\n")
    result = CliRunner().invoke(app, ["space-seasons", str(targets), "--sites", str(sites), "--site", "lagrange_eye",
                                      "--year", "2030", "--csv", str(tmp_path / "s.csv"), "--plot", str(tmp_path / "s.png")])
    assert result.exit_code == 0, result.output
    rows = (tmp_path / "s.csv").read_text().splitlines()
    # near the north ecliptic pole (RA 18h, Dec +66.56) the Sun stays ~90 deg away all year
    assert len(rows) == 2 and rows[1].endswith(",365.0") and (tmp_path / "s.png").stat().st_size > 0
