"""The fast visibility engine against the astropy reference engine and astropy positions.

References: vigil.engines.reference (astropy get_sun, AltAz with refraction and topocentric
get_body sampled every 5 min: the project's truth for visibility, itself checked against
PyEphem in test_visibility.py); astropy's TETE frame, get_body and the builtin ephemeris for
the tabulated positions; the linear-interpolation error bound |f - L| <= h^2 max|f''| / 8
(standard numerical analysis, from memory).

The workload is invented and seeded: targets over the whole sky, periods 0.5-50 d, durations
1-6 h, four invented sites (one above 60 deg N, where summer nights never get dark enough)
with the three twilights, with and without a Moon limit, over four short spans spread over a
year. Every transit, observable or not, is compared.
"""

import astropy.units as u
import erfa
import numpy as np
import pandas as pd
import pytest
from astropy.coordinates import (TETE, CartesianRepresentation, SkyCoord, get_body, get_body_barycentric,
                                 solar_system_ephemeris)
from astropy.time import Time

from vigil import local_sky, places_of_date, timescales, visibility, windows
from vigil.constraints import Constraints, resolve_constraints
from vigil.engines import fast as fast_engine
from vigil.engines import reference as reference_engine
from vigil.sites import Site
from vigil.timescales import earth_location

from conftest import random_targets

SITES = {
    "austral_ridge": Site("austral_ridge", -29.26, -70.73, 2400.0,
                          defaults={"twilight": "astronomical", "min_altitude_deg": 30.0}),
    "isla_cima": Site("isla_cima", 19.82, -155.47, 4100.0,
                      defaults={"twilight": "nautical", "min_altitude_deg": 25.0, "moon_sep_deg": 40.0}),
    "mittelberg": Site("mittelberg", 47.08, 11.38, 900.0, defaults={"twilight": "civil", "min_altitude_deg": 20.0}),
    "fjellstua": Site("fjellstua", 69.65, 18.96, 100.0,
                      defaults={"twilight": "nautical", "min_altitude_deg": 15.0, "moon_sep_deg": 30.0}),
}
SPAN_STARTS = ("2027-03-18", "2027-06-19", "2027-09-20", "2027-12-19")  # equinoxes and solstices
SPAN_D = 4.0
N_TARGETS = 12
SEED = 20270318

MINUTE_D = 1.0 / 1440.0
EDGE_TOLERANCE_S = 60.0
# Fastest change of a constraint margin: an altitude (target or Sun) changes by at most
# 15 deg/h (the Earth's rotation), so 60 s of motion moves a margin by at most 0.25 deg.
MARGIN_PER_MINUTE_DEG = 0.25
ALT_TOLERANCE_DEG = 0.05
# Below about 5 deg the refraction models part ways: astropy (ERFA's A tan z + B tan^3 z) is
# not meant for large zenith distances and the fast path's Saemundsson (1986) formula is; they
# differ by tenths of a degree at the horizon, so altitudes are compared above 5 deg only.
ALT_COMPARED_ABOVE_DEG = 5.0
MOON_TOLERANCE_DEG = 0.2
MID_TOLERANCE_S = 0.1
CLASS_COLUMNS = ["coverage", "observable_fraction", "observable_start_jd_utc", "observable_end_jd_utc"]


def _targets(n: int, seed: int) -> pd.DataFrame:
    return random_targets(n, seed, "Wren-{} b", periods_d=(0.5, 50.0), t0_base=2461000.0, t0_err_d=(1e-4, 3e-3),
                          duration_h=(1.0, 6.0))


def _constraints(site_name: str) -> Constraints:
    return resolve_constraints(SITES[site_name].defaults, {})


def _stretches(observable, n: int):
    """An interval set (row, start, end) as a list of (start, end) lists, one per row."""
    found = [[] for _ in range(n)]
    for r, s, e in zip(*observable):
        found[r].append((s, e))
    return found


def _reference_rows(fast_rows: pd.DataFrame, site: Site):
    """The reference engine on the fast engine's padded windows of one site (which differ from
    its own by the < 0.1 s of mid-time checked below): its results as columns suffixed _ref,
    and its stretches."""
    constraints = _constraints(site.name)
    observable = reference_engine.observable_intervals(fast_rows, site, constraints)
    classified = visibility.classify(fast_rows, observable, constraints.sigma_k)[CLASS_COLUMNS]
    reference = pd.concat([classified, reference_engine.conditions_at_mid(fast_rows, site)], axis=1)
    reference["mid_jd_utc"] = reference_engine.site_mid_jd_utc(fast_rows, site)
    return reference.add_suffix("_ref"), _stretches(observable, len(fast_rows))


@pytest.fixture(scope="module")
def paired():
    """Per transit and site, the fast engine's row with the reference's results beside it
    (suffix _ref), and each engine's observable stretches (lists of (start, end), JD UTC)."""
    targets = _targets(N_TARGETS, SEED)
    tables, stretches = [], {"fast": [], "reference": []}
    for first in SPAN_STARTS:
        start = Time(first, scale="utc")
        fast = windows.plan_windows(targets, SITES, {}, start, start + SPAN_D * u.day, include_unobservable=True)
        for name, rows in fast.groupby("site", sort=False):
            rows = rows.reset_index(drop=True)
            site = SITES[name]
            reference, found = _reference_rows(rows, site)
            tables.append(rows.join(reference))
            stretches["reference"] += found
            stretches["fast"] += _stretches(fast_engine.observable_intervals(rows, site, _constraints(name)), len(rows))
    return pd.concat(tables, ignore_index=True), stretches


def _reference_margin_deg(table: pd.DataFrame, positions, jd_utc) -> np.ndarray:
    """The reference path's smallest constraint margin (deg, >= 0 observable) for rows at instants."""
    positions, jd_utc = np.asarray(positions), np.asarray(jd_utc, dtype=float)
    margin = np.empty(jd_utc.size)
    sites = table["site"].to_numpy()[positions]
    for name in np.unique(sites):
        pick = np.flatnonzero(sites == name)
        rows = table.iloc[positions[pick]].reset_index(drop=True)
        margin[pick] = reference_engine.constraint_margin_deg(rows, np.arange(pick.size),
                                                            jd_utc[pick], SITES[name], _constraints(name))
    return margin


def _interior_edges(stretches, lo, hi):
    """(time, is_start) of the edges of a row's stretches that are not the window's own ends."""
    return [(s, True) for s, _ in stretches if s > lo] + [(e, False) for _, e in stretches if e < hi]


def test_workload_exercises_every_case(paired):
    # A test that can fail: every coverage class, every twilight, a Moon limit that cuts
    # windows, and a site where nights stay bright (PyEphem/astropy-verified dark_intervals,
    # test_almanac.py) must all be present, or the agreement below proves little.
    table, _ = paired
    assert set(table["coverage_ref"]) == {"full", "ingress", "egress", "partial", "none"}
    assert {_constraints(name).twilight for name in SITES} == {"civil", "nautical", "astronomical"}
    assert max(abs(site.latitude_deg) for site in SITES.values()) > 60.0
    june = Time(SPAN_STARTS[1], scale="utc").jd
    north = SITES["fjellstua"]
    dark = local_sky.dark_intervals(north.latitude_deg, north.longitude_deg, north.elevation_m, june, june + SPAN_D,
                                  _constraints("fjellstua").sun_altitude_deg)
    assert dark[0].size == 0  # no nautical darkness at 69.65 N in late June
    moon_cut = 0
    for name in ("isla_cima", "fjellstua"):
        rows = table[table["site"] == name].reset_index(drop=True)
        site, with_moon = SITES[name], _constraints(name)
        without_moon = Constraints(**{**with_moon.__dict__, "moon_sep_deg": 0.0})
        fraction = {}
        for label, constraints in (("with", with_moon), ("without", without_moon)):
            observable = fast_engine.observable_intervals(rows, site, constraints)
            fraction[label] = visibility.classify(rows, observable, constraints.sigma_k)[
                "observable_fraction"].to_numpy()
        moon_cut += int(np.sum(fraction["with"] < fraction["without"] - 1e-6))
    assert moon_cut >= 3


def test_mid_times_agree_within_a_tenth_of_a_second(paired):
    # Reference: astropy light travel time (reference_engine.site_mid_jd_utc).
    table, _ = paired
    worst_s = np.max(np.abs(table["mid_jd_utc"] - table["mid_jd_utc_ref"])) * 86400.0
    print(f"mid-time UTC: worst {worst_s * 1000:.1f} ms over {len(table)} transit-site rows")
    assert worst_s < MID_TOLERANCE_S


def test_fast_edges_are_within_a_minute_of_the_reference_constraint_crossings(paired):
    # At every edge the fast engine places inside a window, the reference's constraint margin
    # (astropy, evaluated directly, not from its 5-min samples) must change sign within 60 s:
    # not observable a minute before a start and observable a minute after it, and the mirror
    # for an end. This holds even for short stretches, where the reference's own interpolated
    # edges are poor (it interpolates the smallest margin linearly across a switch of the
    # binding constraint).
    table, stretches = paired
    positions, times, is_start = [], [], []
    for position, found in enumerate(stretches["fast"]):
        for edge, start in _interior_edges(found, table["window_start_jd_utc"][position],
                                           table["window_end_jd_utc"][position]):
            positions.append(position)
            times.append(edge)
            is_start.append(start)
    positions, times, is_start = np.array(positions), np.array(times), np.array(is_start)
    offset = EDGE_TOLERANCE_S / 86400.0
    before = _reference_margin_deg(table, positions, times - offset)
    after = _reference_margin_deg(table, positions, times + offset)
    crossing = np.where(is_start, (before < 0) & (after >= 0), (before >= 0) & (after < 0))
    print(f"{positions.size} interior fast edges; {np.count_nonzero(~crossing)} without a reference crossing "
          "within 60 s")
    assert positions.size > 50
    assert np.all(crossing)


def test_main_stretch_edges_agree_within_a_minute(paired):
    # observable_start/end of both engines where both report the same stretch. A stretch
    # shorter than 15 min is left to the margin test above: the reference's 5-min samples
    # cannot place both of its edges there.
    table, _ = paired
    both = table["observable_start_jd_utc"].notna() & table["observable_start_jd_utc_ref"].notna()
    long_enough = (table["observable_end_jd_utc_ref"] - table["observable_start_jd_utc_ref"]) > 15 * MINUTE_D
    chosen = table[both & long_enough]
    worst_s = max(np.max(np.abs(chosen["observable_start_jd_utc"] - chosen["observable_start_jd_utc_ref"])),
                  np.max(np.abs(chosen["observable_end_jd_utc"] - chosen["observable_end_jd_utc_ref"]))) * 86400.0
    print(f"observable start/end: worst {worst_s:.1f} s over {len(chosen)} stretches")
    assert len(chosen) > 50
    assert worst_s < EDGE_TOLERANCE_S


def _disagreement_explained(table, stretches, position) -> bool:
    """A coverage class may differ where the transit sits within a minute of a limit: one of
    either engine's stretch edges lies within 60 s of an instant the classes are decided at
    (window start or end, ingress, egress, mid -/+ k sigma) and the reference margin there is
    within 60 s of motion of zero, or a stretch one engine finds inside the transit is so
    grazing that the reference margin nowhere in it exceeds 60 s of motion."""
    row = table.iloc[position]
    ksig = _constraints(row["site"]).sigma_k * row["mid_sigma_d"]
    lo, hi = row["window_start_jd_utc"], row["window_end_jd_utc"]
    decided_at = np.array([lo, hi, row["ingress_jd_utc"], row["egress_jd_utc"],
                           row["mid_jd_utc"] - ksig, row["mid_jd_utc"] + ksig])
    edges = np.array([edge for engine in ("fast", "reference")
                      for edge, _ in _interior_edges(stretches[engine][position], lo, hi)])
    if edges.size:
        near_decision = np.min(np.abs(edges[:, None] - decided_at[None, :]), axis=1) <= EDGE_TOLERANCE_S / 86400.0
        margin = _reference_margin_deg(table, np.full(edges.size, position), edges)
        if np.any(near_decision & (np.abs(margin) <= MARGIN_PER_MINUTE_DEG)):
            return True
    for engine in ("fast", "reference"):
        for start, end in stretches[engine][position]:
            inside = np.linspace(start, end, 9)
            if np.max(_reference_margin_deg(table, np.full(inside.size, position), inside)) <= MARGIN_PER_MINUTE_DEG:
                return True
    return False


def test_coverage_classes_agree_except_within_a_minute_of_a_limit(paired):
    table, stretches = paired
    differ = np.flatnonzero(table["coverage"].to_numpy() != table["coverage_ref"].to_numpy())
    identical = 1.0 - differ.size / len(table)
    print(f"coverage identical for {identical:.2%} of {len(table)} transit-site rows; {differ.size} differ")
    unexplained = [p for p in differ if not _disagreement_explained(table, stretches, p)]
    assert not unexplained, table.iloc[unexplained][["target", "site", "coverage", "coverage_ref"]]
    assert identical >= 0.99


def test_conditions_at_mid_agree(paired):
    # alt_mid_deg: both apparent (refraction for the site's pressure); sun_alt_mid_deg:
    # geometric Sun centre; moon_sep_deg: topocentric Moon (astropy get_body with location).
    table, _ = paired
    up = table["alt_mid_deg_ref"] > ALT_COMPARED_ABOVE_DEG
    worst_alt = np.max(np.abs(table["alt_mid_deg"] - table["alt_mid_deg_ref"])[up])
    worst_sun = np.max(np.abs(table["sun_alt_mid_deg"] - table["sun_alt_mid_deg_ref"]))
    worst_moon = np.max(np.abs(table["moon_sep_deg"] - table["moon_sep_deg_ref"]))
    # moon_alt_mid_deg: geometric altitude of the topocentric Moon's centre (astropy AltAz, no refraction).
    worst_moon_alt = np.max(np.abs(table["moon_alt_mid_deg"] - table["moon_alt_mid_deg_ref"]))
    print(f"at mid-transit: altitude {worst_alt:.4f} deg (above {ALT_COMPARED_ABOVE_DEG} deg), "
          f"Sun {worst_sun:.4f} deg, Moon separation {worst_moon:.4f} deg, Moon altitude {worst_moon_alt:.4f} deg")
    assert up.sum() > 50
    assert worst_alt < ALT_TOLERANCE_DEG
    assert worst_sun < ALT_TOLERANCE_DEG
    assert worst_moon < MOON_TOLERANCE_DEG
    assert worst_moon_alt < MOON_TOLERANCE_DEG
    assert (table["moon_alt_mid_deg_ref"] < 0).any() and (table["moon_alt_mid_deg_ref"] > 0).any()


# --- tabulated positions -------------------------------------------------------------------

RNG = np.random.default_rng(7)
JD_UTC = np.sort(RNG.uniform(Time("2026-01-01").jd, Time("2036-01-01").jd, 3000))


def _angle_arcsec(a, b):
    """Angle between the rows of (n, 3) arrays, arcsec."""
    a = a / np.linalg.norm(a, axis=1)[:, None]
    b = b / np.linalg.norm(b, axis=1)[:, None]
    return np.degrees(np.arctan2(np.linalg.norm(np.cross(a, b), axis=1), np.sum(a * b, axis=1))) * 3600.0


def test_tabulated_star_of_date_matches_direct_evaluation_and_astropy_tete():
    # Nearest node of a 3 h grid: the place of date moves by at most 0.35"/day (aberration)
    # + 0.14"/day (precession) + 0.2"/day (nutation: the IAU 1980 main terms' amplitudes times
    # frequencies add up to < 0.2"/day), so half a step (1.5 h) costs < 0.05".
    # Outside reference: astropy ICRS -> TETE (IAU 2006/2000A), within places_of_date's 1" bound.
    ra0, dec0 = RNG.uniform(0, 360, JD_UTC.size), np.degrees(np.arcsin(RNG.uniform(-1, 1, JD_UTC.size)))
    terms = fast_engine.SKY_TABLE.nearest(JD_UTC, fast_engine.SKY_STAR_OF_DATE)
    v0 = np.column_stack([np.cos(np.radians(dec0)) * np.cos(np.radians(ra0)),
                          np.cos(np.radians(dec0)) * np.sin(np.radians(ra0)), np.sin(np.radians(dec0))])
    v = np.einsum("nrc,nc->nr", terms[:, :9].reshape(-1, 3, 3), v0)
    beta = terms[:, 9:12]
    v = v + beta - np.sum(v * beta, axis=1)[:, None] * v
    jd_tt = timescales.jd_tt_from_utc(JD_UTC)
    direct_ra, direct_dec = places_of_date.precess_to_date(ra0, dec0, jd_tt)
    direct = SkyCoord(ra=direct_ra * u.deg, dec=direct_dec * u.deg).cartesian.xyz.value.T
    tete = SkyCoord(ra=ra0 * u.deg, dec=dec0 * u.deg).transform_to(TETE(obstime=Time(jd_tt, format="jd", scale="tt")))
    worst_direct, worst_astropy = np.max(_angle_arcsec(v, direct)), np.max(_angle_arcsec(v, tete.cartesian.xyz.value.T))
    print(f"star of date: {worst_direct:.4f}\" from direct evaluation, {worst_astropy:.3f}\" from astropy TETE")
    assert worst_direct < 0.05
    assert worst_astropy < 1.0


def test_tabulated_sun_and_equation_of_equinoxes_match_direct_evaluation():
    # Sun: linear over 3 h, normalised; only the change of its angular rate (eccentricity,
    # ~2"/day^2) remains: (0.125 d)^2 / 8 * 2"/d^2 < 0.01". Equation of the equinoxes: it moves
    # with the nutation in longitude, < 0.2"/day, so half a step costs < 0.0125".
    jd_tt = timescales.jd_tt_from_utc(JD_UTC)
    sun = fast_engine.SKY_TABLE.at(JD_UTC, fast_engine.SKY_SUN)
    ra, dec = places_of_date.sun_radec_deg(jd_tt)
    direct = SkyCoord(ra=ra * u.deg, dec=dec * u.deg).cartesian.xyz.value.T
    assert np.max(_angle_arcsec(sun, direct)) < 0.05
    equation = fast_engine.SKY_TABLE.nearest(JD_UTC, fast_engine.SKY_EQUATION_OF_EQUINOXES)[:, 0]
    assert np.max(np.abs(equation - local_sky.equation_of_equinoxes_deg(jd_tt))) * 3600.0 < 0.0125


def test_tabulated_moon_matches_direct_evaluation_and_astropy():
    # Linear over 1 h: the Moon's rate changes by up to ~0.6 deg/day^2 (eccentricity,
    # evection), so the direction errs by < (1/24 d)^2 / 8 * 0.6 deg/d^2 = 0.5". The chord
    # shortens the vector by theta^2 / 8 of its length, theta < 16 deg/day * 1 h = 0.0116 rad:
    # < 7 km at 406,000 km.
    # Outside reference: astropy get_body('moon') (geocentric) in TETE, within places_of_date's 0.02 deg.
    jd_tt = timescales.jd_tt_from_utc(JD_UTC)
    moon = fast_engine.MOON_TABLE.at(JD_UTC, fast_engine.MOON_XYZ)
    direct = np.column_stack(places_of_date.moon_geocentric_km(jd_tt))
    assert np.max(_angle_arcsec(moon, direct)) < 1.0
    assert np.max(np.abs(np.linalg.norm(moon, axis=1) - np.linalg.norm(direct, axis=1))) < 7.0
    times = Time(JD_UTC, format="jd", scale="utc")
    with solar_system_ephemeris.set("builtin"):
        astropy_moon = get_body("moon", times).transform_to(TETE(obstime=times))
    astropy_xyz = astropy_moon.cartesian.xyz.to_value(u.km).T
    assert np.max(_angle_arcsec(moon, astropy_xyz)) / 3600.0 < 0.02


def test_tabulated_moon_illumination_matches_direct_evaluation():
    # Linear over 1 h: k = (1 + cos i) / 2 with the phase angle i turning at < 15.5 deg/day
    # (0.27 rad/day), so |k''| < 0.27^2 / 2 per day^2 and the error < (1/24 d)^2 / 8 * 0.037 < 1e-5.
    # (The direct evaluation is checked against PyEphem in test_places_and_local_sky.)
    jd_tt = timescales.jd_tt_from_utc(JD_UTC)
    tabulated = fast_engine.MOON_TABLE.at(JD_UTC, fast_engine.MOON_ILLUMINATION)[:, 0]
    assert np.max(np.abs(tabulated - places_of_date.moon_illuminated_fraction(jd_tt))) < 1e-5


def test_tabulated_earth_matches_astropy_builtin_ephemeris():
    # Linear over 1 day: |r''| = r w^2 is largest at perihelion (0.983 au, 1.019 deg/day):
    # 3.1e-4 au/d^2, so the error is < 3.9e-5 au (20 ms of light time); the Earth's monthly
    # swing about the Earth-Moon barycentre adds < 3e-7 au. Outside reference: astropy
    # get_body_barycentric('earth') with the builtin ephemeris.
    jd_tdb = JD_UTC + 69.184 / 86400.0
    earth = timescales.EARTH_TABLE.at(jd_tdb)
    with solar_system_ephemeris.set("builtin"):
        reference = get_body_barycentric("earth", Time(jd_tdb, format="jd", scale="tdb"))
    assert isinstance(reference, CartesianRepresentation)
    worst_au = np.max(np.linalg.norm(earth - reference.xyz.to_value(u.au).T, axis=1))
    _, direct = erfa.epv00(jd_tdb, np.zeros_like(jd_tdb))
    assert np.max(np.linalg.norm(earth - direct["p"], axis=1)) < 4e-5
    assert worst_au < 4e-5


def test_topocentric_moon_moves_slower_than_the_bound_used_to_skip_sampling():
    # The fast engine settles a window's Moon limit from mid-transit alone when the separation cannot
    # reach the limit at MOON_SEPARATION_RATE_DEG_PER_D; the separation from any fixed star
    # changes no faster than the Moon moves (triangle inequality). Outside reference: astropy
    # topocentric get_body every 10 min over 35 days (a perigee included) at an equatorial
    # site at sea level, where the diurnal parallax swings fastest.
    times = Time("2027-01-01", scale="utc") + np.arange(0.0, 35.0, 10 * MINUTE_D) * u.day
    with solar_system_ephemeris.set("builtin"):
        moon = get_body("moon", times, earth_location(0.0, -70.0, 0.0))
    xyz = moon.cartesian.xyz.value.T  # each sample in its own topocentric GCRS frame: same axes
    fastest = float(np.max(_angle_arcsec(xyz[1:], xyz[:-1]) / 3600.0 / (10 * MINUTE_D)))
    print(f"topocentric Moon: fastest {fastest:.2f} deg/day; bound {fast_engine.MOON_SEPARATION_RATE_DEG_PER_D}")
    assert 18.0 < fastest < fast_engine.MOON_SEPARATION_RATE_DEG_PER_D


def test_reused_pointing_never_serves_other_windows(paired):
    # Each call answers from its own windows, whatever was asked just before; windows that
    # differ (here by one mid-time) get their own pointing. Reference: the same call on a
    # fresh copy after an unrelated call.
    table, _ = paired
    site = SITES["mittelberg"]
    rows = table[table["site"] == "mittelberg"].reset_index(drop=True)
    fast_engine.conditions_at_mid(rows, site)
    moved = rows.copy()
    moved.loc[0, "mid_jd_utc"] += 0.1
    got = fast_engine.conditions_at_mid(moved, site)
    fast_engine.conditions_at_mid(rows.iloc[:1], SITES["austral_ridge"])
    expected = fast_engine.conditions_at_mid(moved.copy(), site)
    pd.testing.assert_frame_equal(got, expected, check_exact=True)
    assert got["alt_mid_deg"].iat[0] != fast_engine.conditions_at_mid(rows, site)["alt_mid_deg"].iat[0]


def test_place_of_date_shared_by_a_run_of_sites_is_exact_for_each(paired):
    # The place of date is computed once for a run of sites with equal windows; each site must
    # still get exactly what it gets alone (reference: the same call after an unrelated one),
    # and windows that differ only in a target's coordinates get their own place.
    table, _ = paired
    rows = table[table["site"] == "mittelberg"].reset_index(drop=True)
    after_other_site = (fast_engine.conditions_at_mid(rows, SITES["austral_ridge"]),
                        fast_engine.conditions_at_mid(rows, SITES["mittelberg"]))[1]
    fast_engine.conditions_at_mid(rows.iloc[:1], SITES["austral_ridge"])
    alone = fast_engine.conditions_at_mid(rows.copy(), SITES["mittelberg"])
    pd.testing.assert_frame_equal(after_other_site, alone, check_exact=True)
    shifted = rows.copy()
    shifted.loc[0, "ra_deg"] = (shifted.loc[0, "ra_deg"] + 30.0) % 360.0
    fast_engine.conditions_at_mid(rows, SITES["mittelberg"])
    got = fast_engine.conditions_at_mid(shifted, SITES["mittelberg"])
    fast_engine.conditions_at_mid(rows.iloc[:1], SITES["austral_ridge"])
    pd.testing.assert_frame_equal(got, fast_engine.conditions_at_mid(shifted.copy(), SITES["mittelberg"]), check_exact=True)
    assert got["alt_mid_deg"].iat[0] != alone["alt_mid_deg"].iat[0]
