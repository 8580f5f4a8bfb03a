"""The campaign runner: windows once over the horizon, a schedule, weather trials, a forecast."""

from __future__ import annotations

from concurrent.futures import Executor
from pathlib import Path
from typing import Callable

import numpy as np
import pandas as pd

from vigil import bodies, forecast, notes, schema, star_spectra
from vigil.campaign import schedule, weather
from vigil.campaign.result import CampaignResult
from vigil.campaign.spec import CampaignSpec
from vigil.ephemeris import upkeep
from vigil.sites import Site
from vigil.errors import InputError
from vigil.journal import open_journal
from vigil.sweep import plan_windows_chunked
from vigil.hosts import host_of

TRIAL_CHUNK = 50


def _bodies(targets: pd.DataFrame, spec: CampaignSpec) -> tuple[dict, dict, list]:
    """Body and priority of each target, and a note for each star whose light comes from its own spectrum."""
    found, priority, said = {}, {}, []
    places = targets.attrs.get("source_rows", {})  # "FILE: line N" of each target, kept by read_targets
    for row in targets.to_dict("records"):
        where = places.get(row["name"], str(spec.targets_file or "targets"))
        planet, star = bodies.target_bodies(pd.Series(row), where)
        light, note = _own_spectrum(row, star, spec, where)
        found[row["name"]] = forecast.Body(planet, star, light)
        priority[row["name"]] = bodies.priority_of(pd.Series(row), where)
        said.extend([note] if note else [])
    return found, priority, said


def _own_spectrum(row: dict, star, spec: CampaignSpec, where: str):
    """(the star's light from its star_spectrum_file, read, checked and scaled; a note saying
    so), or (None, None) without one."""
    path = bodies.spectrum_file_of(pd.Series(row))
    if path is None:
        return None, None
    try:
        light = star_spectra.star_light(path, star, spec.instrument)
    except InputError as exc:
        raise InputError(f"{where}, field {bodies.SPECTRUM_FILE_COLUMN}: target {row['name']!r}: {exc}") from None
    text = (f"{row['name']}: the star's light is the spectrum in {path}, scaled to {star.band} = {star.magnitude:g}, "
            "in place of the built-in model").replace("{", "{{").replace("}", "}}")
    return light, notes.Note(("star_spectrum", row["name"]), text, spec.start.utc.jd, spec.end.utc.jd)


def _candidates(targets, sites, spec: CampaignSpec, constraints: dict, engine: str, jobs: int = 1,
                executor: Executor | None = None, chunk_dir: Path | None = None) -> pd.DataFrame:
    """Counted windows over the horizon, each stretch between planned refreshes with its own
    sigma, as visits; the table carries the windows' notes (`vigil.notes.of`)."""
    pieces = [plan_windows_chunked(part, sites, constraints, lo, hi, jobs=jobs, engine=engine, executor=executor,
                                   chunk_dir=chunk_dir)
              for lo, hi, part in upkeep.segments(targets, spec.start, spec.end, spec.refresh_every_years,
                                                   spec.refresh_timing_err_d)]
    windows = pd.concat([p for p in pieces if len(p)] or pieces[:1], ignore_index=True)
    windows = windows.drop_duplicates(["target", "site", "epoch"])  # a transit on a segment edge
    visits = schedule.visits_from_windows(windows, sites, spec.coverage, spec.min_fraction, spec.overhead_h)
    return notes.attach(visits, notes.merged(*(notes.of(p) for p in pieces)))


def _from_journal(spec: CampaignSpec, targets: pd.DataFrame, left_out=()) -> tuple[pd.DataFrame, dict]:
    """Targets with the journal's measured timings folded in, and hours already stacked per target.

    Timings of `left_out` targets (in the catalogue, but not in this run) are passed over."""
    if spec.journal_file is None:
        return targets, {}
    if not spec.journal_file.exists():
        raise InputError(f"{spec.journal_file}: journal not found (named by [campaign] journal)")
    with open_journal(spec.journal_file, write=False) as journal:
        timings, hours = journal.timings(), journal.executed_hours()
    timings = timings[~timings["target"].isin(set(left_out))]
    stacked = {row.target: (float(row.in_transit_h), float(row.baseline_h)) for row in hours.itertuples(index=False)}
    return upkeep.assimilate_timings(targets, timings), stacked


def _trials(scheduled: pd.DataFrame, spec: CampaignSpec, on_progress: Callable[[int], None] | None) -> np.ndarray:
    rng = np.random.default_rng(spec.seed)
    chunks = []
    for first in range(0, spec.trials, TRIAL_CHUNK):
        count = min(TRIAL_CHUNK, spec.trials - first)
        chunks.append(weather.clear_weather(scheduled, spec.clear_fraction, count, rng))
        if on_progress:
            on_progress(count)
    return np.concatenate(chunks, axis=0)


def run_campaign(spec: CampaignSpec, targets: pd.DataFrame, sites: dict[str, Site], engine: str = "fast",
                 on_progress: Callable[[int], None] | None = None, jobs: int = 1, executor: Executor | None = None,
                 chunk_dir: Path | None = None, left_out=()) -> CampaignResult:
    """Simulate the campaign: summary per target, yearly forecast, ledger of trial 0.

    jobs, executor and chunk_dir say where the windows step runs (vigil.sweep.iter_windows);
    left_out names catalogue targets not in `targets` (one-target runs), whose journal timings are
    passed over rather than refused as unknown.
    """
    missing = [s for s in spec.site_names if s not in sites]
    if missing:
        raise InputError(f"{spec.sites_file}: campaign site {missing[0]!r} not found; sites are {', '.join(sites)}")
    sites = {n: sites[n] for n in spec.site_names}
    found, priority, spectrum_notes = _bodies(targets, spec)
    targets, stacked = _from_journal(spec, targets, left_out)
    candidates = _candidates(targets, sites, spec, spec.constraints, engine, jobs, executor, chunk_dir)
    ground = any(site.kind != "space" for site in sites.values())
    gain = {name: forecast.snr2_per_hour(body, spec, candidates[candidates["target"] == name], ground)
            for name, body in found.items()}
    scheduled = schedule.schedule(candidates, gain, priority, spec.per_target_per_semester,
                                  spec.per_site_per_semester, host_of(targets))
    clear = _trials(scheduled, spec, on_progress)
    rows, per_scenario, yearly, budgets, years, found_notes = [], [], [], [], {}, [spectrum_notes, notes.of(candidates)]
    for name, body in found.items():
        result = forecast.target_forecast(name, body, spec, scheduled, clear, ground, stacked.get(name, (0.0, 0.0)))
        found_notes.append(_limit(result, spec, scheduled, candidates, targets, sites, engine,
                                  stacked.get(name, (0.0, 0.0))[0]))
        in_order = [{**{name: row[name] for name in schema.SCENARIOS.names}, **row} for row in result.rows]
        reachable = [row["scenario"] for row in in_order if row["reachable"]]
        rows.append({**in_order[0], "reachable_scenarios": " ".join(reachable)})
        per_scenario.extend(in_order)
        yearly.append(result.yearly)
        budgets.append(result.budget)
        years[name] = result.years_to_goal
    return CampaignResult(schema.SUMMARY.check(pd.DataFrame(rows)),
                          schema.FORECAST.check(pd.concat(yearly, ignore_index=True)), _ledger(scheduled, clear), years,
                          schema.SCENARIOS.check(pd.DataFrame(per_scenario)),
                          schema.BUDGET.check(pd.concat(budgets, ignore_index=True)), notes.merged(*found_notes))


def _limit(result: forecast.TargetForecast, spec, scheduled, candidates, targets, sites, engine, prior_in_h: float):
    """Set limited_by on each scenario row of one target and return the notes of any windows
    computed for it; hours already stacked (journal) count towards every option. Where even
    every counted window falls short, the windows are computed again with K = 0 (no timing
    padding) to tell "ephemeris too stale" from "too few windows"."""
    name = result.rows[0]["target"]
    scheduled_h = prior_in_h + forecast.expected_in_transit_h(scheduled, spec.clear_fraction, name)
    candidate_h = prior_in_h + forecast.expected_in_transit_h(candidates, spec.clear_fraction, name)
    dominant = forecast.dominant_term(result.budget)
    verdicts = [forecast.limiting_factor(row, spec.goal_snr, scheduled_h, candidate_h, None, dominant)
                for row in result.rows]
    found = ()
    if any(v.startswith("too few windows") for v in verdicts):
        unpadded = _candidates(targets[targets["name"] == name], sites, spec, {**spec.constraints, "sigma_k": 0.0},
                               engine)
        unpadded_h = prior_in_h + forecast.expected_in_transit_h(unpadded, spec.clear_fraction, name)
        verdicts = [forecast.limiting_factor(row, spec.goal_snr, scheduled_h, candidate_h, unpadded_h, dominant)
                    for row in result.rows]
        found = notes.of(unpadded)
    for row, verdict in zip(result.rows, verdicts):
        row["limited_by"] = verdict
    return found


def _ledger(scheduled: pd.DataFrame, clear: np.ndarray) -> pd.DataFrame:
    """The visits of trial 0 with their sky, and the share of trials in which each was clear."""
    ledger = scheduled[[c for c in schema.LEDGER.names if c in scheduled.columns]].copy()
    first = clear[0] if clear.size else np.zeros(len(ledger), dtype=bool)
    ledger["sky"] = pd.Categorical(np.where(first, "clear", "cloudy"), categories=("clear", "cloudy"))
    ledger["clear_share"] = clear.mean(axis=0) if clear.size else np.zeros(len(ledger))
    return schema.LEDGER.check(ledger)
