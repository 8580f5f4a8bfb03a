"""Real ground facilities: horizon mask, mount limits, Moon rules by phase, high-latitude summer.

Each case is built with astropy (the reference) and run through both engines.
"""

import ephem
import numpy as np
import pandas as pd
import pytest

import vigil  # noqa: F401  (configures astropy offline before astropy is used)
import astropy.units as u
from astropy.coordinates import AltAz, HADec, SkyCoord
from astropy.time import Time

from vigil import notes
from vigil.catalog import read_sites
from vigil.facility import Facility
from vigil.sites import Site
from vigil.timescales import earth_location
from vigil.windows import plan_windows

SITE = Site("loma_norte", latitude_deg=-30.0, longitude_deg=-70.0, elevation_m=2000.0)
MIDNIGHT = Time("2027-06-15T04:40:00", scale="utc")  # local midnight in austral winter: dark for hours
ENGINES = ("fast", "reference")


def _target_at(frame_coord, duration_h=0.3) -> pd.DataFrame:
    """A short, precisely timed transit centred on MIDNIGHT of the target at `frame_coord`."""
    icrs = frame_coord.transform_to("icrs")
    return pd.DataFrame([{"name": "Probe-1 b", "ra_deg": float(icrs.ra.deg), "dec_deg": float(icrs.dec.deg),
                          "t0_bjd_tdb": _bjd(icrs), "t0_err_d": 1e-6, "period_d": 7.3, "period_err_d": 0.0,
                          "duration_h": duration_h, "t0_period_cov_d2": 0.0}])


def _bjd(icrs) -> float:
    # BJD_TDB of an event seen at the site at MIDNIGHT (astropy light travel time).
    location = earth_location(SITE.latitude_deg, SITE.longitude_deg, SITE.elevation_m)
    return float((MIDNIGHT.tdb + MIDNIGHT.light_travel_time(icrs, "barycentric", location=location)).jd)


def _coverage(targets, facility: Facility, engine: str, **constraints) -> pd.Series:
    site = Site(SITE.name, SITE.latitude_deg, SITE.longitude_deg, SITE.elevation_m, facility=facility)
    windows = plan_windows(targets, {site.name: site}, {"baseline_h": 0.0, "sigma_k": 0.0, **constraints},
                           MIDNIGHT - 1 * u.day, MIDNIGHT + 1 * u.day, engine=engine, include_unobservable=True)
    assert len(windows) == 1
    return windows.iloc[0]


def _altaz(alt_deg, az_deg):
    location = earth_location(SITE.latitude_deg, SITE.longitude_deg, SITE.elevation_m)
    return SkyCoord(alt=alt_deg * u.deg, az=az_deg * u.deg, frame=AltAz(obstime=MIDNIGHT, location=location))


WALL = ((0.0, 0.0), (60.0, 0.0), (70.0, 45.0), (130.0, 45.0), (140.0, 0.0), (359.0, 0.0))
LOW = tuple((az, min(alt, 35.0)) for az, alt in WALL)


@pytest.mark.parametrize("engine", ENGINES)
def test_horizon_mask_wall(engine):
    # A target at 40 deg altitude (azimuth 100, astropy AltAz without refraction) behind a 45 deg
    # wall is not observable; with the wall at 35 deg it is (issue example; geometry).
    targets = _target_at(_altaz(40.0, 100.0))
    wall = Facility(mask_az_deg=tuple(a for a, _ in WALL), mask_alt_deg=tuple(b for _, b in WALL))
    low = Facility(mask_az_deg=tuple(a for a, _ in LOW), mask_alt_deg=tuple(b for _, b in LOW))
    assert _coverage(targets, wall, engine, min_altitude_deg=20.0)["coverage"] == "none"
    assert _coverage(targets, low, engine, min_altitude_deg=20.0)["coverage"] == "full"


def _hadec(ha_h, dec_deg):
    location = earth_location(SITE.latitude_deg, SITE.longitude_deg, SITE.elevation_m)
    return SkyCoord(ha=ha_h * 15 * u.deg, dec=dec_deg * u.deg, frame=HADec(obstime=MIDNIGHT, location=location))


@pytest.mark.parametrize("engine", ENGINES)
def test_hour_angle_and_declination_limits(engine):
    # An equatorial mount reaching +-2 h cannot follow a target 3 h west of the meridian; one
    # reaching +-4 h can (astropy HADec). Declination limits likewise.
    targets = _target_at(_hadec(3.0, -40.0))
    assert _coverage(targets, Facility(hour_angle_limits_h=(-2.0, 2.0)), engine)["coverage"] == "none"
    assert _coverage(targets, Facility(hour_angle_limits_h=(-4.0, 4.0)), engine)["coverage"] == "full"
    assert _coverage(targets, Facility(declination_limits_deg=(-30.0, 60.0)), engine)["coverage"] == "none"
    assert _coverage(targets, Facility(declination_limits_deg=(-60.0, 60.0)), engine)["coverage"] == "full"


@pytest.mark.parametrize("engine", ENGINES)
def test_zenith_keepout_removes_the_time_near_the_zenith(engine):
    # A target with dec = latitude crosses the zenith at culmination, moving at 15 deg/h x
    # cos(dec) across the sky there (spherical geometry), so a 3 deg keep-out hides
    # 2 x 3 / (15 cos 30) h = 0.462 h of a 1 h transit centred on the crossing.
    targets = _target_at(_hadec(0.0, SITE.latitude_deg), duration_h=1.0)
    row = _coverage(targets, Facility(zenith_keepout_deg=3.0), engine)
    expected = 1.0 - 2 * 3.0 / (15.0 * np.cos(np.radians(30.0))) / 1.0
    assert row["coverage"] in ("partial", "ingress", "egress")
    assert row["observable_fraction"] == pytest.approx(expected, abs=0.03)


@pytest.mark.parametrize("engine", ENGINES)
def test_moon_illumination_matches_pyephem(engine):
    # PyEphem's Moon.moon_phase is the illuminated fraction (independent reference; < 0.01).
    targets = _target_at(_altaz(60.0, 200.0))
    row = _coverage(targets, Facility(), engine)
    moon = ephem.Moon(MIDNIGHT.utc.datetime)
    assert abs(row["moon_illumination"] - moon.moon_phase) < 0.01


def _moon_high_night():
    """A night instant at SITE with the Moon high (astropy), and the Moon's ICRS direction."""
    from astropy.coordinates import get_body, get_sun

    location = earth_location(SITE.latitude_deg, SITE.longitude_deg, SITE.elevation_m)
    times = MIDNIGHT + np.arange(0, 30 * 24, 0.5) * u.h
    frame = AltAz(obstime=times, location=location)
    moon_alt = get_body("moon", times, location).transform_to(frame).alt.deg
    sun_alt = get_sun(times).transform_to(frame).alt.deg
    best = int(np.argmax(np.where(sun_alt < -20, moon_alt, -90)))
    return times[best], get_body("moon", times[best], location)


@pytest.mark.parametrize("engine", ENGINES)
def test_moon_rule_by_phase(engine):
    # The least separation follows the Moon's phase through the table (facility.py rule); a
    # target 25 deg from a high Moon passes a 15 deg rule and fails a 35 deg rule.
    global MIDNIGHT
    saved = MIDNIGHT
    try:
        MIDNIGHT, moon = _moon_high_night()
        offset = SkyCoord(ra=moon.ra, dec=moon.dec, frame=moon.frame).directional_offset_by(0 * u.deg, 25 * u.deg)
        targets = _target_at(SkyCoord(ra=offset.ra, dec=offset.dec, frame=moon.frame))
        lenient = Facility(moon_table=((0.0, 15.0), (1.0, 15.0)))
        strict = Facility(moon_table=((0.0, 35.0), (1.0, 35.0)))
        assert _coverage(targets, lenient, engine, min_altitude_deg=10.0)["coverage"] == "full"
        assert _coverage(targets, strict, engine, min_altitude_deg=10.0)["coverage"] == "none"
    finally:
        MIDNIGHT = saved


def test_facility_keys_parse_and_bad_ones_name_the_key(tmp_path):
    from vigil.errors import InputError

    good = tmp_path / "s.toml"
    good.write_text("[sites.loma]\nlatitude_deg = -30\nlongitude_deg = -70\nelevation_m = 2000\n"
                    "horizon_mask = [[0, 10], [180, 30]]\nhour_angle_limits_h = [-4.5, 4.5]\n"
                    "zenith_keepout_deg = 2\nmoon_sep_by_illumination = [[0, 10], [1, 40]]\n")
    facility = read_sites(good)["loma"].facility
    assert facility.mask_alt_at([90.0])[0] == pytest.approx(20.0)
    assert facility.moon_limit_deg([0.5], 0.0)[0] == pytest.approx(25.0)
    bad = tmp_path / "b.toml"
    bad.write_text("[sites.loma]\nlatitude_deg = -30\nlongitude_deg = -70\nelevation_m = 2000\n"
                   "hour_angle_limits_h = [4, -4]\n")
    with pytest.raises(InputError, match=r"\[sites.loma\] hour_angle_limits_h"):
        read_sites(bad)


def test_no_astronomical_night_at_68_north_in_june():
    # At 68 deg N around the June solstice the Sun's centre never reaches -18 deg (PyEphem
    # raises AlwaysUpError for that horizon): no windows, a note saying why, no error.
    observer = ephem.Observer()
    observer.lat, observer.lon, observer.pressure, observer.horizon = "68", "20", 0, "-18"
    observer.date = "2027/6/10"
    with pytest.raises(ephem.AlwaysUpError):
        observer.next_setting(ephem.Sun(), use_center=True)
    site = Site("tundra_obs", 68.0, 20.0, 300.0)
    targets = _target_at(_hadec(0.0, 60.0))
    targets["t0_bjd_tdb"] = 2461566.5
    targets["period_d"] = 1.3
    windows = plan_windows(targets, {site.name: site}, {}, Time("2027-06-01"), Time("2027-06-30"))
    assert windows.empty
    assert any("no astronomical darkness" in note.text() for note in notes.of(windows))
