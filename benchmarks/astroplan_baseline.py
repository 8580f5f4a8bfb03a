"""A careful astroplan user's answer for the sweep benchmark (benchmarks/sweep.py).

For transits projected by vigil, at each site: an Observer built from our coordinates (no
site lookup), mid-times from astropy's barycentric light travel time, then AtNightConstraint
(geometric Sun) and AltitudeConstraint (refracted, for the site's pressure) at every 5-minute
sample of each whole padded window plus its decision instants, one call per target and site
for all its transits; coverage classes follow the rules of visibility.classify on those
boolean samples. Import vigil before this module: it keeps astropy offline.
"""

from __future__ import annotations

import time

import numpy as np
import pandas as pd

from vigil import visibility
from vigil.constraints import resolve_constraints

SAMPLE_MIN = 5.0


def _baseline_site_mid_jd_utc(rows: pd.DataFrame, location) -> np.ndarray:
    """Mid-times at the site from BJD_TDB by astropy's barycentric light travel time (two passes)."""
    import astropy.units as u
    from astropy.coordinates import SkyCoord
    from astropy.time import Time

    bjd = rows["mid_bjd_tdb"].to_numpy()
    target = SkyCoord(ra=rows["ra_deg"].to_numpy() * u.deg, dec=rows["dec_deg"].to_numpy() * u.deg)
    seen = Time(bjd, format="jd", scale="tdb", location=location)
    for _ in range(2):
        seen = Time(bjd, format="jd", scale="tdb", location=location) - seen.light_travel_time(target, "barycentric")
    return seen.utc.jd


def _classes_from_samples(times_jd, ok, windows: pd.DataFrame, owner, sigma_k: float) -> np.ndarray:
    """Coverage classes (visibility.classify's rules) from boolean samples of each window."""
    classes = []
    for i, w in enumerate(windows.itertuples(index=False)):
        t, good = times_jd[owner == i], ok[owner == i]
        ksig = sigma_k * w.mid_sigma_d

        def all_ok(lo, hi):
            return bool(np.all(good[(t >= lo) & (t <= hi)]))

        if all_ok(w.window_start_jd_utc, w.window_end_jd_utc):
            classes.append("full")
        elif all_ok(w.window_start_jd_utc, w.mid_jd_utc + ksig):
            classes.append("ingress")
        elif all_ok(w.mid_jd_utc - ksig, w.window_end_jd_utc):
            classes.append("egress")
        elif np.any(good[(t >= w.ingress_jd_utc) & (t <= w.egress_jd_utc)]):
            classes.append("partial")
        else:
            classes.append("none")
    return np.array(classes)


def astroplan_baseline(transits: pd.DataFrame, sites: dict, overrides: dict, start, end) -> tuple[pd.DataFrame, float]:
    """Coverage classes by astroplan of the transits seen at each site between start and end
    (astropy Times), and the seconds it took. transits: ephemeris.project_transits rows."""
    import astropy.units as u
    from astroplan import AltitudeConstraint, AtNightConstraint, FixedTarget, Observer
    from astropy.coordinates import EarthLocation, SkyCoord
    from astropy.time import Time

    began = time.perf_counter()
    results = []
    for site_name, site in sites.items():
        constraints = resolve_constraints(site.defaults, overrides)
        location = EarthLocation.from_geodetic(site.longitude_deg * u.deg, site.latitude_deg * u.deg,
                                               site.elevation_m * u.m)
        geometric = Observer(location=location, name=site_name, pressure=0 * u.hPa)
        refracted = Observer(location=location, name=site_name, pressure=site.air_pressure_hpa * u.hPa,
                             temperature=site.temperature_c * u.deg_C, relative_humidity=0.0)
        for name, group in transits.groupby("target", sort=False):
            group = group.assign(site=site_name, mid_jd_utc=_baseline_site_mid_jd_utc(group, location))
            group = group[(group["mid_jd_utc"] >= start.utc.jd) & (group["mid_jd_utc"] <= end.utc.jd)]
            if group.empty:
                continue
            padded = visibility.pad_windows(group.reset_index(drop=True), constraints)
            # every 5 minutes across each whole window, plus the instants the classes are decided at
            samples = []
            for i, w in enumerate(padded.itertuples(index=False)):
                ksig = constraints.sigma_k * w.mid_sigma_d
                grid = np.arange(w.window_start_jd_utc, w.window_end_jd_utc, SAMPLE_MIN / 1440.0)
                edges = [w.window_end_jd_utc, w.ingress_jd_utc, w.egress_jd_utc, w.mid_jd_utc - ksig,
                         w.mid_jd_utc + ksig]
                samples.append(np.column_stack([np.full(grid.size + 5, i), np.concatenate([grid, edges])]))
            owner, jd = np.concatenate(samples).T
            times = Time(jd, format="jd", scale="utc")
            target = FixedTarget(SkyCoord(ra=group["ra_deg"].iat[0] * u.deg, dec=group["dec_deg"].iat[0] * u.deg),
                                 name=name)
            night = AtNightConstraint(max_solar_altitude=constraints.sun_altitude_deg * u.deg)(geometric, target,
                                                                                                times=times)
            high = AltitudeConstraint(min=constraints.min_altitude_deg * u.deg)(refracted, target, times=times)
            ok = np.ravel(night) & np.ravel(high)
            padded["coverage_astroplan"] = _classes_from_samples(jd, ok, padded, owner, constraints.sigma_k)
            results.append(padded[["target", "site", "epoch", "coverage_astroplan"]])
    return pd.concat(results, ignore_index=True), time.perf_counter() - began
