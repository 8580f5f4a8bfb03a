"""BJD_TDB <-> UTC at a site, checked against astropy's own light travel time and IERS facts."""

import astropy.units as u
import numpy as np
import pytest
from astropy.coordinates import BarycentricTrueEcliptic, SkyCoord
from astropy.time import Time

from authorities import time_scales
from vigil import windows
from vigil.ephemeris.projection import project_transits
from vigil.timescales import bjd_tdb_to_site_time, earth_location, site_time_to_bjd_tdb

SITES = ("mirador_sur", "cumbre_alta", "nordvik")
TARGETS_DEG = [(45.20, -12.30), (203.10, 48.90), (287.50, 5.40), (15.60, 61.30)]
YEAR_2027 = Time("2027-01-01T00:00:00", scale="utc") + np.linspace(0.0, 365.0, 120) * u.day
TT_MINUS_UTC_S = time_scales.TT_MINUS_UTC_SINCE_2017_S


def _location(site):
    return earth_location(site.latitude_deg, site.longitude_deg, site.elevation_m)


def _ecliptic_icrs(lon_deg, lat_deg):
    return SkyCoord(lon=lon_deg * u.deg, lat=lat_deg * u.deg, frame=BarycentricTrueEcliptic(equinox=Time("J2000"))).icrs


def _astropy_bjd_tdb(times_utc: Time, ra_deg, dec_deg, location) -> Time:
    """Forward conversion straight from astropy: BJD_TDB = t_TDB + Time.light_travel_time(barycentric)."""
    target = SkyCoord(ra=ra_deg * u.deg, dec=dec_deg * u.deg)
    return times_utc.tdb + times_utc.light_travel_time(target, kind="barycentric", location=location)


def test_bjd_to_site_utc_inverts_astropy_light_travel_time(demo_sites):
    # Reference: astropy Time.light_travel_time (authorities.time_scales asks < 1 s; the fixed-point
    # solution should reach well under 1 ms). Times are compared as astropy Time differences,
    # so the ~40 us granularity of a float JD does not enter.
    worst_s = 0.0
    for name in SITES:
        location = _location(demo_sites[name])
        for ra, dec in TARGETS_DEG:
            bjd = _astropy_bjd_tdb(YEAR_2027, ra, dec, location)
            seen = bjd_tdb_to_site_time(bjd.jd1 + bjd.jd2, ra, dec, location)
            worst_s = max(worst_s, float(np.max(np.abs((seen - YEAR_2027).to_value(u.s)))))
    print(f"worst BJD_TDB -> site UTC round trip: {worst_s * 1e3:.4f} ms")
    assert worst_s < 1e-3


def test_site_time_to_bjd_matches_astropy(demo_sites):
    # The forward direction vigil offers against astropy's light travel time directly.
    location = _location(demo_sites["cumbre_alta"])
    ra, dec = TARGETS_DEG[1]
    expected = _astropy_bjd_tdb(YEAR_2027, ra, dec, location)
    got = site_time_to_bjd_tdb(YEAR_2027, ra, dec, location)
    np.testing.assert_allclose((got - expected.jd) * 86400.0, 0.0, atol=1e-4)


def test_tt_minus_utc_in_2027_is_69_184_s():
    # IERS Bulletin C (TAI - UTC = 37 s) and TT = TAI + 32.184 s: the bundled leap-second table.
    t = Time("2027-06-01T00:00:00", scale="utc")
    tt_minus_utc_s = ((t.tt.jd1 - t.utc.jd1) + (t.tt.jd2 - t.utc.jd2)) * 86400.0
    assert tt_minus_utc_s == pytest.approx(TT_MINUS_UTC_S, abs=1e-6)


def test_pipeline_mid_time_carries_tt_minus_utc(make_targets, demo_sites):
    # BJD_TDB - JD_UTC = (TT - UTC) + (TDB - TT) + light travel time (Eastman, Siverd & Gaudi
    # 2010). Removing astropy's light travel time at the seen instant leaves TT - UTC plus
    # TDB - TT (both in authorities.time_scales).
    site = demo_sites["mirador_sur"]
    pole = _ecliptic_icrs(0.0, 90.0)
    targets = make_targets({"name": "Polar-1 b", "ra_deg": pole.ra.deg, "dec_deg": pole.dec.deg,
                            "t0_bjd_tdb": 2461500.3, "period_d": 7.3})
    seen = windows.at_site(project_transits(targets, 2461400.0, 2461800.0), site,
                           Time("2027-01-01", scale="utc"), Time("2028-01-01", scale="utc"))
    assert len(seen) > 40
    mid_utc = Time(seen["mid_jd_utc"].to_numpy(), format="jd", scale="utc")
    ltt_s = mid_utc.light_travel_time(pole, kind="barycentric", location=_location(site)).to_value(u.s)
    offset_s = (seen["mid_bjd_tdb"].to_numpy() - seen["mid_jd_utc"].to_numpy()) * 86400.0 - ltt_s
    np.testing.assert_allclose(offset_s, TT_MINUS_UTC_S, atol=time_scales.TDB_MINUS_TT_MAX_S + 1e-4)  # + float-JD granularity


def test_light_travel_time_swing_for_an_ecliptic_target(demo_sites):
    # For a target on the ecliptic BJD_TDB - JD_UTC swings by about +-8.3 min over a year
    # (Eastman, Siverd & Gaudi 2010; 1 au / c = 499 s, Earth's eccentricity moves each
    # extreme by about 1.7 %, i.e. 0.14 min).
    location = _location(demo_sites["cumbre_alta"])
    target = _ecliptic_icrs(90.0, 0.0)
    bjd = site_time_to_bjd_tdb(YEAR_2027, target.ra.deg, target.dec.deg, location)
    swing_min = ((bjd - YEAR_2027.utc.jd) * 86400.0 - TT_MINUS_UTC_S) / 60.0
    swing = time_scales.LIGHT_TRAVEL_TIME_SWING_MIN
    assert swing_min.max() == pytest.approx(swing, abs=0.25)
    assert swing_min.min() == pytest.approx(-swing, abs=0.25)
    assert (swing_min.max() - swing_min.min()) / 2 == pytest.approx(swing, abs=0.1)


def test_far_future_dates_work_offline(no_network, make_targets, demo_sites):
    # vigil plans decades ahead with astropy offline (README, Offline): 2060 dates must
    # convert, and a window be planned, without touching the network or raising.
    site = demo_sites["nordvik"]
    when = Time("2060-03-01T00:00:00", scale="utc") + np.arange(3) * u.day
    ra, dec = TARGETS_DEG[3]
    bjd = _astropy_bjd_tdb(when, ra, dec, _location(site))
    seen = bjd_tdb_to_site_time(bjd.jd1 + bjd.jd2, ra, dec, _location(site))
    assert np.max(np.abs((seen - when).to_value(u.s))) < 1e-3
    targets = make_targets({"name": "Ondine-6 d", "ra_deg": ra, "dec_deg": dec, "t0_bjd_tdb": bjd[1].jd,
                            "period_d": 5.1268800})
    planned = windows.plan_windows(targets, {site.name: site}, {}, when[0], when[-1], engine="reference",
                                   include_unobservable=True)
    assert len(planned) == 1
    assert abs(planned["mid_jd_utc"][0] - when[1].jd) * 86400.0 < 1e-3


def test_socket_guard_refuses_connections(no_network):
    # The guard above must be able to fail a test: any connection attempt raises.
    import socket

    with pytest.raises(RuntimeError, match="network access"):
        socket.create_connection(("127.0.0.1", 9), timeout=1)


def test_windows_past_2100_and_2262_plan_and_say_once_the_earth_series_is_extrapolated(tmp_path):
    # Every date in vigil's span (to 2300) must plan. Past 2100 the Earth's position series runs
    # outside the years it was fitted to (authorities.time_scales); vigil says so once in its own
    # words and lets no raw ERFA warning through; past 2262 (the end of nanosecond timestamps)
    # the table still holds its UTC datetimes. Reference: the exact engine (astropy's own
    # conversions and AltAz) lists the same transits with the same coverage.
    from typer.testing import CliRunner

    import vigil
    from conftest import DEMO_DIR
    from vigil.cli import app

    fast = vigil.plan_windows(DEMO_DIR / "targets.csv", DEMO_DIR / "sites.toml", "2290-01-01", "2290-01-08",
                              site="nordvik", include_unobservable=True)
    exact = vigil.plan_windows(DEMO_DIR / "targets.csv", DEMO_DIR / "sites.toml", "2290-01-01", "2290-01-08",
                               site="nordvik", include_unobservable=True, exact=True)
    both = fast.merge(exact, on=["target", "site", "epoch"], suffixes=("", "_exact"), validate="1:1")
    assert len(both) == len(fast) == len(exact) > 0
    assert (both["coverage"].astype(str) == both["coverage_exact"].astype(str)).all()
    assert str(fast["mid_utc"].dtype) == "datetime64[s, UTC]" and (fast["mid_utc"].dt.year == 2290).all()
    result = CliRunner().invoke(app, ["windows", str(DEMO_DIR / "targets.csv"), "--sites", str(DEMO_DIR / "sites.toml"),
                                      "--site", "nordvik", "--start", "2290-01-01", "--end", "2290-01-08", "--exact",
                                      "--csv", str(tmp_path / "w.csv")])
    assert result.exit_code == 0, result.output
    lines = [line for line in result.output.splitlines() if "ERFA" in line or "epv00" in line]
    assert len(lines) == 1 and f"outside {time_scales.EARTH_SERIES_FIT_YEARS[0]}-{time_scales.EARTH_SERIES_FIT_YEARS[1]}" \
        in lines[0] and "yielded" not in lines[0], result.output
    assert f"from {time_scales.EARTH_SERIES_FIT_YEARS[1]}-01-01 to 2290-01-0" in lines[0]
