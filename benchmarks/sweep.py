"""Catalog-scale benchmark of the fast visibility engine: scaling, phases, memory, astroplan ratio.

    python benchmarks/sweep.py            # 5,000 targets x 10 years x 3 sites (~10 million rows)
    python benchmarks/sweep.py --quick    # 2,000 targets x 5 years, about a minute
    python benchmarks/sweep.py --memory   # peak memory of 50,000 x 1 year and 5,000 x 30 years

One invented workload (seeded): targets spread over the whole sky, periods log-uniform in
1.5-50 d, durations 1-6 h, planned at the demo's three invented sites, observable transits
listed (--all: every transit). The transit-site rows evaluated are counted beforehand,
outside the timing. The fast path then runs side by side in three configurations, each in a
fresh process (so each pays its own start-up and has its own peak memory; CPU seconds are
counted with its workers, a figure less sensitive than wall time to other load): one process,
--jobs worker processes, and a dask LocalCluster of --jobs workers on 127.0.0.1 (workers hand
their chunks over as Parquet files). Each consumes the table piece by piece as
vigil.sweep.iter_windows streams it (coverage counts and a digest of every row, which must
be equal across configurations), keeping only the rows of the astroplan subsample.
For that subsample (a few targets over a few weeks, every site) a careful astroplan user's
answer is computed here (benchmarks/astroplan_baseline.py). The phase breakdown profiles one
process planning a slice of the catalogue. The last line printed is

    events_per_s=<float> speedup_vs_astroplan=<float> agreement=<float> peak_rss_mb=<float>

for the --jobs processes configuration: transit-site rows evaluated per second of wall time
(projection, merge and worker start-up included); that over the baseline's rows per second;
the fraction of subsample rows with the same coverage class (a row not listed counts as
"none"); the largest resident set of its process or a worker (resource.getrusage).
Nothing is downloaded: vigil configures astropy offline; only loopback sockets are allowed.
"""

from __future__ import annotations

import argparse
import cProfile
import hashlib
import json
import os
import pstats
import resource
import socket
import subprocess
import sys
import tempfile
import time
import warnings
from collections import Counter

import numpy as np
import pandas as pd

import vigil  # noqa: F401  (first: configures astropy offline before astroplan is imported)
from vigil import cluster, sweep, timescales, windows
from vigil.catalog import read_sites
from vigil.engines import fast as fast_engine
from vigil.ephemeris.projection import project_transits
from vigil.schema import COVERAGE_CLASSES

DEMO_SITES = os.path.join(os.path.dirname(vigil.__file__), "data", "demo", "sites.toml")
START = "2027-01-01"
SEED = 20270101
GIB_MB = 1024.0
MEMORY_WORKLOADS = ((50_000, 1.0), (5_000, 30.0))  # (targets, years): both must stay under 2 GiB
# (phase, function name, file name ending): cumulative profile time of each
PHASES = (("project transits (ephemeris)", "project_transits", "projection.py"),
          ("mid-time at each site (BJD_TDB -> UTC)", "at_site", "windows.py"),
          ("pad windows", "pad_windows", "visibility.py"),
          ("target place of date", "_pointing", "fast.py"),
          ("observable intervals (night, altitude)", "observable_intervals", "fast.py"),
          ("conditions at mid-transit (rows kept)", "conditions_of", "fast.py"),
          ("coverage classes", "classify", "visibility.py"),
          ("merge in time order", "in_time_order", "windows.py"))


def _refuse_network() -> None:
    """Make any connection away from this machine fail loudly (dask's own stay on 127.0.0.1)."""
    connect, connect_ex = socket.socket.connect, socket.socket.connect_ex

    def guarded(method):
        def check(self, address, *args, **kwargs):
            if self.family in (socket.AF_INET, socket.AF_INET6) and address[0] not in ("127.0.0.1", "::1", "localhost"):
                raise RuntimeError(f"network access attempted: {address!r}")
            return method(self, address, *args, **kwargs)
        return check

    socket.socket.connect, socket.socket.connect_ex = guarded(connect), guarded(connect_ex)


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


def _cpu_s() -> float:
    """CPU seconds (user + system) of this process and its finished descendants."""
    return sum(u.ru_utime + u.ru_stime for u in map(resource.getrusage, (resource.RUSAGE_SELF,
                                                                           resource.RUSAGE_CHILDREN)))


def peak_rss_mb() -> tuple[float, float]:
    """Peak resident set (MB) of this process and of its largest finished descendant (Linux: KB units)."""
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0
    return own, children


def count_evaluations(targets: pd.DataFrame, sites: dict, start, end, block: int = 500) -> int:
    """Transit-site rows the windows stage evaluates: projected transits whose mid-time seen at
    each site falls in [start, end] (windows.at_site with the fast engine's mid-times)."""
    margin_d = 0.02  # more than the 8.3 min light time: at_site keeps exactly the mids inside
    total = 0
    for first in range(0, len(targets), block):
        transits = project_transits(targets.iloc[first:first + block], start.tdb.jd - margin_d,
                                              end.tdb.jd + margin_d)
        total += sum(len(windows.at_site(transits, site, start, end, fast_engine)) for site in sites.values())
    return total


def _span(years: float):
    import astropy.units as u
    from astropy.time import Time

    start = Time(START, scale="utc")
    return start, start + years * 365.25 * u.day


# --- one configuration, in a process of its own -------------------------------------------

def _digest_rows(digest, piece: pd.DataFrame) -> None:
    """Feed every number of every row, column by column, and the coverage class to the digest
    (names are implied by them)."""
    for column in piece.select_dtypes(include=["number", "bool"]).columns:
        digest.update(np.ascontiguousarray(piece[column].to_numpy()).tobytes())
    digest.update(pd.Categorical(piece["coverage"], categories=COVERAGE_CLASSES).codes.tobytes())


def run_configuration(n_targets: int, years: float, scheduler: str | None, jobs: int, include_all: bool,
                      keep: list[str]) -> dict:
    """Plan the workload streaming; figures, a digest of the rows and the kept targets' rows."""
    sites = read_sites(DEMO_SITES)
    start, end = _span(years)
    targets = invented_targets(n_targets, start.tdb.jd)
    counts, digest, listed, kept = Counter(), hashlib.sha256(), 0, []
    began, cpu_began = time.perf_counter(), _cpu_s()
    with cluster.workers_for(scheduler, jobs) as workers:
        started = time.perf_counter() - began
        for piece in sweep.iter_windows(targets, sites, {}, start, end, jobs=workers.count,
                                        executor=workers.executor, chunk_dir=workers.chunk_dir,
                                        include_unobservable=include_all):
            counts.update({str(k): int(v) for k, v in piece["coverage"].value_counts().items()})
            _digest_rows(digest, piece)
            listed += len(piece)
            kept.append(piece.loc[piece["target"].isin(keep), ["target", "site", "epoch", "coverage"]])
    wall, cpu = time.perf_counter() - began, _cpu_s() - cpu_began
    own, children = peak_rss_mb()
    rows = pd.concat(kept, ignore_index=True).astype({"coverage": str}) if kept else pd.DataFrame()
    return {"wall_s": wall, "cpu_s": cpu, "startup_s": started, "listed": listed, "counts": dict(counts),
            "digest": digest.hexdigest(), "rss_own_mb": own, "rss_workers_mb": children,
            "kept": rows.to_dict("list")}


def _configuration_in_child(n_targets: int, years: float, scheduler: str | None, jobs: int, include_all: bool,
                            keep: list[str]) -> dict:
    with tempfile.NamedTemporaryFile("r", suffix=".json") as result:
        command = [sys.executable, os.path.abspath(__file__), "--child", result.name, "--targets", str(n_targets),
                   "--years", str(years), "--jobs", str(jobs), "--keep", json.dumps(keep),
                   *(["--scheduler", scheduler] if scheduler else []), *(["--all"] if include_all else [])]
        subprocess.run(command, check=True)
        return json.load(result)


# --- phases ------------------------------------------------------------------------------

def phase_breakdown(targets: pd.DataFrame, sites: dict, start, end, include_all: bool) -> tuple[float, float, int, list]:
    """Profile one process planning the targets over [start, end] as the run does: seconds
    to tabulate the Sun, Moon, sky and Earth over the span (once per process), seconds and
    rows of the planning, and seconds per phase (PHASES)."""
    import astropy.units as u

    began = time.perf_counter()
    span_jd = np.array([start.utc.jd - 2.0, end.utc.jd + 2.0])
    for table in (fast_engine.SKY_TABLE, fast_engine.MOON_TABLE, timescales.EARTH_TABLE):
        table.at(span_jd)  # every block between the two dates
    tabulate = time.perf_counter() - began
    sweep.plan_windows_chunked(targets.iloc[:5], sites, {}, start, start + 1.0 * u.day)  # first-call costs
    profile = cProfile.Profile()
    began = time.perf_counter()
    profile.enable()
    table = sweep.plan_windows_chunked(targets, sites, {}, start, end, include_unobservable=include_all)
    profile.disable()
    total = time.perf_counter() - began
    stats = pstats.Stats(profile).stats
    phases = []
    for label, function, filename in PHASES:
        phases.append((label, sum(entry[3] for (path, _, name), entry in stats.items()
                                  if name == function and path.endswith(filename))))
    return tabulate, total, len(table), phases


# --- the runs ----------------------------------------------------------------------------

def _print_configurations(events: int, results: dict) -> None:
    one = results["1 process"]["wall_s"]
    print(f"{'configuration':<34}{'wall s':>8}{'rows/s':>12}{'x 1 process':>13}{'CPU s':>8}{'rows/CPU-s':>12}"
          f"{'peak RSS MB':>13}{'start-up s':>12}")
    for name, r in results.items():
        rss = max(r["rss_own_mb"], r["rss_workers_mb"])
        print(f"{name:<34}{r['wall_s']:>8.2f}{events / r['wall_s']:>12,.0f}{one / r['wall_s']:>13.2f}{r['cpu_s']:>8.1f}"
              f"{events / r['cpu_s']:>12,.0f}{rss:>13,.0f}{r['startup_s']:>12.2f}")
    same = len({r["digest"] for r in results.values()}) == 1
    print(f"tables identical across configurations: {'yes' if same else 'NO'}")
    if not same:
        raise SystemExit("the configurations gave different tables")


def _agreement(kept: dict, targets, sites, start, baseline_days: float) -> tuple[float, float, int]:
    import astropy.units as u

    from astroplan_baseline import astroplan_baseline

    sub_end = start + baseline_days * u.day
    sub_transits = project_transits(targets, start.tdb.jd - 0.02, sub_end.tdb.jd + 0.02)
    baseline, baseline_s = astroplan_baseline(sub_transits, sites, {}, start, sub_end)
    fast = pd.DataFrame(kept)
    compared = baseline.merge(fast, on=["target", "site", "epoch"], how="left", validate="1:1")
    compared["coverage"] = compared["coverage"].fillna("none")  # rows not listed are not observable
    agreement = float(np.mean(compared["coverage"].to_numpy() == compared["coverage_astroplan"].to_numpy()))
    for row in compared[compared["coverage"] != compared["coverage_astroplan"]].head(10).itertuples(index=False):
        print(f"  differs: {row.target} at {row.site}, epoch {row.epoch}: fast {row.coverage}, "
              f"astroplan {row.coverage_astroplan}")
    return agreement, len(compared) / baseline_s, len(compared)


def main_run(args) -> None:
    import astropy.units as u

    n_targets = args.targets or (2000 if args.quick else 5000)
    years = args.years or (5.0 if args.quick else 10.0)
    baseline_targets = args.baseline_targets or (8 if args.quick else 20)
    baseline_days = args.baseline_days or (30.0 if args.quick else 60.0)
    sites = read_sites(DEMO_SITES)
    start, end = _span(years)
    targets = invented_targets(n_targets, start.tdb.jd)
    print(f"workload: {n_targets} invented targets x {years:g} years x {len(sites)} sites ({', '.join(sites)}); "
          f"{'every transit' if args.all else 'observable transits'} listed; load average "
          f"{os.getloadavg()[0]:.2f} on {os.cpu_count()} CPUs", flush=True)
    events = count_evaluations(targets, sites, start, end)
    chosen = targets.iloc[:: max(1, n_targets // baseline_targets)].iloc[:baseline_targets]
    keep = chosen["name"].tolist()
    configurations = {"1 process": (None, 1), f"{args.jobs} processes": (None, args.jobs),
                      f"dask LocalCluster, {args.jobs} workers": ("local", args.jobs)}
    results = {}
    for name, (scheduler, jobs) in configurations.items():
        results[name] = _configuration_in_child(n_targets, years, scheduler, jobs, args.all, keep)
        print(f"  {name}: done, load average {os.getloadavg()[0]:.2f}", flush=True)
    print(f"fast path: {events:,} transit-site rows evaluated, {results['1 process']['listed']:,} listed")
    counts = Counter(results["1 process"]["counts"])
    counts["none"] += events - results["1 process"]["listed"]
    print("  coverage: " + ", ".join(f"{k} {counts.get(k, 0):,}" for k in ("full", "ingress", "egress", "partial", "none")))
    _print_configurations(events, results)

    slice_targets = targets.iloc[: max(1, n_targets // 5)]
    slice_years = min(years, 2.0)
    tabulate, seconds, rows, phases = phase_breakdown(slice_targets, sites, start, start + slice_years * 365.25 * u.day,
                                                      args.all)
    print(f"phases (one process, profiled: {len(slice_targets)} targets x {slice_years:g} years x {len(sites)} sites, "
          f"{rows:,} rows listed in {seconds:.2f} s; tabulating the Sun, Moon, sky and Earth "
          f"over those years beforehand: {tabulate:.2f} s):")
    for label, spent in phases:
        print(f"  {label:<42}{spent:>7.2f} s {100 * spent / seconds:>5.1f} %")
    rest = seconds - sum(spent for _, spent in phases)
    print(f"  {'other (chunking, pandas)':<42}{rest:>7.2f} s {100 * rest / seconds:>5.1f} %")

    scaled = results[f"{args.jobs} processes"]
    agreement, baseline_per_s, compared = _agreement(scaled["kept"], chosen, sites, start, baseline_days)
    print(f"astroplan baseline: {compared} rows ({len(chosen)} targets x {baseline_days:g} days x {len(sites)} sites), "
          f"{baseline_per_s:,.1f} rows/s")
    events_per_s = events / scaled["wall_s"]
    print(f"events_per_s={events_per_s:.1f} speedup_vs_astroplan={events_per_s / baseline_per_s:.1f} "
          f"agreement={agreement:.4f} peak_rss_mb={max(scaled['rss_own_mb'], scaled['rss_workers_mb']):.1f}")


def main_memory(args) -> None:
    """Peak memory of the two large workloads with --jobs processes, streamed piece by piece."""
    print(f"memory: --jobs {args.jobs}, the table streamed (not kept); load average {os.getloadavg()[0]:.2f}")
    for n_targets, years in MEMORY_WORKLOADS:
        r = _configuration_in_child(n_targets, years, None, args.jobs, args.all, [])
        peak = max(r["rss_own_mb"], r["rss_workers_mb"])
        print(f"  {n_targets:,} targets x {years:g} years x 3 sites: {r['listed']:,} rows listed in {r['wall_s']:.1f} s; "
              f"peak RSS {r['rss_own_mb']:,.0f} MB here, {r['rss_workers_mb']:,.0f} MB largest worker: "
              f"{'under' if peak < 2 * GIB_MB else 'OVER'} 2 GiB", flush=True)


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small workload (about a minute)")
    parser.add_argument("--memory", action="store_true", help="peak memory of 50,000 x 1 year and 5,000 x 30 years")
    parser.add_argument("--all", action="store_true", help="list unobservable transits too")
    parser.add_argument("--targets", type=int, help="number of invented targets (default 5000; quick 2000)")
    parser.add_argument("--years", type=float, help="horizon in years (default 10; quick 5)")
    parser.add_argument("--jobs", type=int, default=os.cpu_count() or 1, help="worker processes (default: CPUs)")
    parser.add_argument("--baseline-targets", type=int, help="targets in the astroplan subsample (default 20; quick 8)")
    parser.add_argument("--baseline-days", type=float, help="days of the subsample (default 60; quick 30)")
    parser.add_argument("--child", metavar="FILE", help=argparse.SUPPRESS)  # one configuration, result to FILE
    parser.add_argument("--scheduler", help=argparse.SUPPRESS)
    parser.add_argument("--keep", default="[]", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    _refuse_network()
    warnings.filterwarnings("ignore", module="astroplan")
    if args.child:
        result = run_configuration(args.targets, args.years, args.scheduler, args.jobs, args.all, json.loads(args.keep))
        with open(args.child, "w") as stream:
            json.dump(result, stream)
    elif args.memory:
        main_memory(args)
    else:
        main_run(args)


if __name__ == "__main__":
    sys.exit(main())
