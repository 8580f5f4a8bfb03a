"""Catalog-scale benchmark of the fast visibility engine against a careful astroplan baseline.

    python benchmarks/sweep.py            # 5,000 targets x 10 years x 3 sites (~10 million rows)
    python benchmarks/sweep.py --quick    # a smaller workload, under a minute

One invented workload (seeded): targets spread over the whole sky, periods log-uniform in
1.5-50 d, durations 1-6 h, planned at the demo's three invented sites. The fast path runs
chunked (vigil.sweep) and lists the observable transits (--all: every transit); the
transit-site rows it evaluates are counted beforehand, outside the timing. For a subsample
(a few targets over a few weeks, every site) a careful astroplan user's answer is computed
in the same process: an Observer per site built from our coordinates (no site lookup),
mid-times from astropy's barycentric light travel time, then AtNightConstraint (geometric
Sun) and AltitudeConstraint (refracted, for the site's pressure) at every 5-minute sample of
each whole padded window plus its decision instants, one call per target and site for all
its transits; coverage classes follow the rules of visibility.classify on those boolean
samples. The last line printed is

    events_per_s=<float> speedup_vs_astroplan=<float> agreement=<float> peak_rss_mb=<float>

events_per_s: transit-site rows evaluated per second of wall time by the fast path,
projection, merge and worker start-up included; speedup: that over the baseline's rows per
second; agreement: fraction of subsample rows with the same coverage class (a row the fast
path does not list counts as "none"); peak_rss_mb: largest resident set of this process or
of a worker (resource.getrusage).
Nothing is downloaded: vigil configures astropy offline, and sockets are refused here.
"""

from __future__ import annotations

import argparse
import os
import resource
import socket
import sys
import time
import warnings

import numpy as np
import pandas as pd

import vigil  # noqa: F401  (first: configures astropy offline before astroplan is imported)
from vigil import ephemeris, sweep, visibility, windows
from vigil.catalog import read_sites
from vigil.constraints import resolve_constraints
from vigil.engines import fast as fast_engine

DEMO_SITES = os.path.join(os.path.dirname(vigil.__file__), "data", "demo", "sites.toml")
START = "2027-01-01"
SEED = 20270101
SAMPLE_MIN = 5.0


def _refuse_network() -> None:
    """Make any attempt to open a connection fail loudly (the benchmark must run offline)."""

    def refuse(self, address, *args, **kwargs):
        raise RuntimeError(f"network access attempted: {address!r}")

    socket.socket.connect = refuse
    socket.socket.connect_ex = refuse


def invented_targets(n: int, start_jd: float, seed: int = SEED) -> pd.DataFrame:
    """n invented targets: uniform on the sky, periods log-uniform 1.5-50 d, durations 1-6 h."""
    rng = np.random.default_rng(seed)
    period = np.exp(rng.uniform(np.log(1.5), np.log(50.0), n))
    return pd.DataFrame({
        "name": [f"Bench-{i:05d} b" for i in range(n)],
        "ra_deg": rng.uniform(0.0, 360.0, n),
        "dec_deg": np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n))),
        "t0_bjd_tdb": start_jd - rng.uniform(0.0, 400.0, n),
        "t0_err_d": rng.uniform(1e-4, 2e-3, n),
        "period_d": period,
        "period_err_d": rng.uniform(1e-7, 5e-6, n),
        "duration_h": rng.uniform(1.0, 6.0, n),
        "t0_period_cov_d2": 0.0,
    })


def _children_cpu_s() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def peak_rss_mb() -> tuple[float, float]:
    """Peak resident set (MB) of this process and of its largest finished child (Linux: KB units)."""
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0
    return own, children


# --- the astroplan baseline ------------------------------------------------------------------

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


def count_evaluations(targets: pd.DataFrame, sites: dict, start, end) -> int:
    """Transit-site rows the windows stage evaluates: projected transits whose mid-time seen at
    each site falls in [start, end] (windows.at_site with the fast engine's mid-times)."""
    margin_d = 0.02  # more than the 8.3 min light time: at_site keeps exactly the mids inside
    transits = ephemeris.project_transits(targets, start.tdb.jd - margin_d, end.tdb.jd + margin_d)
    return sum(len(windows.at_site(transits, site, start, end, fast_engine)) for site in sites.values())


# --- the run ------------------------------------------------------------------------------

def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small workload (under a minute)")
    parser.add_argument("--all", action="store_true", help="keep unobservable transits in the table too")
    parser.add_argument("--targets", type=int, help="number of invented targets (default 5000; quick 2000)")
    parser.add_argument("--years", type=float, help="horizon in years (default 10; quick 5)")
    parser.add_argument("--jobs", type=int, default=os.cpu_count() or 1, help="worker processes (default: CPUs)")
    parser.add_argument("--baseline-targets", type=int, help="targets in the astroplan subsample (default 20; quick 8)")
    parser.add_argument("--baseline-days", type=float, help="days of the subsample (default 60; quick 30)")
    args = parser.parse_args(argv)
    n_targets = args.targets or (2000 if args.quick else 5000)
    years = args.years or (5.0 if args.quick else 10.0)
    baseline_targets = args.baseline_targets or (8 if args.quick else 20)
    baseline_days = args.baseline_days or (30.0 if args.quick else 60.0)
    _refuse_network()
    warnings.filterwarnings("ignore", module="astroplan")

    import astropy.units as u
    from astropy.time import Time

    sites = read_sites(DEMO_SITES)
    start = Time(START, scale="utc")
    end = start + years * 365.25 * u.day
    targets = invented_targets(n_targets, start.tdb.jd)
    overrides = {}
    print(f"workload: {n_targets} invented targets x {years:g} years x {len(sites)} sites ({', '.join(sites)}); "
          f"jobs={args.jobs}; {'every transit' if args.all else 'observable transits'} kept", flush=True)

    events = count_evaluations(targets, sites, start, end)
    wall, cpu, workers_cpu = time.perf_counter(), time.process_time(), _children_cpu_s()
    table = sweep.plan_windows_chunked(targets, sites, overrides, start, end, jobs=args.jobs,
                                       include_unobservable=args.all)
    wall, cpu, workers_cpu = time.perf_counter() - wall, time.process_time() - cpu, _children_cpu_s() - workers_cpu
    if args.all and len(table) != events:
        raise SystemExit(f"the table has {len(table)} rows, but {events} transit-site rows were counted")
    events_per_s = events / wall
    counts = table["coverage"].value_counts().to_dict()
    counts["none"] = events - len(table) + counts.get("none", 0)
    print(f"fast path: {events:,} transit-site rows evaluated, {len(table):,} listed, in {wall:.2f} s wall "
          f"({events_per_s:,.0f} rows/s; CPU: this process {cpu:.2f} s, workers {workers_cpu:.2f} s)")
    classes = ("full", "ingress", "egress", "partial", "none")
    print("  coverage: " + ", ".join(f"{k} {counts.get(k, 0):,}" for k in classes))

    chosen = targets.iloc[:: max(1, n_targets // baseline_targets)].iloc[:baseline_targets]
    sub_end = start + baseline_days * u.day
    sub_transits = ephemeris.project_transits(chosen, start.tdb.jd - 0.02, sub_end.tdb.jd + 0.02)
    baseline, baseline_s = astroplan_baseline(sub_transits, sites, overrides, start, sub_end)
    compared = baseline.merge(table[["target", "site", "epoch", "coverage"]], on=["target", "site", "epoch"],
                              how="left", validate="1:1")
    compared["coverage"] = compared["coverage"].fillna("none")  # rows not listed are not observable
    agreement = float(np.mean(compared["coverage"].to_numpy() == compared["coverage_astroplan"].to_numpy()))
    baseline_per_s = len(compared) / baseline_s
    print(f"astroplan baseline: {len(compared)} rows ({len(chosen)} targets x {baseline_days:g} days x "
          f"{len(sites)} sites) in {baseline_s:.2f} s ({baseline_per_s:,.1f} rows/s)")
    differ = compared[compared["coverage"] != compared["coverage_astroplan"]]
    for row in differ.head(10).itertuples(index=False):
        print(f"  differs: {row.target} at {row.site}, epoch {row.epoch}: fast {row.coverage}, "
              f"astroplan {row.coverage_astroplan}")
    own, children = peak_rss_mb()
    print(f"peak RSS: this process {own:,.0f} MB, largest worker {children:,.0f} MB")
    print(f"events_per_s={events_per_s:.1f} speedup_vs_astroplan={events_per_s / baseline_per_s:.1f} "
          f"agreement={agreement:.4f} peak_rss_mb={max(own, children):.1f}")


if __name__ == "__main__":
    sys.exit(main())
