"""Visibility end to end: twilight, altitude, airmass and coverage against outside references.

References: PyEphem (twilight instants, apparent altitudes), astropy AltAz, the Kasten & Young
(1989) airmass formula, spherical astronomy (a target with dec = latitude at hour angle 0 is at
the zenith) and the coverage rules as `visibility.classify` documents them.
"""

import math

import astropy.units as u
import ephem
import numpy as np
import pandas as pd
import pytest
from astropy.coordinates import AltAz, SkyCoord, get_body
from astropy.time import Time
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from authorities import airmass, sun_moon, window_geometry
from vigil import intervals, sky, visibility, windows
from vigil.catalog import read_targets
from vigil.timescales import earth_location

from conftest import DEMO_DIR

TWILIGHT_TOLERANCE_S = sun_moon.TWILIGHT_TOLERANCE_VS_PYEPHEM_S
# The coverage cases run on both engines. Mid-time seen at the site vs the astropy forward
# conversion: the reference engine solves it to < 0.1 ms (timescales.py), the fast one
# claims 0.05 s of astropy (fast_engine.site_mid_jd_utc).
ENGINES = ("reference", "fast")
MID_TIME_TOLERANCE_S = {"reference": 1e-3, "fast": 0.05}
# (site, an instant in the afternoon before a long winter night there)
WINTER_NIGHTS = [("mirador_sur", "2027-06-15T18:00:00"), ("cumbre_alta", "2027-12-20T12:00:00"),
                 ("nordvik", "2027-01-10T12:00:00")]


def _location(site):
    return earth_location(site.latitude_deg, site.longitude_deg, site.elevation_m)


def _pyephem_dark_night(site, afternoon: Time) -> tuple[Time, Time]:
    """Start and end of astronomical darkness after `afternoon` from PyEphem: Sun's centre at
    -18 deg, no refraction (the settings of authorities.sun_moon)."""
    observer = ephem.Observer()
    observer.lat, observer.lon = str(site.latitude_deg), str(site.longitude_deg)
    observer.elevation = site.elevation_m
    observer.pressure = 0
    observer.horizon = str(sun_moon.TWILIGHT_SUN_ALT_DEG["astronomical"])
    observer.date = ephem.Date(afternoon.utc.datetime)
    dusk = observer.next_setting(ephem.Sun(), use_center=True)
    observer.date = dusk
    dawn = observer.next_rising(ephem.Sun(), use_center=True)
    return Time(dusk.datetime(), scale="utc"), Time(dawn.datetime(), scale="utc")


def _zenith_at(site, when: Time) -> tuple[float, float]:
    """(ra_deg, dec_deg) of the point at the zenith at `when`: RA = local apparent sidereal time,
    dec = latitude (spherical astronomy; astropy sidereal_time)."""
    return when.sidereal_time("apparent", longitude=site.longitude_deg * u.deg).deg, site.latitude_deg


def _transit_seen_at(make_targets, site, mid: Time, ra_deg, dec_deg, duration_h, period_d=10.0):
    """A one-target table whose transit is seen at `site` at `mid`: T0 = mid_TDB + barycentric
    light travel time, straight from astropy; a tiny timing uncertainty (1e-5 d)."""
    target = SkyCoord(ra=ra_deg * u.deg, dec=dec_deg * u.deg)
    t0 = (mid.tdb + mid.light_travel_time(target, kind="barycentric", location=_location(site))).jd
    return make_targets({"name": "Liss-4 b", "ra_deg": ra_deg, "dec_deg": dec_deg, "t0_bjd_tdb": t0,
                         "t0_err_d": 1e-5, "period_err_d": 0.0, "period_d": period_d, "duration_h": duration_h})


def _plan_one(targets, site, around: Time, engine: str = "reference", **overrides) -> pd.DataFrame:
    planned = windows.plan_windows(targets, {site.name: site}, overrides, around - 1 * u.day, around + 1 * u.day,
                                   engine=engine, include_unobservable=True)
    assert len(planned) == 1
    return planned.iloc[0]


def _seconds(jd_a, jd_b) -> float:
    return abs(float(jd_a) - float(jd_b)) * 86400.0


# --- twilight -----------------------------------------------------------------------------

@pytest.mark.parametrize("site_name, afternoon", WINTER_NIGHTS)
def test_sun_altitude_crosses_minus_18_when_pyephem_says(demo_sites, site_name, afternoon):
    # Reference: PyEphem next_setting / next_rising of the Sun's centre at -18 deg, pressure 0.
    site = demo_sites[site_name]
    dusk, dawn = _pyephem_dark_night(site, Time(afternoon, scale="utc"))
    location = _location(site)

    def above_minus_18(jd):
        return float(sky.sun_altitude_deg(Time(jd, format="jd", scale="utc"), location)[()]) + 18.0

    half_hour = 1.0 / 48
    ours_dusk = brentq(above_minus_18, dusk.jd - half_hour, dusk.jd + half_hour, xtol=1e-9)
    ours_dawn = brentq(above_minus_18, dawn.jd - half_hour, dawn.jd + half_hour, xtol=1e-9)
    worst = max(_seconds(ours_dusk, dusk.jd), _seconds(ours_dawn, dawn.jd))
    print(f"{site_name}: Sun at -18 deg vs PyEphem, worst {worst:.2f} s")
    assert worst < TWILIGHT_TOLERANCE_S


@pytest.mark.parametrize("engine", ENGINES)
@pytest.mark.parametrize("site_name, afternoon", WINTER_NIGHTS)
def test_always_up_target_is_observable_exactly_through_astronomical_darkness(make_targets, demo_sites,
                                                                             site_name, afternoon, engine):
    # The celestial pole above the site stays at altitude |latitude|; with a 10 deg limit only
    # darkness constrains it, so the observable stretch of a 23 h window is the dark night.
    # Reference: PyEphem twilight instants (within authorities.sun_moon.TWILIGHT_TOLERANCE_VS_PYEPHEM_S).
    site = demo_sites[site_name]
    dusk, dawn = _pyephem_dark_night(site, Time(afternoon, scale="utc"))
    midnight = dusk + (dawn - dusk) / 2
    pole_dec = math.copysign(90.0, site.latitude_deg)
    targets = _transit_seen_at(make_targets, site, midnight, 0.0, pole_dec, duration_h=23.0)
    row = _plan_one(targets, site, midnight, engine, min_altitude_deg=10.0, twilight="astronomical",
                    baseline_h=0.0, sigma_k=0.0)
    start_s, end_s = _seconds(row.observable_start_jd_utc, dusk.jd), _seconds(row.observable_end_jd_utc, dawn.jd)
    print(f"{site_name} ({engine}): observable stretch vs PyEphem darkness, start {start_s:.1f} s, end {end_s:.1f} s")
    assert max(start_s, end_s) < TWILIGHT_TOLERANCE_S
    assert row.coverage == "partial"
    expected_fraction = (dawn - dusk).to_value(u.h) / 23.0
    assert row.observable_fraction == pytest.approx(expected_fraction, abs=2.0 / (23 * 60))


# --- hand-checkable coverage cases ---------------------------------------------------------

@pytest.fixture(scope="module")
def winter_night(demo_sites):
    """mirador_sur's astronomical darkness on 2027-06-15/16 (PyEphem) and the site."""
    site = demo_sites["mirador_sur"]
    dusk, dawn = _pyephem_dark_night(site, Time("2027-06-15T18:00:00", scale="utc"))
    return site, dusk, dawn


@pytest.mark.parametrize("engine", ENGINES)
def test_zenith_transit_at_midnight_is_fully_observable(make_targets, winter_night, engine):
    # dec = latitude and RA = sidereal time put the target at the zenith (spherical astronomy);
    # a 1 h transit with 1 h baselines at winter midnight (midway through PyEphem's darkness)
    # is deep inside the dark night.
    site, dusk, dawn = winter_night
    midnight = dusk + (dawn - dusk) / 2
    ra, dec = _zenith_at(site, midnight)
    row = _plan_one(_transit_seen_at(make_targets, site, midnight, ra, dec, duration_h=1.0), site, midnight, engine)
    assert row.coverage == "full"
    assert row.observable_fraction == 1.0
    assert _seconds(row.mid_jd_utc, midnight.jd) < MID_TIME_TOLERANCE_S[engine]
    # RA/Dec of date differ from ICRS by precession since J2000 (about 0.4 deg in 2027, from memory).
    assert row.alt_mid_deg > 89.0


@pytest.mark.parametrize("engine", ENGINES)
def test_same_target_at_local_noon_is_not_observable(make_targets, winter_night, engine):
    # Twelve hours later the Sun is up and the target below the horizon: no in-transit time.
    site, dusk, dawn = winter_night
    midnight = dusk + (dawn - dusk) / 2
    ra, dec = _zenith_at(site, midnight)
    noon = midnight + 12 * u.h
    targets = _transit_seen_at(make_targets, site, noon, ra, dec, duration_h=1.0)
    row = _plan_one(targets, site, noon, engine)
    assert row.coverage == "none"
    assert row.observable_fraction == 0.0
    assert row.sun_alt_mid_deg > 0.0
    assert windows.plan_windows(targets, {site.name: site}, {}, noon - 1 * u.day, noon + 1 * u.day, engine=engine).empty


@pytest.mark.parametrize("engine", ENGINES)
def test_dawn_cutting_the_window_after_mid_gives_ingress(make_targets, winter_night, engine):
    # Target at the zenith at dawn, mid-transit 30 min before dawn, 2 h transit, 1 h baselines:
    # observable from the window's start until dawn, so [ingress, dawn] = 1.5 h of 2 h
    # (dawn from PyEphem; 2 minutes of tolerance as the brief asks).
    site, _, dawn = winter_night
    mid = dawn - 30 * u.min
    ra, dec = _zenith_at(site, dawn)
    row = _plan_one(_transit_seen_at(make_targets, site, mid, ra, dec, duration_h=2.0), site, mid, engine)
    assert row.coverage == "ingress"
    expected = (dawn - (mid - 1 * u.h)).to_value(u.min) / 120.0
    assert abs(row.observable_fraction - expected) * 120.0 < 2.0
    assert _seconds(row.observable_end_jd_utc, dawn.jd) < TWILIGHT_TOLERANCE_S


@pytest.mark.parametrize("engine", ENGINES)
def test_dusk_cutting_the_window_before_mid_gives_egress(make_targets, winter_night, engine):
    # The mirror case: zenith at dusk, mid 30 min after dusk; [dusk, egress] = 1.5 h of 2 h.
    site, dusk, _ = winter_night
    mid = dusk + 30 * u.min
    ra, dec = _zenith_at(site, dusk)
    row = _plan_one(_transit_seen_at(make_targets, site, mid, ra, dec, duration_h=2.0), site, mid, engine)
    assert row.coverage == "egress"
    expected = ((mid + 1 * u.h) - dusk).to_value(u.min) / 120.0
    assert abs(row.observable_fraction - expected) * 120.0 < 2.0
    assert _seconds(row.observable_start_jd_utc, dusk.jd) < TWILIGHT_TOLERANCE_S


# --- altitude and airmass at mid-transit ---------------------------------------------------

@pytest.fixture(scope="module")
def demo_week(demo_sites):
    """Every demo transit, observable or not, at two demo sites over four nights (March 2027)."""
    targets = read_targets(DEMO_DIR / "targets.csv")
    chosen = {name: demo_sites[name] for name in ("cumbre_alta", "mirador_sur")}
    planned = windows.plan_windows(targets, chosen, {}, Time("2027-03-01", scale="utc"), Time("2027-03-05", scale="utc"),
                                   engine="reference", include_unobservable=True)
    return planned, chosen


def _altaz_frame(site, times, pressure_hpa):
    return AltAz(obstime=times, location=_location(site), pressure=pressure_hpa * u.hPa,
                 temperature=site.temperature_c * u.deg_C, relative_humidity=0.0, obswl=0.55 * u.micron)


def test_alt_mid_is_astropy_apparent_altitude_and_agrees_with_pyephem(demo_week):
    planned, chosen = demo_week
    worst_astropy, worst_pyephem = 0.0, 0.0
    for name, group in planned.groupby("site"):
        site = chosen[name]
        times = Time(group["mid_jd_utc"].to_numpy(), format="jd", scale="utc")
        targets = SkyCoord(ra=group["ra_deg"].to_numpy() * u.deg, dec=group["dec_deg"].to_numpy() * u.deg)
        # Reference 1: astropy AltAz with the same pressure and temperature (refraction on) above
        # the horizon, without pressure (geometric) below it.
        apparent = targets.transform_to(_altaz_frame(site, times, site.air_pressure_hpa)).alt.deg
        geometric = targets.transform_to(_altaz_frame(site, times, 0.0)).alt.deg
        apparent = np.where(geometric >= 0.0, apparent, geometric)
        worst_astropy = max(worst_astropy, float(np.max(np.abs(apparent - group["alt_mid_deg"]))))
        # Reference 2: PyEphem's apparent altitude for the same pressure and temperature.
        observer = ephem.Observer()
        observer.lat, observer.lon = str(site.latitude_deg), str(site.longitude_deg)
        observer.elevation, observer.pressure, observer.temp = site.elevation_m, site.air_pressure_hpa, site.temperature_c
        for when, row in zip(times, group.itertuples()):
            if row.alt_mid_deg < 10.0:
                continue  # refraction models part ways near the horizon
            body = ephem.FixedBody()
            body._ra, body._dec, body._epoch = math.radians(row.ra_deg), math.radians(row.dec_deg), ephem.J2000
            observer.date = ephem.Date(when.datetime)
            body.compute(observer)
            worst_pyephem = max(worst_pyephem, abs(math.degrees(body.alt) - row.alt_mid_deg))
    print(f"alt_mid_deg: worst vs astropy {worst_astropy * 3600:.3g} arcsec, vs PyEphem {worst_pyephem * 3600:.2f} arcsec")
    assert len(planned) >= 10
    assert worst_astropy < 1e-6
    assert worst_pyephem < 10.0 / 3600


def _kasten_young_zenith(zenith_deg):
    """Kasten & Young (1989), coefficients from authorities.airmass."""
    z = np.asarray(zenith_deg, dtype=float)
    return 1.0 / (np.cos(np.radians(z)) + airmass.KASTEN_YOUNG_A * (airmass.KASTEN_YOUNG_B_DEG - z) ** -airmass.KASTEN_YOUNG_C)


def test_airmass_mid_is_kasten_young_at_the_geometric_altitude(demo_week):
    # README: airmass_mid is Kasten & Young (1989) at the geometric (unrefracted) altitude.
    planned, chosen = demo_week
    for name, group in planned.groupby("site"):
        times = Time(group["mid_jd_utc"].to_numpy(), format="jd", scale="utc")
        targets = SkyCoord(ra=group["ra_deg"].to_numpy() * u.deg, dec=group["dec_deg"].to_numpy() * u.deg)
        geometric = targets.transform_to(_altaz_frame(chosen[name], times, 0.0)).alt.deg
        up = geometric > 0
        np.testing.assert_allclose(group["airmass_mid"].to_numpy()[up], _kasten_young_zenith(90.0 - geometric[up]),
                                   rtol=1e-9)


def test_kasten_young_airmass_at_zenith_60_deg():
    # X(z = 60 deg) from the Kasten & Young (1989) formula (authorities.airmass).
    assert sky.airmass_kasten_young(30.0) == pytest.approx(airmass.KASTEN_YOUNG_X_AT_Z60, abs=1e-4)
    assert sky.airmass_kasten_young(30.0) == pytest.approx(float(_kasten_young_zenith(60.0)), rel=1e-12)


def test_kasten_young_airmass_tends_to_sec_z_near_the_zenith():
    # Plane-parallel limit X = sec z at small zenith angles (authorities.airmass); the fitted
    # formula sits 3e-4 below it at the zenith and the curvature term grows as tan^2 z.
    zenith = np.linspace(0.0, airmass.SEC_Z_AGREEMENT_UP_TO_Z_DEG, 41)
    np.testing.assert_allclose(sky.airmass_kasten_young(90.0 - zenith), 1.0 / np.cos(np.radians(zenith)),
                               rtol=airmass.SEC_Z_RELATIVE_TOLERANCE)


# --- coverage classifier on synthetic intervals ---------------------------------------------

MID, HALF, PAD, KSIG = 100.0, 0.05, 0.06, 0.01  # JD; half duration, baseline + K sigma, K sigma


def _synthetic_window() -> pd.DataFrame:
    """One padded window: ingress/egress at mid -/+ HALF, window ends PAD further out, K = 1."""
    return pd.DataFrame({"mid_jd_utc": [MID], "ingress_jd_utc": [MID - HALF], "egress_jd_utc": [MID + HALF],
                         "window_start_jd_utc": [MID - HALF - PAD], "window_end_jd_utc": [MID + HALF + PAD],
                         "mid_sigma_d": [KSIG]})


def _classify(*stretches):
    row = np.zeros(len(stretches), dtype=int)
    start = np.array([s for s, _ in stretches], dtype=float)
    end = np.array([e for _, e in stretches], dtype=float)
    return visibility.classify(_synthetic_window(), (row, start, end), sigma_k=1.0).iloc[0]


LO, HI = MID - HALF - PAD, MID + HALF + PAD
EPS = 1e-6


@pytest.mark.parametrize("stretches, coverage, fraction", [
    # full: one stretch holds the whole padded window (docstring of visibility.classify)
    ([(LO, HI)], "full", 1.0),
    # ingress: one stretch from the window's start through mid + k sigma, not the whole window
    ([(LO, MID + KSIG)], "ingress", (HALF + KSIG) / (2 * HALF)),
    # just short of mid + k sigma is no longer ingress, only partial
    ([(LO, MID + KSIG - EPS)], "partial", (HALF + KSIG - EPS) / (2 * HALF)),
    # egress: the mirror case, mid - k sigma through the window's end
    ([(MID - KSIG, HI)], "egress", (HALF + KSIG) / (2 * HALF)),
    ([(MID - KSIG + EPS, HI)], "partial", (HALF + KSIG - EPS) / (2 * HALF)),
    # two stretches that together cover the window are not one stretch: partial
    ([(LO, MID - 0.02), (MID + 0.02, HI)], "partial", 1.0 - 0.04 / (2 * HALF)),
    # only in-transit time in the middle: partial
    ([(MID - 0.01, MID + 0.01)], "partial", 0.02 / (2 * HALF)),
    # only baseline before ingress: no in-transit time, none
    ([(LO, MID - HALF - EPS)], "none", 0.0),
    ([], "none", 0.0),
])
def test_classify_follows_its_documented_rules(stretches, coverage, fraction):
    result = _classify(*stretches)
    assert result.coverage == coverage
    assert result.observable_fraction == pytest.approx(fraction, abs=1e-9)


def test_classify_reports_the_stretch_with_most_in_transit_time():
    result = _classify((LO, MID - 0.04), (MID - 0.03, MID + 0.03))
    assert (result.observable_start_jd_utc, result.observable_end_jd_utc) == (MID - 0.03, MID + 0.03)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.floats(-0.15, 0.15), st.floats(0.0, 0.2)), max_size=4))
def test_classify_fraction_and_class_are_consistent(raw):
    # Random disjoint stretches inside the window, classified by the rules as the docstring
    # states them, in its order; the fraction lies in [0, 1] and is 1 for 'full'.
    stretches = []
    for offset, length in sorted(raw):
        start, end = max(MID + offset, LO), min(MID + offset + length, HI)
        if end <= start:
            continue
        if stretches and start <= stretches[-1][1]:
            stretches[-1] = (stretches[-1][0], max(end, stretches[-1][1]))
        else:
            stretches.append((start, end))
    result = _classify(*stretches)
    in_transit = sum(max(0.0, min(e, MID + HALF) - max(s, MID - HALF)) for s, e in stretches)

    def holds(lo, hi):
        return any(s <= lo and e >= hi for s, e in stretches)

    expected = ("full" if holds(LO, HI) else "ingress" if holds(LO, MID + KSIG) else
                "egress" if holds(MID - KSIG, HI) else "partial" if in_transit > 0 else "none")
    assert result.coverage == expected
    assert 0.0 <= result.observable_fraction <= 1.0
    assert result.observable_fraction == pytest.approx(1.0 if expected == "full" else in_transit / (2 * HALF), abs=1e-9)


# --- interval edges from sampled margins ----------------------------------------------------

def test_from_samples_places_edges_at_sine_zero_crossings_within_interpolation_bound():
    # margin(t) = sin(w (t - phase)) is >= 0 on [phase + 2k pi / w, phase + (2k + 1) pi / w].
    # The secant through two samples h apart misplaces a root by at most
    # max|f''| h^2 / (8 min|f'|) = w h^2 / (8 cos(w h)) (linear-interpolation error bound,
    # |f - L| <= h^2 max|f''| / 8; standard numerical analysis, from memory).
    w, h = 2.0 * np.pi / 1.3, 0.02
    phases = np.array([0.0, 0.137, 0.5, 0.911])
    t = np.arange(0.013, 5.0, h)
    row = np.repeat(np.arange(phases.size), t.size)
    times = np.tile(t, phases.size)
    got_row, got_start, got_end = intervals.from_samples(row, times, np.sin(w * (times - phases[row])))
    bound = w * h**2 / (8 * np.cos(w * h))
    for r, phase in enumerate(phases):
        starts, ends = got_start[got_row == r], got_end[got_row == r]
        k = np.arange(-4, 8)
        rises, sets = phase + 2 * k * np.pi / w, phase + (2 * k + 1) * np.pi / w
        inner_starts = starts[starts > t[0]]
        inner_ends = ends[ends < t[-1]]
        assert np.all(np.min(np.abs(inner_starts[:, None] - rises[None, :]), axis=1) <= bound)
        assert np.all(np.min(np.abs(inner_ends[:, None] - sets[None, :]), axis=1) <= bound)
        # a stretch open at the first or last sample is bounded by that sample (docstring)
        if np.sin(w * (t[0] - phase)) >= 0:
            assert starts[0] == t[0]
        if np.sin(w * (t[-1] - phase)) >= 0:
            assert ends[-1] == t[-1]
        expected_count = np.count_nonzero((rises > t[0]) & (rises < t[-1])) + int(np.sin(w * (t[0] - phase)) >= 0)
        assert starts.size == expected_count


# --- meridian crossing, Moon below the horizon, altitude below the horizon ------------------

@pytest.mark.parametrize("engine", ENGINES)
def test_meridian_crossing_matches_astroplan(demo_sites, engine):
    # Reference: astroplan's target_meridian_transit_time nearest mid-transit (source and
    # tolerance in authorities.window_geometry).
    from astroplan import FixedTarget, Observer

    targets = read_targets(DEMO_DIR / "targets.csv")
    planned = windows.plan_windows(targets, demo_sites, {}, Time("2027-03-01"), Time("2027-03-08"), engine=engine,
                                   include_unobservable=True)
    planned = planned[planned["site"].map(lambda s: demo_sites[s].kind != "space")].head(40)
    assert len(planned) >= 20
    worst_s, flags_checked = 0.0, 0
    for row in planned.itertuples():
        site = demo_sites[row.site]
        observer = Observer(location=_location(site))
        target = FixedTarget(SkyCoord(ra=row.ra_deg * u.deg, dec=row.dec_deg * u.deg))
        truth = observer.target_meridian_transit_time(Time(row.mid_jd_utc, format="jd", scale="utc"), target,
                                                      which="nearest").utc.jd
        worst_s = max(worst_s, _seconds(row.meridian_jd_utc, truth))
        tolerance_d = window_geometry.MERIDIAN_TOLERANCE_S / 86400.0
        if min(abs(truth - row.ingress_jd_utc), abs(truth - row.egress_jd_utc)) > tolerance_d:
            assert row.meridian_in_transit == (row.ingress_jd_utc <= truth <= row.egress_jd_utc)
            flags_checked += 1
    print(f"{engine}: meridian crossing worst {worst_s:.1f} s vs astroplan over {len(planned)} windows")
    assert worst_s < window_geometry.MERIDIAN_TOLERANCE_S
    assert flags_checked >= 20 and planned["meridian_in_transit"].any() and not planned["meridian_in_transit"].all()


@pytest.mark.parametrize("engine", ENGINES)
def test_moon_limit_ends_at_moonrise_when_the_moon_is_close_but_below_the_horizon(make_targets, demo_sites, engine):
    # Hand-checked with PyEphem: on 2027-06-25 at mirador_sur the Moon's centre rises at about
    # 03:04 UTC, inside astronomical darkness. The target is put 40 deg above the rising Moon,
    # so its separation stays under the 50 deg limit for the whole window; the limit applies only
    # once the Moon is up, so the observable stretch runs from the window's start to moonrise.
    site = demo_sites["mirador_sur"]
    observer = ephem.Observer()
    observer.lat, observer.lon = str(site.latitude_deg), str(site.longitude_deg)
    observer.elevation, observer.pressure, observer.horizon = site.elevation_m, 0, "0"
    observer.date = ephem.Date("2027/06/24 23:00")
    moonrise = Time(observer.next_rising(ephem.Moon(), use_center=True).datetime(), scale="utc")
    moon = get_body("moon", moonrise, _location(site)).transform_to(_altaz_frame(site, moonrise, 0.0))
    above = AltAz(alt=40.0 * u.deg, az=moon.az, obstime=moonrise, location=_location(site), pressure=0.0 * u.hPa)
    target = SkyCoord(above).transform_to("icrs")
    mid = moonrise - 0.5 * u.h
    targets = _transit_seen_at(make_targets, site, mid, target.ra.deg, target.dec.deg, duration_h=2.0)
    row = _plan_one(targets, site, mid, engine, moon_sep_deg=50.0, min_altitude_deg=10.0,
                    twilight="astronomical", baseline_h=0.5)
    # The hand check: through the window the Moon is within 50 deg of the target (PyEphem) and
    # below the horizon until moonrise.
    body = ephem.FixedBody()
    body._ra, body._dec, body._epoch = target.ra.rad, target.dec.rad, ephem.J2000
    for jd in np.linspace(row.window_start_jd_utc, row.window_end_jd_utc, 13):
        observer.date = ephem.Date(Time(jd, format="jd").datetime)
        body.compute(observer)
        luna = ephem.Moon(observer)
        assert math.degrees(ephem.separation(body, luna)) < 50.0
        assert (math.degrees(luna.alt) < 0.0) == (jd < moonrise.jd)
    assert row.coverage == "ingress"
    assert _seconds(row.observable_start_jd_utc, row.window_start_jd_utc) < 1.0
    assert _seconds(row.observable_end_jd_utc, moonrise.jd) < window_geometry.MOONRISE_EDGE_TOLERANCE_S


def test_engines_agree_on_altitude_below_and_above_the_horizon(demo_sites):
    # Targets from -80 to +80 deg geometric altitude at one instant; reference: astropy AltAz
    # with the site's pressure above the horizon and without pressure below (tolerances in
    # authorities.window_geometry).
    from vigil.engines import fast, reference

    site = demo_sites["mirador_sur"]
    when = Time("2027-06-16T04:00:00", scale="utc")
    wanted_alt = np.r_[np.linspace(-80.0, -1.0, 40), np.linspace(1.0, 80.0, 40)]
    azimuth = np.linspace(0.0, 350.0, wanted_alt.size)
    places = SkyCoord(AltAz(alt=wanted_alt * u.deg, az=azimuth * u.deg, obstime=when, location=_location(site),
                            pressure=0.0 * u.hPa)).transform_to("icrs")
    table = pd.DataFrame({"mid_jd_utc": when.jd, "ra_deg": places.ra.deg, "dec_deg": places.dec.deg})
    fast_alt = fast.conditions_at_mid(table, site)["alt_mid_deg"].to_numpy()
    reference_alt = reference.conditions_at_mid(table, site)["alt_mid_deg"].to_numpy()
    times = Time(np.full(wanted_alt.size, when.jd), format="jd", scale="utc")
    geometric = places.transform_to(_altaz_frame(site, times, 0.0)).alt.deg
    apparent = places.transform_to(_altaz_frame(site, times, site.air_pressure_hpa)).alt.deg
    below, up = geometric < 0.0, geometric > window_geometry.ALT_COMPARED_ABOVE_DEG
    assert below.sum() >= 30 and up.sum() >= 30
    worst_below = np.max(np.abs(fast_alt - reference_alt)[below])
    worst_up = np.max(np.abs(fast_alt - reference_alt)[up])
    print(f"engines' alt_mid_deg: worst {worst_below:.4f} deg below the horizon, {worst_up:.4f} deg above 5 deg")
    assert np.max(np.abs(reference_alt - geometric)[below]) < 1e-6
    assert np.max(np.abs(reference_alt - apparent)[up]) < 1e-6
    assert worst_below < window_geometry.ALT_BELOW_HORIZON_TOLERANCE_DEG
    assert worst_up < window_geometry.ALT_ABOVE_HORIZON_TOLERANCE_DEG
