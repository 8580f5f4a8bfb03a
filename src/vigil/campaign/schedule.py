"""The campaign schedule: which windows are attempted over the years.

The schedule is built once and is the same in every trial: windows of the counted coverage
classes become visits; at each site visits that overlap in time clash (one telescope per
site) and are resolved greedily by priority, then by spectral gain per telescope hour, then
by date, except that overlapping visits of planets of one star are one pointing that observes
them all; allocation caps (visits per target and per site per half-year, January-June and
July-December) count attempts, as with time granted in advance: a visit lost to weather is
not replaced. Trials then differ only in the weather (`weather.py`), so no trial recomputes
visibility.
"""

from __future__ import annotations

import bisect

import numpy as np
import pandas as pd
from astropy.time import Time

from vigil import schema
from vigil.hosts import overlap_groups
from vigil.time_units import HOURS_PER_DAY


def visits_from_windows(windows: pd.DataFrame, sites: dict, coverage: tuple[str, ...], min_fraction: float,
                        overhead_h: float) -> pd.DataFrame:
    """Candidate visits: counted windows with in-transit and baseline hours, night and half-year.

    Counted are the windows of the `coverage` classes observable for at least `min_fraction`
    of the transit. A visit spans the window's observable stretch; in-transit hours are its
    overlap with [ingress, egress], baseline hours the rest of it; telescope hours add
    `overhead_h`.
    """
    counted = windows["coverage"].isin(coverage) & (windows[schema.OBSERVABLE_FRACTION] >= min_fraction)
    w = windows[counted].reset_index(drop=True)
    start, end = w[schema.OBSERVABLE_START_JD_UTC].to_numpy(), w[schema.OBSERVABLE_END_JD_UTC].to_numpy()
    inside = np.clip(np.minimum(end, w[schema.EGRESS_JD_UTC]) - np.maximum(start, w[schema.INGRESS_JD_UTC]), 0.0, None)
    months, years = _month_year(w[schema.MID_JD_UTC].to_numpy())
    # the local noon-to-noon day (JD starts at noon UT); a space site keeps UTC days
    east_deg = {name: 0.0 if site.kind == "space" else site.longitude_deg for name, site in sites.items()}
    local_day = np.floor(w[schema.MID_JD_UTC].to_numpy() + w["site"].map(east_deg).to_numpy() / 360.0)
    return schema.VISITS.check(pd.DataFrame({
        "target": w["target"], "site": w["site"], "epoch": w["epoch"], "coverage": w["coverage"],
        schema.MID_JD_UTC: w[schema.MID_JD_UTC], "start_jd_utc": start, "end_jd_utc": end,
        "in_transit_h": inside * HOURS_PER_DAY,
        "baseline_h": (end - start - inside) * HOURS_PER_DAY,
        "telescope_h": (end - start) * HOURS_PER_DAY + overhead_h,
        "night": local_day.astype(np.int64), "month": months, "half_year": years * 2 + (months > 6),
    }))


def _month_year(jd_utc: np.ndarray):
    if jd_utc.size == 0:
        return np.array([], dtype=int), np.array([], dtype=int)
    dates = Time(jd_utc, format="jd", scale="utc").ymdhms
    return np.asarray(dates["month"], dtype=int), np.asarray(dates["year"], dtype=int)


def schedule(visits: pd.DataFrame, gain_per_hour: dict, priority: dict, per_target_per_semester: int | None,
             per_site_per_semester: int | None, hosts: dict | None = None) -> pd.DataFrame:
    """The visits attempted: clashes at a site and allocation caps (visits per half-year, None
    for no cap) resolved greedily (module doc).

    Visits of one host (`hosts`: target -> host; default each target its own) that overlap at a
    site are one pointing: it spans them all, its telescope hours (span plus overhead) are
    counted once and shared equally by its visits (`telescope_h`), each planet keeps its own
    in-transit and baseline hours, and it counts once towards the site's cap and once towards
    each planet's. Columns added: gain, pointing (number), shared_with (the other planets).
    """
    if visits.empty:
        return _none_chosen(visits)
    keys = [f"{(hosts or {}).get(t, t)}|{s}" for t, s in zip(visits["target"], visits["site"])]
    group = overlap_groups(keys, visits["start_jd_utc"], visits["end_jd_utc"])
    chosen = _greedy(visits, group, gain_per_hour, priority, per_target_per_semester, per_site_per_semester)
    return _pointing_rows(visits, chosen, gain_per_hour) if chosen else _none_chosen(visits)


def _none_chosen(visits: pd.DataFrame) -> pd.DataFrame:
    """The schedule's table with no visits in it."""
    return visits.iloc[:0].assign(gain=pd.Series(dtype=float), pointing=pd.Series(dtype=np.int64),
                                  shared_with=pd.Series(dtype=str))


def _telescope_h(visits: pd.DataFrame, rows) -> float:
    """Telescope hours of one pointing: its span plus the overhead, counted once."""
    if len(rows) == 1:
        return float(visits["telescope_h"].iloc[rows[0]])
    start, end = visits["start_jd_utc"].to_numpy()[rows], visits["end_jd_utc"].to_numpy()[rows]
    overhead_h = visits["telescope_h"].to_numpy()[rows] - (end - start) * HOURS_PER_DAY
    return float((end.max() - start.min()) * HOURS_PER_DAY + overhead_h.max())


def _greedy(visits: pd.DataFrame, group: np.ndarray, gain_per_hour: dict, priority: dict, per_target_cap,
            per_site_cap) -> list[list[int]]:
    """The pointings attempted, each as the row numbers of its visits."""
    target, site = visits["target"].to_numpy(), visits["site"].to_numpy()
    half, start, end = visits["half_year"].to_numpy(), visits["start_jd_utc"].to_numpy(), visits["end_jd_utc"].to_numpy()
    snr2 = (visits["target"].map(gain_per_hour) * visits["in_transit_h"]).to_numpy()
    members = [list(m) for m in pd.Series(np.arange(len(visits))).groupby(group).indices.values()]
    order = np.lexsort((np.array([visits[schema.MID_JD_UTC].to_numpy()[m].min() for m in members]),
                        -np.array([snr2[m].sum() / _telescope_h(visits, m) for m in members]),
                        -np.array([max(priority[t] for t in target[m]) for m in members])))
    booked: dict[str, tuple[list, list]] = {}
    per_target: dict[tuple, int] = {}
    per_site: dict[tuple, int] = {}
    chosen = []
    for g in order:
        rows = [i for i in members[g] if per_target_cap is None or per_target.get((target[i], half[i]), 0) < per_target_cap]
        if not rows:
            continue
        s_key = (site[rows[0]], half[rows[0]])
        if per_site_cap is not None and per_site.get(s_key, 0) >= per_site_cap:
            continue
        lo, hi = start[rows].min(), end[rows].max()
        starts, ends = booked.setdefault(site[rows[0]], ([], []))
        k = bisect.bisect_left(starts, lo)
        if (k < len(starts) and starts[k] < hi) or (k > 0 and ends[k - 1] > lo):
            continue
        starts.insert(k, lo)
        ends.insert(k, hi)
        for i in rows:
            per_target[(target[i], half[i])] = per_target.get((target[i], half[i]), 0) + 1
        per_site[s_key] = per_site.get(s_key, 0) + 1
        chosen.append(rows)
    return chosen


def _pointing_rows(visits: pd.DataFrame, chosen: list[list[int]], gain_per_hour: dict) -> pd.DataFrame:
    """The chosen visits in time order, each with its pointing's number, shared telescope hours and night."""
    start, target, night = visits["start_jd_utc"].to_numpy(), visits["target"].to_numpy(), visits["night"].to_numpy()
    rows, telescope_h, pointing, nights, shared = [], [], [], [], []
    for number, members in enumerate(sorted(chosen, key=lambda m: (start[m].min(), min(target[m])))):
        members = sorted(members, key=lambda j: (start[j], target[j]))
        hours = _telescope_h(visits, members)
        for i in members:
            rows.append(i)
            telescope_h.append(hours / len(members))
            pointing.append(number)
            nights.append(night[members[0]])  # one weather draw for the whole pointing
            shared.append("; ".join(sorted(set(target[members]) - {target[i]})))
    out = visits.iloc[rows].reset_index(drop=True)
    out["telescope_h"], out["night"] = telescope_h, np.asarray(nights, dtype=np.int64)
    out["gain"] = out["target"].map(gain_per_hour) * out["in_transit_h"] / out["telescope_h"]
    out["pointing"], out["shared_with"] = np.asarray(pointing, dtype=np.int64), shared
    return out
