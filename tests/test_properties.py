"""Properties of vigil's windows over random valid targets and sites (hypothesis, fast engine).

- Mid-times seen at the site strictly increase with epoch: T0 + nP grows by P > 0 per epoch,
  and the barycentric light-time changes by < 1e-4 s per s (Eastman, Siverd & Gaudi 2010),
  so it cannot reverse the order.
- The 1-sigma mid-time uncertainty never decreases with distance from the reference epoch:
  with no T0-P covariance, sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2 (first-order error
  propagation) grows with |n|.
- Every `full` window lies inside one night and above the altitude limit: checked with
  astropy (vigil.sky: the Sun's geometric altitude, the target's apparent altitude with the
  site's pressure) at samples from 1 minute after its start to 1 minute before its end.
- observable_fraction lies in [0, 1] and is exactly 1 for `full` (visibility.classify).
- Random valid target rows and sites, written as files, are read back unchanged.
"""

import csv
import io
import math
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
from astropy.time import Time
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from vigil import sky
from vigil.catalog import read_sites, read_targets
from vigil.constraints import TWILIGHT_SUN_ALT_DEG
from vigil.sites import Site
from vigil.timescales import earth_location
from vigil.windows import plan_windows

JD_2027_UTC = 2_461_406.5  # 2027-01-01T00:00:00 UTC
SPAN_D = 12.0
EDGE_TOLERANCE_D = 1.0 / 1440.0  # 1 minute
ALTITUDE_TOLERANCE_DEG = 0.05
SAMPLES_PER_WINDOW = 9
WINDOWS_CHECKED = 4
PROPERTY_SETTINGS = dict(deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def scenarios(draw):
    """(targets table, site, constraint overrides, start, end): targets placed so that some
    transits fall at night (RA near the anti-solar point, Dec near the zenith)."""
    start_jd = draw(st.floats(JD_2027_UTC, JD_2027_UTC + 1400.0))
    latitude = draw(st.floats(-55.0, 55.0))
    # Anti-solar RA from the Sun's mean longitude, about 0.9856 deg per day from 280.46 deg at
    # J2000.0 (Astronomical Almanac low-precision formula, from memory); rough is enough here.
    anti_sun_ra = (280.46 + 0.9856474 * (start_jd + SPAN_D / 2 - 2_451_545.0) + 180.0) % 360.0
    rows = []
    for i in range(draw(st.integers(1, 3))):
        period = draw(st.floats(0.5, 4.0))
        rows.append({
            "name": f"Prueba-{i} b",
            "ra_deg": (anti_sun_ra + draw(st.floats(-45.0, 45.0))) % 360.0,
            "dec_deg": float(np.clip(latitude + draw(st.floats(-30.0, 30.0)), -89.0, 89.0)),
            "t0_bjd_tdb": draw(st.floats(start_jd - 1500.0, start_jd + 30.0)),
            "t0_err_d": draw(st.floats(0.0, 0.004)),
            "period_d": period,
            "period_err_d": draw(st.floats(0.0, 3e-6)),
            "duration_h": draw(st.floats(0.5, min(5.0, period * 24.0 * 0.15))),
            "t0_period_cov_d2": 0.0,
        })
    site = Site(name="sitio_prueba", latitude_deg=latitude, longitude_deg=draw(st.floats(-180.0, 180.0)),
                elevation_m=draw(st.floats(0.0, 4500.0)), pressure_hpa=draw(st.none() | st.floats(550.0, 1040.0)),
                temperature_c=draw(st.floats(-15.0, 30.0)))
    overrides = {"min_altitude_deg": draw(st.floats(15.0, 50.0)),
                 "twilight": draw(st.sampled_from(["civil", "nautical", "astronomical"])),
                 "baseline_h": draw(st.floats(0.0, 1.5)), "sigma_k": draw(st.floats(0.0, 3.0)), "moon_sep_deg": 0.0}
    start = Time(start_jd, format="jd", scale="utc")
    return pd.DataFrame(rows), site, overrides, start, Time(start_jd + SPAN_D, format="jd", scale="utc")


def _windows(scenario) -> pd.DataFrame:
    targets, site, overrides, start, end = scenario
    return plan_windows(targets, {site.name: site}, overrides, start, end, engine="fast", include_unobservable=True)


@settings(max_examples=40, **PROPERTY_SETTINGS)
@given(scenario=scenarios())
def test_mid_times_increase_sigma_grows_and_fractions_are_bounded(scenario):
    windows = _windows(scenario)
    for _, rows in windows.groupby("target"):
        rows = rows.sort_values("epoch")
        assert np.all(np.diff(rows["epoch"].to_numpy()) == 1)
        assert np.all(np.diff(rows["mid_jd_utc"].to_numpy()) > 0)
        by_distance = rows.iloc[np.argsort(np.abs(rows["epoch"].to_numpy()), kind="stable")]
        sigma = by_distance["mid_sigma_d"].to_numpy()
        assert np.all(np.diff(sigma) >= -1e-12 * sigma[1:])
    fraction = windows["observable_fraction"].to_numpy()
    assert np.all((fraction >= 0.0) & (fraction <= 1.0))
    assert np.all(fraction[windows["coverage"].to_numpy() == "full"] == 1.0)


@settings(max_examples=20, **PROPERTY_SETTINGS)
@given(scenario=scenarios())
def test_full_windows_lie_in_one_night_above_the_altitude_limit(scenario):
    targets, site, overrides, _, _ = scenario
    full = _windows(scenario).query("coverage == 'full'").head(WINDOWS_CHECKED)
    event(f"full windows checked: {len(full)}")
    if full.empty:
        return
    inner = np.linspace(0.0, 1.0, SAMPLES_PER_WINDOW)
    first = full["window_start_jd_utc"].to_numpy()[:, None] + EDGE_TOLERANCE_D
    last = full["window_end_jd_utc"].to_numpy()[:, None] - EDGE_TOLERANCE_D
    jd = (first + (last - first) * inner).ravel()
    times = Time(jd, format="jd", scale="utc")
    location = earth_location(site.latitude_deg, site.longitude_deg, site.elevation_m)
    sun_limit = TWILIGHT_SUN_ALT_DEG[overrides["twilight"]]
    assert np.all(sky.sun_altitude_deg(times, location) < sun_limit)
    ra = np.repeat(full["ra_deg"].to_numpy(), SAMPLES_PER_WINDOW)
    dec = np.repeat(full["dec_deg"].to_numpy(), SAMPLES_PER_WINDOW)
    altitude, _ = sky.target_altaz_deg(ra, dec, times, location, site.air_pressure_hpa, site.temperature_c)
    assert np.all(altitude >= overrides["min_altitude_deg"] - ALTITUDE_TOLERANCE_DEG)


# --- random valid files read back unchanged --------------------------------------------------

_NAME_CHARACTERS = st.characters(categories=("L", "N"), include_characters=" -,'\"+.áéñøß")
_names = st.text(_NAME_CHARACTERS, min_size=1, max_size=24).map(str.strip).filter(bool)


@st.composite
def target_rows(draw):
    period = draw(st.floats(0.05, 5000.0))
    return {"name": draw(_names), "ra_deg": draw(st.floats(0.0, 360.0, exclude_max=True)),
            "dec_deg": draw(st.floats(-90.0, 90.0)), "t0_bjd_tdb": draw(st.floats(2.4e6, 2.6e6)),
            "t0_err_d": draw(st.floats(0.0, 0.01)), "period_d": period,
            "period_err_d": draw(st.floats(0.0, period * 0.009)),
            "duration_h": draw(st.floats(0.01, min(24.0, period * 24.0 * 0.999)))}  # clear of the duration < period limit


def _write(folder: str, name: str, text: str, bom: bool) -> Path:
    path = Path(folder) / name
    path.write_bytes((b"\xef\xbb\xbf" if bom else b"") + text.encode("utf-8"))
    return path


@settings(max_examples=60, **PROPERTY_SETTINGS)
@given(rows=st.lists(target_rows(), min_size=1, max_size=6, unique_by=lambda r: r["name"]),
       bom=st.booleans(), line_end=st.sampled_from(["\n", "\r\n"]), blank_after=st.booleans())
def test_random_valid_targets_are_read_back_unchanged(rows, bom, line_end, blank_after):
    # Python's csv module (RFC 4180 quoting) writes the file; repr() keeps every float exact.
    buffer = io.StringIO()
    writer = csv.DictWriter(buffer, fieldnames=list(rows[0]), lineterminator=line_end)
    writer.writeheader()
    for row in rows:
        writer.writerow({k: repr(v) if isinstance(v, float) else v for k, v in row.items()})
        if blank_after:
            buffer.write(line_end)
    with tempfile.TemporaryDirectory() as folder:
        table = read_targets(_write(folder, "targets.csv", buffer.getvalue(), bom))
    assert table["name"].tolist() == [r["name"] for r in rows]
    for column in rows[0]:
        if column != "name":
            assert table[column].tolist() == [r[column] for r in rows], column
    assert (table["t0_period_cov_d2"] == 0.0).all()


@settings(max_examples=60, **PROPERTY_SETTINGS)
@given(latitude=st.floats(-90.0, 90.0), longitude=st.floats(-180.0, 360.0), elevation=st.floats(-500.0, 9000.0),
       bom=st.booleans())
def test_random_valid_sites_are_read_back_on_the_same_meridian(latitude, longitude, elevation, bom):
    text = (f"[sites.sitio_prueba]\nlatitude_deg = {latitude!r}\nlongitude_deg = {longitude!r}\n"
            f"elevation_m = {elevation!r}\n")
    with tempfile.TemporaryDirectory() as folder:
        site = read_sites(_write(folder, "sites.toml", text, bom))["sitio_prueba"]
    assert site.latitude_deg == latitude and site.elevation_m == elevation
    assert -180.0 < site.longitude_deg <= 180.0
    # Same meridian: longitudes that differ by a whole turn (360 deg) name the same place.
    turns = (site.longitude_deg - longitude) / 360.0
    assert math.isclose(turns, round(turns), abs_tol=1e-12)
