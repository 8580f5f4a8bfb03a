"""Checks of the low-precision places of date and local sky (vigil.places_of_date, vigil.local_sky) against handbook examples, astropy, pyerfa and PyEphem."""

import ephem
import erfa
import numpy as np
import pytest

import vigil  # noqa: F401  (configures astropy offline before it is used below)
from astropy import units as u
from astropy.coordinates import (
    TETE,
    AltAz,
    EarthLocation,
    SkyCoord,
    angular_separation,
    get_body,
    get_sun,
    solar_system_ephemeris,
)
from astropy.time import Time

from authorities import sun_moon, time_scales
from vigil import local_sky, places_of_date, timescales
from vigil.errors import InputError

# The references themselves warn about far-future dates (no leap-second or Earth-orientation
# data there); vigil accepts that (see vigil.offline), and pytest resets its filters per test.
pytestmark = [
    pytest.mark.filterwarnings("ignore:.*dubious year:erfa.ErfaWarning"),
    pytest.mark.filterwarnings("ignore:Tried to get polar motions"),
]

# Accuracy bounds claimed by the module, each a little above the worst difference measured
# against the reference over 1975-2075.
SUN_BOUND_DEG = 0.012
MOON_BOUND_DEG = 0.02
STAR_BOUND_ARCSEC = 1.0
SIDEREAL_BOUND_S = 0.02
TWILIGHT_BOUND_S = sun_moon.TWILIGHT_TOLERANCE_VS_PYEPHEM_S

EPHEM_EPOCH_JD = 2415020.0  # PyEphem dates count days from 1899-12-31 12:00 UT (PyEphem docs)
RNG = np.random.default_rng(20240611)


def _hms_to_deg(h, m, s):
    return 15.0 * (h + m / 60.0 + s / 3600.0)


def _random_jd(n, first="1975-01-01", last="2075-01-01"):
    return np.sort(RNG.uniform(Time(first).jd, Time(last).jd, n))


def _sep_deg(ra1, dec1, ra2, dec2):
    return np.degrees(
        angular_separation(np.radians(ra1), np.radians(dec1), np.radians(ra2), np.radians(dec2))
    )


def _tete_radec(coord, obstime, location=None):
    tete = coord.transform_to(TETE(obstime=obstime, location=location))
    return tete.ra.deg, tete.dec.deg


# --- Sidereal time ------------------------------------------------------------------------------


def test_gmst_matches_meeus_examples_12a_12b():
    # Meeus, Astronomical Algorithms 2nd ed., Examples 12.a and 12.b (authorities.time_scales).
    for jd_ut1, hms in [time_scales.GMST_MEEUS_12A, time_scales.GMST_MEEUS_12B]:
        expected = _hms_to_deg(*hms)
        diff_s = places_of_date.wrap180(local_sky.gmst_deg(jd_ut1) - expected) * 240.0
        assert abs(diff_s) < 0.01


def test_gast_matches_meeus_example_12a():
    # Meeus, Example 12.a: apparent sidereal time at 1987-04-10 0h UT (authorities.time_scales).
    jd, hms = time_scales.GAST_MEEUS_12A
    diff_s = places_of_date.wrap180(local_sky.gast_deg(jd, jd) - _hms_to_deg(*hms)) * 240.0
    assert abs(diff_s) < 0.05


def test_nutation_matches_erfa_iau1980():
    # pyerfa nut80 is the full IAU 1980 nutation series (SOFA); ours keeps the 13 largest terms.
    jd_tt = _random_jd(500)
    dpsi_deg, deps_deg = places_of_date.nutation_deg(jd_tt)
    dpsi_ref, deps_ref = erfa.nut80(jd_tt, 0.0)
    assert np.max(np.abs(dpsi_deg - np.degrees(dpsi_ref))) * 3600 < 0.1
    assert np.max(np.abs(deps_deg - np.degrees(deps_ref))) * 3600 < 0.1


def test_sidereal_time_matches_astropy_over_a_century():
    # astropy Time.sidereal_time (IAU 2006/2000A models); both fed the same UT1.
    t = Time(_random_jd(300), format="jd", scale="tt")
    jd_ut1 = t.ut1.jd
    mean_s = places_of_date.wrap180(local_sky.gmst_deg(jd_ut1) - t.sidereal_time("mean", "greenwich").deg) * 240
    app_s = places_of_date.wrap180(local_sky.gast_deg(jd_ut1, t.jd) - t.sidereal_time("apparent", "greenwich").deg) * 240
    assert np.max(np.abs(mean_s)) < SIDEREAL_BOUND_S
    assert np.max(np.abs(app_s)) < SIDEREAL_BOUND_S


def test_local_sidereal_time_with_ut1_taken_as_utc():
    # astropy with measured UT1 (IERS, 1975-2024): |UT1 - UTC| < 0.9 s (IERS keeps it so) gives
    # less than 0.004 deg of sidereal time; east longitude positive.
    t = Time(_random_jd(200, "1975-01-01", "2024-01-01"), format="jd", scale="utc")
    lon_deg = RNG.uniform(-180, 180, t.size)
    ours = local_sky.local_sidereal_deg(t.jd, lon_deg)
    ref = t.sidereal_time("apparent", longitude=lon_deg * u.deg).deg
    assert np.max(np.abs(places_of_date.wrap180(ours - ref))) < 0.9 / 240 + SIDEREAL_BOUND_S / 240


# --- Sun ----------------------------------------------------------------------------------------


def test_sun_matches_meeus_example_25b():
    # Meeus, Example 25.b: apparent Sun 1992-10-13 0h TD (authorities.sun_moon).
    ra, dec = places_of_date.sun_radec_deg(sun_moon.SUN_MEEUS_25B_JD_TT)
    sep = _sep_deg(ra, dec, _hms_to_deg(*sun_moon.SUN_MEEUS_25B_RA_HMS), sun_moon.SUN_MEEUS_25B_DEC_DEG)
    assert sep < SUN_BOUND_DEG


def test_sun_matches_astropy_over_a_century():
    # astropy get_sun (apparent, builtin ephemeris) transformed to the true equator of date.
    t = Time(_random_jd(400), format="jd", scale="tt")
    ra_ref, dec_ref = _tete_radec(get_sun(t), t)
    ra, dec = places_of_date.sun_radec_deg(t.jd)
    assert np.max(_sep_deg(ra, dec, ra_ref, dec_ref)) < SUN_BOUND_DEG


# --- Moon ---------------------------------------------------------------------------------------


def test_moon_matches_meeus_example_47a():
    # Meeus, Example 47.a: apparent Moon 1992-04-12 0h TD (authorities.sun_moon).
    ra, dec = places_of_date.moon_radec_deg(sun_moon.MOON_MEEUS_47A_JD_TT)
    assert _sep_deg(ra, dec, sun_moon.MOON_MEEUS_47A_RA_DEG, sun_moon.MOON_MEEUS_47A_DEC_DEG) < MOON_BOUND_DEG


def test_moon_geocentric_matches_astropy_over_a_century():
    # astropy get_body('moon') with the builtin ephemeris, to the true equator of date.
    t = Time(_random_jd(400), format="jd", scale="tt")
    with solar_system_ephemeris.set("builtin"):
        ra_ref, dec_ref = _tete_radec(get_body("moon", t), t)
    ra, dec = places_of_date.moon_radec_deg(t.jd)
    assert np.max(_sep_deg(ra, dec, ra_ref, dec_ref)) < MOON_BOUND_DEG


@pytest.mark.parametrize("lat_deg, lon_deg, elev_m", [(-30.0, -60.5, 2400.0), (63.0, 25.0, 0.0), (5.0, 140.0, 4100.0)])
def test_moon_topocentric_matches_astropy(lat_deg, lon_deg, elev_m):
    # astropy get_body('moon', location=...) to TETE at the site (invented sites).
    t = Time(_random_jd(200), format="jd", scale="utc")
    site = EarthLocation.from_geodetic(lon_deg * u.deg, lat_deg * u.deg, elev_m * u.m)
    with solar_system_ephemeris.set("builtin"):
        ra_ref, dec_ref = _tete_radec(get_body("moon", t, location=site), t, site)
    ra, dec = local_sky.moon_topocentric_radec_deg(t.tt.jd, t.jd, lat_deg, lon_deg, elev_m)
    assert np.max(_sep_deg(ra, dec, ra_ref, dec_ref)) < MOON_BOUND_DEG
    # The parallax is what is being corrected: geocentric positions miss by far more.
    ra_geo, dec_geo = places_of_date.moon_radec_deg(t.tt.jd)
    assert np.max(_sep_deg(ra_geo, dec_geo, ra_ref, dec_ref)) > 0.5


def test_moon_illuminated_fraction_matches_pyephem():
    # PyEphem Moon.moon_phase: illuminated fraction of the disc.
    jd_utc = _random_jd(300)
    ours = places_of_date.moon_illuminated_fraction(timescales.jd_tt_from_utc(jd_utc))
    ref = np.array([ephem.Moon(ephem.Date(jd - EPHEM_EPOCH_JD)).moon_phase for jd in jd_utc])
    assert np.max(np.abs(ours - ref)) < 0.01
    assert ours.min() < 0.05 and ours.max() > 0.95  # the sample spans new and full Moon


def test_moon_illuminated_fraction_meeus_example_48a():
    # Meeus, Example 48.a: illuminated fraction at 1992-04-12 0h TD (authorities.sun_moon).
    fraction = places_of_date.moon_illuminated_fraction(sun_moon.MOON_MEEUS_47A_JD_TT)
    assert abs(fraction - sun_moon.MOON_MEEUS_48A_ILLUMINATED) < 0.01


# --- Precession, altitude, refraction -----------------------------------------------------------


def _random_stars(n):
    ra = RNG.uniform(0, 360, n)
    dec = np.degrees(np.arcsin(RNG.uniform(-1, 1, n)))
    return ra, dec


def test_precession_to_date_matches_astropy_tete():
    # astropy SkyCoord ICRS -> TETE (IAU 2006/2000A precession-nutation, aberration).
    ra0, dec0 = _random_stars(400)
    t = Time(_random_jd(400), format="jd", scale="tt")
    ra_ref, dec_ref = _tete_radec(SkyCoord(ra=ra0 * u.deg, dec=dec0 * u.deg), t)
    ra, dec = places_of_date.precess_to_date(ra0, dec0, t.jd)
    assert np.max(_sep_deg(ra, dec, ra_ref, dec_ref)) * 3600 < STAR_BOUND_ARCSEC


def test_precession_broadcasts_stars_against_times():
    # Same astropy reference, as a (stars x times) grid.
    ra0, dec0 = _random_stars(5)
    t = Time(_random_jd(7), format="jd", scale="tt")
    ra, dec = places_of_date.precess_to_date(ra0[:, None], dec0[:, None], t.jd[None, :])
    assert ra.shape == (5, 7)
    star = SkyCoord(ra=ra0[:, None] * u.deg, dec=dec0[:, None] * u.deg)
    ra_ref, dec_ref = _tete_radec(star, t[None, :])
    assert np.max(_sep_deg(ra, dec, ra_ref, dec_ref)) * 3600 < STAR_BOUND_ARCSEC


SITE = dict(lat_deg=-24.6, lon_deg=-70.4, elev_m=2600.0)  # invented site


def _star_altitudes(n, pressure_hpa):
    """Our geometric altitude and astropy's AltAz altitude for random stars and times."""
    ra0, dec0 = _random_stars(n)
    t = Time(_random_jd(n, "1990-01-01", "2060-01-01"), format="jd", scale="utc")
    site = EarthLocation.from_geodetic(SITE["lon_deg"] * u.deg, SITE["lat_deg"] * u.deg, SITE["elev_m"] * u.m)
    frame = AltAz(
        obstime=t,
        location=site,
        pressure=pressure_hpa * u.hPa,
        temperature=10 * u.deg_C,
        relative_humidity=0.0,
        obswl=0.55 * u.micron,
    )
    ref = SkyCoord(ra=ra0 * u.deg, dec=dec0 * u.deg).transform_to(frame).alt.deg
    ra, dec = places_of_date.precess_to_date(ra0, dec0, t.tt.jd)
    ha = local_sky.local_sidereal_deg(t.jd, SITE["lon_deg"]) - ra
    return local_sky.altitude_deg(ha, dec, SITE["lat_deg"]), ref


def test_altitude_matches_astropy_altaz_without_refraction():
    # astropy AltAz with pressure=0 (no refraction); UT1 taken as UTC costs < 0.004 deg.
    ours, ref = _star_altitudes(500, 0.0)
    assert np.max(np.abs(ours - ref)) < 0.01


def test_refraction_matches_astropy_altaz_with_pressure():
    # astropy AltAz at 1010 hPa, 10 C, dry air, 0.55 micron (ERFA refraction), apparent alt 10-90 deg.
    # Saemundsson (1986) from true altitude and Bennett (1982) from apparent altitude (Meeus ch. 16).
    true_alt, apparent_ref = _star_altitudes(1500, 1010.0)
    up = apparent_ref >= 10.0
    assert up.sum() > 100
    apparent = true_alt + local_sky.refraction_deg(true_alt, 1010.0, 10.0)
    assert np.max(np.abs(apparent - apparent_ref)[up]) < 0.01
    recovered_true = apparent_ref - local_sky.refraction_deg(apparent_ref, 1010.0, 10.0, alt_is_apparent=True)
    assert np.max(np.abs(recovered_true - true_alt)[up]) < 0.01
    # Refraction is really there at these altitudes (up to about 5 arcmin at 10 deg).
    assert np.max(np.abs(true_alt - apparent_ref)[up]) > 0.07


@pytest.mark.parametrize("dec_deg", [-70.0, -40.0, -10.0, 0.0, 25.0, 60.0, 89.0])
def test_hour_angle_at_altitude_matches_time_above_in_astropy(dec_deg):
    # astropy AltAz over one sidereal day: the fraction of time above 30 deg is 2 H0 / 360
    # (0 if never above, 180 if always above).
    alt0 = 30.0
    t = Time("2030-03-01T00:00:00", scale="utc") + np.linspace(0, 0.99727, 2000, endpoint=False) * u.day
    site = EarthLocation.from_geodetic(SITE["lon_deg"] * u.deg, SITE["lat_deg"] * u.deg, SITE["elev_m"] * u.m)
    star = SkyCoord(ra=120.0 * u.deg, dec=dec_deg * u.deg).transform_to(TETE(obstime=t[0]))
    alt = star.transform_to(AltAz(obstime=t, location=site, pressure=0)).alt.deg
    fraction_above = np.mean(alt > alt0)
    half_width = local_sky.hour_angle_at_altitude_deg(alt0, star.dec.deg, SITE["lat_deg"])
    assert abs(2 * half_width / 360.0 - fraction_above) < 0.002


def test_hour_angle_at_altitude_at_the_poles_is_all_or_nothing():
    # At a geographic pole a star's altitude equals +-declination at every hour angle
    # (spherical astronomy, common practice, no source).
    half = local_sky.hour_angle_at_altitude_deg(30.0, np.array([20.0, 40.0, -40.0]), np.array([90.0, 90.0, -90.0]))
    np.testing.assert_array_equal(half, [0.0, 180.0, 180.0])


# --- Darkness -----------------------------------------------------------------------------------


def _ephem_next_crossing(observer, rising, from_jd, max_days=400):
    """PyEphem's next setting/rising of the Sun's centre after from_jd (JD UTC), stepping over
    days when the Sun does not cross the horizon."""
    sun = ephem.Sun()
    search = observer.next_rising if rising else observer.next_setting
    jd = from_jd
    for _ in range(max_days):
        observer.date = ephem.Date(jd - EPHEM_EPOCH_JD)
        try:
            return float(search(sun, use_center=True)) + EPHEM_EPOCH_JD
        except ephem.CircumpolarError:
            jd += 1.0
    return np.inf


def _ephem_observer(lat_deg, lon_deg, elev_m, sun_alt_deg):
    observer = ephem.Observer()
    observer.lat, observer.lon = str(lat_deg), str(lon_deg)
    observer.elevation = elev_m
    observer.pressure = 0.0  # geometric altitude, as the twilight convention wants
    observer.horizon = str(sun_alt_deg)
    return observer


# Invented sites: latitude, east longitude, elevation.
DARK_SITES = [(-30.0, -70.7, 2200.0), (19.0, -155.0, 3000.0), (45.0, 7.5, 500.0), (63.0, -20.9, 50.0),
              (68.0, 27.0, 300.0), (80.0, 15.0, 10.0)]


@pytest.mark.parametrize("sun_alt_deg", sorted(sun_moon.TWILIGHT_SUN_ALT_DEG.values(), reverse=True))
@pytest.mark.parametrize("lat_deg, lon_deg, elev_m", DARK_SITES)
def test_dark_intervals_match_pyephem(lat_deg, lon_deg, elev_m, sun_alt_deg):
    # PyEphem Observer (pressure=0, use_center=True, horizon=sun_alt): each start is the next
    # setting after the previous end, each end the next rising after its start; this chain also
    # shows that no interval is missing. Twilight levels: authorities.sun_moon.
    jd_start = Time("2031-01-01T00:00:00", scale="utc").jd
    jd_end = jd_start + 365.0
    starts, ends = local_sky.dark_intervals(lat_deg, lon_deg, elev_m, jd_start, jd_end, sun_alt_deg)
    assert np.all(ends > starts) and np.all(starts[1:] > ends[:-1])
    observer = _ephem_observer(lat_deg, lon_deg, elev_m, sun_alt_deg)
    one_minute = 1.0 / 1440.0
    search_from = jd_start
    worst_s = 0.0
    for start, end in zip(starts, ends):
        if start > jd_start:
            worst_s = max(worst_s, abs(_ephem_next_crossing(observer, False, search_from) - start) * 86400)
        if end < jd_end:
            worst_s = max(worst_s, abs(_ephem_next_crossing(observer, True, start + one_minute) - end) * 86400)
        search_from = end + one_minute
    assert worst_s < TWILIGHT_BOUND_S
    assert _ephem_next_crossing(observer, False, search_from) > jd_end - one_minute


def test_no_astronomical_darkness_at_68_north_in_june():
    # PyEphem: the Sun's centre stays above -18 deg all day in mid-June at 68 N (AlwaysUpError).
    lat, lon, elev = 68.0, 27.0, 300.0
    jd_start = Time("2032-06-01T00:00:00", scale="utc").jd
    starts, _ = local_sky.dark_intervals(lat, lon, elev, jd_start, jd_start + 30.0, -18.0)
    assert starts.size == 0
    observer = _ephem_observer(lat, lon, elev, -18.0)
    observer.date = ephem.Date(jd_start + 14.0 - EPHEM_EPOCH_JD)
    with pytest.raises(ephem.AlwaysUpError):
        observer.next_setting(ephem.Sun(), use_center=True)


def test_polar_night_is_one_interval_spanning_days():
    # At 80 N the Sun stays below -6 deg for weeks around the December solstice (PyEphem
    # NeverUpError on the solstice); one merged interval must cover it, ends checked above.
    lat, lon, elev = 80.0, 15.0, 10.0
    solstice = Time("2031-12-22T00:00:00", scale="utc").jd
    starts, ends = local_sky.dark_intervals(lat, lon, elev, solstice - 60.0, solstice + 60.0, -6.0)
    around = (starts < solstice) & (ends > solstice)
    assert around.sum() == 1 and (ends - starts)[around][0] > 10.0
    observer = _ephem_observer(lat, lon, elev, -6.0)
    observer.date = ephem.Date(solstice - EPHEM_EPOCH_JD)
    with pytest.raises(ephem.NeverUpError):
        observer.next_rising(ephem.Sun(), use_center=True)


@pytest.mark.parametrize("lat_deg", [90.0, -90.0])
def test_dark_intervals_at_the_poles_follow_the_suns_declination(lat_deg):
    # At a pole the Sun's geometric altitude is +-(its declination of date); declinations from
    # astropy get_sun in TETE. Dark at mid-interval, light at mid-gap, and no NaN anywhere.
    jd_start = Time("2030-01-01T00:00:00", scale="utc").jd
    starts, ends = local_sky.dark_intervals(lat_deg, 0.0, 0.0, jd_start, jd_start + 3652.5, 0.0)
    assert np.all(np.isfinite(starts)) and np.all(np.isfinite(ends))
    assert np.all(ends > starts) and np.all(starts[1:] > ends[:-1])
    assert 9 <= starts.size <= 11  # one polar night a year
    mids_dark = 0.5 * (starts + ends)
    mids_light = 0.5 * (ends[:-1] + starts[1:])
    t = Time(np.concatenate([mids_dark, mids_light]), format="jd", scale="utc")
    _, dec = _tete_radec(get_sun(t), t)
    alt = np.sign(lat_deg) * dec
    assert np.all(alt[: mids_dark.size] < 0.0) and np.all(alt[mids_dark.size :] > 0.0)


def test_dark_intervals_clip_to_the_requested_range():
    # Intervals under way at the range ends are cut there (PyEphem: the Sun's centre is below
    # -12 deg at local midnight at 45 N in January).
    lat, lon = 45.0, 0.0
    jd_start = Time("2031-01-15T00:00:00", scale="utc").jd  # local midnight at lon 0
    observer = _ephem_observer(lat, lon, 0.0, -12.0)
    observer.date = ephem.Date(jd_start - EPHEM_EPOCH_JD)
    sun = ephem.Sun(observer)
    assert np.degrees(float(sun.alt)) < -12.0
    starts, ends = local_sky.dark_intervals(lat, lon, 0.0, jd_start, jd_start + 2.0, -12.0)
    assert starts.size == 3  # the rest of this night, the next night, the start of the third
    assert starts[0] == jd_start and ends[-1] == jd_start + 2.0


@pytest.mark.parametrize(
    "kwargs",
    [
        dict(lat_deg=95.0),
        dict(lon_deg=float("nan")),
        dict(jd_utc_end=2462000.0),
        dict(sun_alt_deg=-95.0),
    ],
)
def test_dark_intervals_reject_bad_input(kwargs):
    # Project rule: bad input raises InputError naming the field.
    args = dict(lat_deg=45.0, lon_deg=0.0, elev_m=0.0, jd_utc_start=2462500.0, jd_utc_end=2462600.0, sun_alt_deg=-18.0)
    args.update(kwargs)
    with pytest.raises(InputError, match=next(iter(kwargs))):
        local_sky.dark_intervals(**args)


def test_azimuth_matches_astropy_altaz():
    # astropy AltAz (pressure 0) is the reference; azimuth north 0, east 90.
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, HADec, SkyCoord
    from astropy.time import Time

    rng = np.random.default_rng(11)
    location = EarthLocation.from_geodetic(-70 * u.deg, -30 * u.deg, 2000 * u.m)
    time = Time("2031-03-01T05:00:00", scale="utc")
    ha, dec = rng.uniform(-180, 180, 200), rng.uniform(-80, 80, 200)
    hadec = SkyCoord(ha=ha * u.deg, dec=dec * u.deg, frame=HADec(obstime=time, location=location))
    altaz = hadec.transform_to(AltAz(obstime=time, location=location))
    got = local_sky.azimuth_deg(ha, dec, -30.0)
    difference = (got - altaz.az.deg + 180.0) % 360.0 - 180.0
    assert np.max(np.abs(difference)[altaz.alt.deg < 85]) < 0.02
