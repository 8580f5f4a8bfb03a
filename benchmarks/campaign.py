"""Time the demo campaign (three sites, eight targets, 30 years, 200 trials) stage by stage.

Run: python benchmarks/campaign.py. Prints seconds per stage and, last, one summary line.
"""

from __future__ import annotations

import time
import warnings

import vigil  # noqa: F401  (configures astropy offline before anything else)
from vigil import catalog
from vigil.campaign.run import run_campaign
from vigil.campaign.schedule import visits_from_windows
from vigil.campaign.spec import read_campaign
from vigil.cli import demo_file
from vigil.windows import plan_windows


def main() -> None:
    warnings.simplefilter("ignore")
    spec = read_campaign(demo_file("campaign.toml"))
    targets, sites = catalog.read_targets(spec.targets_file), catalog.read_sites(spec.sites_file)
    sites = {name: sites[name] for name in spec.site_names}
    t0 = time.perf_counter()
    windows = plan_windows(targets, sites, spec.constraints, spec.start, spec.end)
    t1 = time.perf_counter()
    visits = visits_from_windows(windows, sites, spec.coverage, spec.min_fraction, spec.overhead_h)
    t2 = time.perf_counter()
    result = run_campaign(spec, targets, sites)
    t3 = time.perf_counter()
    print(f"windows over {spec.horizon_years:g} years: {len(windows)} rows in {t1 - t0:.2f} s")
    print(f"candidate visits: {len(visits)} in {t2 - t1:.2f} s")
    print(f"whole campaign ({spec.trials} trials, windows included): {t3 - t2:.2f} s; "
          f"reachable targets: {int(result.summary['reachable'].sum())} of {len(result.summary)}")
    print(f"campaign_s={t3 - t2:.3f} windows_s={t1 - t0:.3f} trials={spec.trials} horizon_years={spec.horizon_years:g}")


if __name__ == "__main__":
    main()
