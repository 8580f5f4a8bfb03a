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

#: Visit column <- windows column, conditions at mid-transit for the noise budget.
CONDITIONS = {"airmass": "airmass_mid", "moon_illumination": "moon_illumination", "moon_sep_deg": "moon_sep_deg",
              "moon_alt_deg": "moon_alt_mid_deg"}


def visits_from_windows(windows: pd.DataFrame, sites: dict, coverage: tuple[str, ...], min_fraction: float,
                        overhead_h: float) -> pd.DataFrame:
    """Candidate visits: counted windows with in-transit and baseline hours, night and half-year.

    Counted are the windows of the `coverage` classes observable for at least `min_fraction`
    of the transit. A visit spans the window's observable stretch; in-transit hours are its
    overlap with [ingress, egress], baseline hours the rest of it; telescope hours add
    `overhead_h`. The conditions at mid-transit (airmass, Moon; NaN when the windows table has
    none) and the site's elevation and kind are kept for the noise budget.
    """
    counted = windows["coverage"].isin(coverage) & (windows[schema.OBSERVABLE_FRACTION] >= min_fraction)
    w = windows[counted].reset_index(drop=True)
    start, end = w[schema.OBSERVABLE_START_JD_UTC].to_numpy(), w[schema.OBSERVABLE_END_JD_UTC].to_numpy()
    inside = np.clip(np.minimum(end, w[schema.EGRESS_JD_UTC]) - np.maximum(start, w[schema.INGRESS_JD_UTC]), 0.0, None)
    months, years = _month_year(w[schema.MID_JD_UTC].to_numpy())
    # the local noon-to-noon day (JD starts at noon UT); a space site keeps UTC days
    east_deg = {name: 0.0 if site.kind == "space" else site.longitude_deg for name, site in sites.items()}
    local_day = np.floor(w[schema.MID_JD_UTC].to_numpy() + w["site"].map(east_deg).to_numpy() / 360.0)
    ground = w["site"].map({name: site.kind != "space" for name, site in sites.items()}).astype(bool)
    elevation = w["site"].map({name: site.elevation_m for name, site in sites.items()})
    return schema.VISITS.check(pd.DataFrame({
        "target": w["target"], "site": w["site"], "epoch": w["epoch"], "coverage": w["coverage"],
        schema.MID_JD_UTC: w[schema.MID_JD_UTC], "start_jd_utc": start, "end_jd_utc": end,
        "in_transit_h": inside * HOURS_PER_DAY,
        "baseline_h": (end - start - inside) * HOURS_PER_DAY,
        "telescope_h": (end - start) * HOURS_PER_DAY + overhead_h,
        "night": local_day.astype(np.int64), "month": months, "half_year": years * 2 + (months > 6),
        **{name: _conditions(w, column) for name, column in CONDITIONS.items()},
        "elevation_m": elevation.astype(float), "ground": ground,
    }))


def _conditions(windows: pd.DataFrame, column: str) -> np.ndarray:
    return windows[column].to_numpy(dtype=float) if column in windows else np.full(len(windows), np.nan)


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


def _pointing_hours(visits: pd.DataFrame, group: np.ndarray) -> np.ndarray:
    """Telescope hours of each pointing (groups numbered 0..n-1): its span plus the overhead,
    counted once. A pointing of one visit keeps that visit's telescope hours exactly."""
    start, end, hours = (visits[c].to_numpy() for c in ("start_jd_utc", "end_jd_utc", "telescope_h"))
    order = np.argsort(group, kind="stable")
    first = np.flatnonzero(np.r_[True, group[order][1:] != group[order][:-1]])
    span_d = np.maximum.reduceat(end[order], first) - np.minimum.reduceat(start[order], first)
    overhead_h = np.maximum.reduceat((hours - (end - start) * HOURS_PER_DAY)[order], first)
    return np.where(np.bincount(group) == 1, hours[order][first], span_d * HOURS_PER_DAY + overhead_h)


def _greedy(visits: pd.DataFrame, group: np.ndarray, gain_per_hour: dict, priority: dict, per_target_cap,
            per_site_cap) -> list[list[int]]:
    """The pointings attempted, each as the row numbers of its visits."""
    target, site = visits["target"].to_numpy(), visits["site"].to_numpy()
    half, start, end = visits["half_year"].to_numpy(), visits["start_jd_utc"].to_numpy(), visits["end_jd_utc"].to_numpy()
    by_group = pd.DataFrame({"group": group, "mid": visits[schema.MID_JD_UTC].to_numpy(),
                             "snr2": (visits["target"].map(gain_per_hour) * visits["in_transit_h"]).to_numpy(),
                             "priority": visits["target"].map(priority).to_numpy(dtype=float)}).groupby("group")
    order = np.lexsort((by_group["mid"].min().to_numpy(), -by_group["snr2"].sum().to_numpy() / _pointing_hours(visits, group),
                        -by_group["priority"].max().to_numpy()))
    members = [rows.tolist() for rows in by_group.indices.values()]
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
        lo, hi = min(start[i] for i in rows), max(end[i] for i in rows)
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
    rows = np.fromiter((i for members in chosen for i in members), dtype=np.int64)
    group = np.repeat(np.arange(len(chosen)), [len(members) for members in chosen])
    start, target = visits["start_jd_utc"].to_numpy()[rows], visits["target"].to_numpy().astype(str)[rows]
    within = np.lexsort((target, start, group))  # each pointing's visits by start, then name
    lead = within[np.r_[0, np.cumsum(np.bincount(group))[:-1]]]
    rank = np.empty(len(chosen), dtype=np.int64)  # pointings by their first visit's start, then its name
    rank[np.lexsort((target[lead], start[lead]))] = np.arange(len(chosen))
    order = np.lexsort((target, start, rank[group]))
    out = visits.iloc[rows[order]].reset_index(drop=True)
    number, size = rank[group[order]], np.bincount(group)[group[order]]
    out["telescope_h"] = _pointing_hours(visits.iloc[rows], group)[group[order]] / size
    leads = np.r_[True, number[1:] != number[:-1]]
    out["night"] = out["night"].to_numpy()[np.flatnonzero(leads)][number]  # one weather draw per pointing
    out["gain"] = out["target"].map(gain_per_hour) * out["in_transit_h"] / out["telescope_h"]
    out["pointing"] = number
    out["shared_with"] = ""
    for lead in np.flatnonzero(leads & (size > 1)):
        names = out["target"].iloc[lead:lead + size[lead]].tolist()
        out.loc[lead:lead + size[lead] - 1, "shared_with"] = ["; ".join(sorted(set(names) - {n})) for n in names]
    return out
