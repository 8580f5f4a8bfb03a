"""The forecast stage: stacked hours per trial -> spectral resolution and SNR against time.

For each target, trials accumulate the in-transit and baseline hours of their clear visits in
date order; the photon-noise model (spectrum.py) turns them into the achievable resolution at
the goal SNR. A target is reachable when the goal resolution is reached within the horizon
in at least half the trials.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from vigil import spectrum
from vigil.campaign.spec import CampaignSpec

DAYS_PER_YEAR = 365.25
REACHABLE_SHARE = 0.5


@dataclass(frozen=True)
class Body:
    """What the forecast needs to know of one target."""

    planet: spectrum.Planet
    star: spectrum.Star


def snr2_per_hour(body: Body, spec: CampaignSpec) -> float:
    """Squared photon-limited SNR per in-transit hour at the goal resolution (equal time out of
    transit): the scheduler's measure of how much an hour on this target is worth."""
    return float(spectrum.spectrum_snr(body.planet, body.star, spec.instrument, spec.goal_resolution, 1.0, 1.0)) ** 2


def stacked_hours(visits: pd.DataFrame, clear: np.ndarray, target: str, start_jd_utc: float,
                  prior_h: tuple[float, float] = (0.0, 0.0)):
    """(end_jd_utc of the target's visits in end order, cumulative in-transit and baseline hours
    (trials, visits)). The first column is the campaign start holding `prior_h` (hours already
    stacked, e.g. from the journal); a visit's hours count from its end, and visits at
    different sites can end in another order than they start."""
    rows = np.flatnonzero((visits["target"] == target).to_numpy())
    end_jd = visits["end_jd_utc"].to_numpy()[rows]
    order = np.argsort(end_jd, kind="stable")
    rows, end_jd = rows[order], np.concatenate([[start_jd_utc], end_jd[order]])
    got = np.concatenate([np.ones((clear.shape[0], 1), dtype=bool), clear[:, rows]], axis=1)
    hours_in = np.cumsum(got * np.r_[prior_h[0], visits["in_transit_h"].to_numpy()[rows]], axis=1)
    hours_out = np.cumsum(got * np.r_[prior_h[1], visits["baseline_h"].to_numpy()[rows]], axis=1)
    return end_jd, hours_in, hours_out


def _years_to_goal(body: Body, spec: CampaignSpec, end_jd, hours_in, hours_out) -> np.ndarray:
    """Years from the start until the goal is first met, per trial (inf if never)."""
    resolution = spectrum.achievable_resolution(body.planet, body.star, spec.instrument, spec.goal_snr, hours_in, hours_out)
    met = resolution >= spec.goal_resolution
    first = np.argmax(met, axis=1)
    years = (end_jd[first] - spec.start.utc.jd) / DAYS_PER_YEAR
    return np.where(met.any(axis=1), years, np.inf)


def _at_year_ends(end_jd, cumulative: np.ndarray, spec: CampaignSpec) -> np.ndarray:
    """Cumulative hours at the end of each campaign year, (trials, years)."""
    years = int(np.ceil(spec.horizon_years))
    cutoffs = spec.start.utc.jd + DAYS_PER_YEAR * np.minimum(np.arange(1, years + 1), spec.horizon_years)
    index = np.searchsorted(end_jd, cutoffs, side="right")  # >= 1: the first column is the start
    return cumulative[:, index - 1]


def yearly_forecast(target: str, body: Body, spec: CampaignSpec, end_jd, hours_in, hours_out) -> pd.DataFrame:
    """Per campaign year: stacked hours, SNR at the goal resolution, resolution at the goal SNR."""
    h_in, h_out = _at_year_ends(end_jd, hours_in, spec), _at_year_ends(end_jd, hours_out, spec)
    snr = spectrum.spectrum_snr(body.planet, body.star, spec.instrument, spec.goal_resolution, h_in, h_out)
    resolution = spectrum.achievable_resolution(body.planet, body.star, spec.instrument, spec.goal_snr, h_in, h_out)
    q = lambda a, p: np.percentile(a, p, axis=0)  # noqa: E731 - a one-line helper keeps the table readable
    years = np.arange(1, h_in.shape[1] + 1)
    return pd.DataFrame({
        "target": target, "campaign_year": years,
        "calendar_year": spec.start.utc.ymdhms["year"] + years - 1,
        "in_transit_hours_p50": q(h_in, 50), "in_transit_hours_p10": q(h_in, 10), "in_transit_hours_p90": q(h_in, 90),
        "snr_at_goal_resolution_p50": q(snr, 50),
        "resolution_at_goal_snr_p50": q(resolution, 50), "resolution_at_goal_snr_p10": q(resolution, 10),
        "resolution_at_goal_snr_p90": q(resolution, 90),
    })


def years_quantiles(years: np.ndarray) -> dict:
    """p10/p50/p90 of years to goal; inf where fewer trials than that share reach it."""
    ordered = np.sort(years)
    pick = lambda share: float(ordered[min(int(np.ceil(share * ordered.size)) - 1, ordered.size - 1)])  # noqa: E731
    return {"years_to_goal_p10": pick(0.1), "years_to_goal_p50": pick(0.5), "years_to_goal_p90": pick(0.9)}


def target_summary(target: str, body: Body, spec: CampaignSpec, visits: pd.DataFrame, clear: np.ndarray,
                   prior_h: tuple[float, float] = (0.0, 0.0)) -> tuple[dict, pd.DataFrame, np.ndarray]:
    """Summary row, yearly table and per-trial years-to-goal for one target; `prior_h` are the
    (in-transit, baseline) hours stacked before the start. Rates per year count new hours only."""
    end_jd, hours_in, hours_out = stacked_hours(visits, clear, target, spec.start.utc.jd, prior_h)
    years = _years_to_goal(body, spec, end_jd, hours_in, hours_out)
    observed = clear[:, (visits["target"] == target).to_numpy()].sum(axis=1)
    total_in = hours_in[:, -1] - prior_h[0]
    row = {
        "target": target, "goal_resolution": spec.goal_resolution, "goal_snr": spec.goal_snr,
        "transits_per_year": float(observed.mean() / spec.horizon_years),
        "in_transit_hours_per_year": float(total_in.mean() / spec.horizon_years),
        **years_quantiles(years),
        "reachable": bool(np.mean(np.isfinite(years)) >= REACHABLE_SHARE),
        "snr_cap": float(spectrum.snr_cap(body.planet, body.star, spec.instrument)),
        "hours_needed": float(spectrum.hours_in_transit_needed(body.planet, body.star, spec.instrument,
                                                               spec.goal_resolution, spec.goal_snr)),
    }
    return row, yearly_forecast(target, body, spec, end_jd, hours_in, hours_out), years


def expected_in_transit_h(visits: pd.DataFrame, spec: CampaignSpec, target: str) -> float:
    """Mean stacked in-transit hours over the horizon if every listed visit of `target` is attempted."""
    mine = visits[visits["target"] == target]
    clear = [spec.clear_fraction[s][m - 1] for s, m in zip(mine["site"], mine["month"])]
    return float(np.dot(mine["in_transit_h"].to_numpy(), clear)) if len(mine) else 0.0


def limiting_factor(row: dict, body: Body, spec: CampaignSpec, scheduled_h: float, candidate_h: float,
                    candidate_h_without_padding: float | None, baseline_per_in_transit: float) -> str:
    """Why a target misses its goal within the horizon ('' when it is reachable).

    noise floor: the goal SNR exceeds what the floor allows at any resolution; weather: the
    schedule collects enough hours on average, but not in half the trials; allocation: every
    counted window together would suffice, the caps and clashes do not let them all in;
    ephemeris too stale: the windows lost to timing padding would have sufficed; too few
    windows: even all counted windows, attempted, fall short. Hours are expectations over the
    weather. `candidate_h_without_padding` (the windows again with K = 0) may be None when not
    computed: the verdict is then "too few windows" where it could be "ephemeris too stale", and
    the campaign runner computes it for those targets and asks again.
    """
    if row["reachable"]:
        return ""
    if row["snr_cap"] <= spec.goal_snr:
        return "noise floor"
    need = float(spectrum.hours_in_transit_needed(body.planet, body.star, spec.instrument, spec.goal_resolution,
                                                  spec.goal_snr, max(baseline_per_in_transit, 1e-6)))
    if scheduled_h >= need:
        return "weather"
    if candidate_h >= need:
        return "allocation"
    if candidate_h_without_padding is not None and candidate_h_without_padding >= need:
        return "ephemeris too stale"
    return "too few windows"
