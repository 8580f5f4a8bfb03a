"""The campaign schedule: which windows are attempted over the years.

The schedule is built once and is the same in every trial: windows of the counted coverage
classes become visits; at each site visits that overlap in time clash (one telescope per
site) and are resolved greedily by priority, then by spectral gain per telescope hour, then
by date; allocation caps (visits per target and per site per half-year, January-June and
July-December) count attempts, as with time granted in advance: a visit lost to weather is
not replaced. Trials then differ only in the weather (`weather.py`), so no trial recomputes
visibility.
"""

from __future__ import annotations

import bisect

import numpy as np
import pandas as pd
from astropy.time import Time


HOURS_PER_DAY = 24.0


def visits_from_windows(windows: pd.DataFrame, sites: dict, coverage: tuple[str, ...], min_fraction: float,
                        overhead_h: float) -> pd.DataFrame:
    """Candidate visits: counted windows with in-transit and baseline hours, night and half-year.

    Counted are the windows of the `coverage` classes observable for at least `min_fraction`
    of the transit. A visit spans the window's observable stretch; in-transit hours are its
    overlap with [ingress, egress], baseline hours the rest of it; telescope hours add
    `overhead_h`.
    """
    counted = windows["coverage"].isin(coverage) & (windows["observable_fraction"] >= min_fraction)
    w = windows[counted].reset_index(drop=True)
    start, end = w["observable_start_jd_utc"].to_numpy(), w["observable_end_jd_utc"].to_numpy()
    inside = np.clip(np.minimum(end, w["egress_jd_utc"]) - np.maximum(start, w["ingress_jd_utc"]), 0.0, None)
    months, years = _month_year(w["mid_jd_utc"].to_numpy())
    # the local noon-to-noon day (JD starts at noon UT); a space site keeps UTC days
    east_deg = {name: 0.0 if site.kind == "space" else site.longitude_deg for name, site in sites.items()}
    local_day = np.floor(w["mid_jd_utc"].to_numpy() + w["site"].map(east_deg).to_numpy() / 360.0)
    return pd.DataFrame({
        "target": w["target"], "site": w["site"], "epoch": w["epoch"], "coverage": w["coverage"],
        "mid_jd_utc": w["mid_jd_utc"], "start_jd_utc": start, "end_jd_utc": end,
        "in_transit_h": inside * HOURS_PER_DAY,
        "baseline_h": (end - start - inside) * HOURS_PER_DAY,
        "telescope_h": (end - start) * HOURS_PER_DAY + overhead_h,
        "night": local_day.astype(np.int64), "month": months, "half_year": years * 2 + (months > 6),
    })


def _month_year(jd_utc: np.ndarray):
    if jd_utc.size == 0:
        return np.array([], dtype=int), np.array([], dtype=int)
    dates = Time(jd_utc, format="jd", scale="utc").ymdhms
    return np.asarray(dates["month"], dtype=int), np.asarray(dates["year"], dtype=int)


def schedule(visits: pd.DataFrame, gain_per_hour: dict, priority: dict, per_target_per_semester: int | None,
             per_site_per_semester: int | None) -> pd.DataFrame:
    """The visits attempted: clashes at a site and allocation caps (visits per half-year, None
    for no cap) resolved greedily (module doc)."""
    if visits.empty:
        return visits.assign(gain=pd.Series(dtype=float))
    gain = visits["target"].map(gain_per_hour) * visits["in_transit_h"] / visits["telescope_h"]
    order = np.lexsort((visits["mid_jd_utc"].to_numpy(), -gain.to_numpy(),
                        -visits["target"].map(priority).to_numpy()))
    target, site = visits["target"].to_numpy(), visits["site"].to_numpy()
    half, start, end = visits["half_year"].to_numpy(), visits["start_jd_utc"].to_numpy(), visits["end_jd_utc"].to_numpy()
    booked: dict[str, tuple[list, list]] = {}
    per_target: dict[tuple, int] = {}
    per_site: dict[tuple, int] = {}
    chosen = []
    for i in order:
        t_key, s_key = (target[i], half[i]), (site[i], half[i])
        if per_target_per_semester is not None and per_target.get(t_key, 0) >= per_target_per_semester:
            continue
        if per_site_per_semester is not None and per_site.get(s_key, 0) >= per_site_per_semester:
            continue
        starts, ends = booked.setdefault(site[i], ([], []))
        k = bisect.bisect_left(starts, start[i])
        if (k < len(starts) and starts[k] < end[i]) or (k > 0 and ends[k - 1] > start[i]):
            continue
        starts.insert(k, start[i])
        ends.insert(k, end[i])
        per_target[t_key] = per_target.get(t_key, 0) + 1
        per_site[s_key] = per_site.get(s_key, 0) + 1
        chosen.append(i)
    out = visits.iloc[sorted(chosen, key=lambda j: (start[j], target[j]))]
    return out.assign(gain=gain.iloc[out.index]).reset_index(drop=True)
