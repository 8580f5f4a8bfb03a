"""The forecast stage: the clear visits of each trial -> spectral resolution and SNR over time.

For each target, every scheduled visit gets its noise budget (``visit_budget``: its hours,
airmass, Moon and site), the visits of each trial are stacked in end order (``stacking``) and
the spectrum is judged bin by bin against the goal, once per atmosphere scenario
(``scenarios``). A scenario is reachable when the goal is met within the horizon in at least
half the trials. Hours already stacked before the start (journal) enter as one visit under the
target's median conditions.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np
import pandas as pd
from astropy import constants as const

from vigil import noise_terms, scenarios, spectrum, stacking, stars, visit_budget
from vigil.campaign.spec import CampaignSpec

DAYS_PER_YEAR = 365.25
REACHABLE_SHARE = 0.5
#: Conditions of a visit where a target has none to take a median from.
NOMINAL_CONDITIONS = {"airmass": 1.3, "moon_illumination": 0.5, "moon_sep_deg": 90.0,
                      "moon_alt_deg": noise_terms.MOON_ALTITUDE_DEG}
_CONDITIONS = ("airmass", "moon_illumination", "moon_sep_deg", "moon_alt_deg", "elevation_m")


@dataclass(frozen=True)
class Body:
    """What the forecast needs to know of one target; ``star_light``: the star's own spectrum
    (F_lambda on ``stars.GRID_UM``, W m^-2 um^-1; ``star_spectra``) in place of the model."""

    planet: spectrum.Planet
    star: spectrum.Star
    star_light: np.ndarray | None = field(default=None, repr=False, compare=False)


@dataclass
class TargetForecast:
    """One target's forecast: a row per scenario (the reference scenario first), the yearly
    table and per-trial years of the reference scenario, and the median visit's budget."""

    rows: list[dict]
    yearly: pd.DataFrame
    years_to_goal: np.ndarray
    budget: pd.DataFrame
    median_visit: pd.DataFrame = field(repr=False)


@lru_cache(maxsize=64)
def star_flux(star: spectrum.Star) -> np.ndarray:
    """The star's F_lambda above the atmosphere on ``stars.GRID_UM`` (W m^-2 um^-1)."""
    return stars.flux_at_earth_w_m2_um(star.teff_k, star.radius_sun, star.magnitude, star.band, star.distance_pc)


def star_light(body: Body) -> np.ndarray:
    """The F_lambda the forecast uses: the star's own spectrum when the body carries one, else
    the built-in model's."""
    return star_flux(body.star) if body.star_light is None else body.star_light


def in_transit_weight(body: Body, spec: CampaignSpec) -> float:
    """Share of the in-transit hours that counts (trapezoid; 1 with the term off)."""
    if not spec.noise.trapezoid:
        return 1.0
    ratio = body.planet.radius_earth * const.R_earth.value / (body.star.radius_sun * const.R_sun.value)
    impact = spec.noise.impact_parameter if body.planet.impact_parameter is None else body.planet.impact_parameter
    return noise_terms.trapezoid_time_fraction(ratio, impact)


def wavelengths_um(spec: CampaignSpec) -> np.ndarray:
    """Wavelengths (um) at which the spectrum is judged (telluric ranges left out)."""
    instrument = spec.instrument
    return stacking.sample_wavelengths_um(instrument.wavelength_min_um, instrument.wavelength_max_um,
                                          spec.noise.excluded_um)


def median_visit(visits: pd.DataFrame, ground: bool) -> pd.DataFrame:
    """One visit with the median hours and conditions of ``visits`` (nominal ones if empty)."""
    if visits.empty:
        return pd.DataFrame({"in_transit_h": [1.0], "baseline_h": [1.0], **{k: [v] for k, v in
                            NOMINAL_CONDITIONS.items()}, "elevation_m": [0.0], "ground": [ground]})
    columns = {c: [float(visits[c].median()) if c in visits.columns else np.nan]  # an optional condition: unknown
               for c in ("in_transit_h", "baseline_h", *_CONDITIONS)}
    return pd.DataFrame({**columns, "ground": [bool(visits["ground"].mean() >= 0.5)]})


def _parts(body: Body, spec: CampaignSpec, visits: pd.DataFrame):
    return visit_budget.variance_parts(star_light(body), spec.instrument, spec.noise, visits, wavelengths_um(spec),
                                       in_transit_weight(body, spec))


def _deciding_at_goal(body: Body, spec: CampaignSpec, visit: pd.DataFrame) -> float:
    a, b = _parts(body, spec, visit)
    return float(stacking.deciding(stacking.visit_information(a, b, spec.goal_resolution), spec.goal_bin_fraction)[0])


def snr2_per_hour(body: Body, spec: CampaignSpec, visits: pd.DataFrame, ground: bool) -> float:
    """SNR^2 of the deciding bin at the goal resolution per in-transit hour of the target's
    median visit, in its first scenario: the scheduler's measure of an hour's worth."""
    visit = median_visit(visits, ground)
    delta = scenarios.feature_depth(body.planet, body.star, scenarios.target_scenarios(body.planet, spec.scenarios)[0])
    return delta**2 * _deciding_at_goal(body, spec, visit) / float(visit["in_transit_h"].iloc[0])


def _prior_scale(prior_h, visit: pd.DataFrame) -> float:
    """How many median visits the hours stacked before the start stand for (their own red
    noise averages down with that many visits; their baseline is taken at the median ratio)."""
    return prior_h[0] / float(visit["in_transit_h"].iloc[0])


def _with_prior(mine: pd.DataFrame, clear_mine: np.ndarray, visit: pd.DataFrame, start_jd: float):
    """Prepend one always-clear median visit at the start, for the hours stacked before it."""
    frame = pd.concat([visit.assign(end_jd_utc=start_jd), mine], ignore_index=True)
    return frame, np.concatenate([np.ones((clear_mine.shape[0], 1), dtype=bool), clear_mine], axis=1)


def hours_needed(body: Body, spec: CampaignSpec, visit: pd.DataFrame, need: float) -> float:
    """In-transit hours of visits like ``visit`` (its own baseline ratio and conditions) for
    the deciding bin to reach the information ``need``; inf when unreachable."""
    information = _deciding_at_goal(body, spec, visit)
    if not np.isfinite(need) or information <= 0:
        return float("inf")
    return float(need / information * visit["in_transit_h"].iloc[0])


def budget_table(target: str, body: Body, spec: CampaignSpec, visit: pd.DataFrame, stacked_visits: float) -> pd.DataFrame:
    """The median visit's noise at the goal resolution in its deciding bin, term by term, and
    each term's share of the variance after ``stacked_visits`` such visits (the floor does not
    average down)."""
    wavelength_um = wavelengths_um(spec)
    parts = visit_budget.term_variances(star_light(body), spec.instrument, spec.noise, visit, wavelength_um,
                                        spec.goal_resolution, in_transit_weight(body, spec))
    total = sum(parts.values())[0]
    information = np.nan_to_num(1.0 / total, posinf=0.0)
    n = information.size
    index = int(np.argsort(information, kind="stable")[n - int(np.ceil(spec.goal_bin_fraction * n - 1e-9))])
    per_visit = {term: float(values[0, index]) for term, values in parts.items()}
    per_visit["floor"] = (spec.instrument.noise_floor_ppm * 1e-6) ** 2
    stacked = {t: v / max(stacked_visits, 1.0) for t, v in per_visit.items() if t != "floor"}
    stacked["floor"] = per_visit["floor"]
    variance = sum(stacked.values())
    return pd.DataFrame({
        "target": target, "term": list(per_visit),
        "ppm_per_bin_per_visit": [np.sqrt(v) * 1e6 for v in per_visit.values()],
        "share_of_variance": [stacked[t] / variance if variance > 0 else 0.0 for t in per_visit],
        "wavelength_um": float(wavelength_um[index]), "visits_stacked": max(stacked_visits, 1.0),
    })


def _years(deciding_after: np.ndarray, need: float, end_jd: np.ndarray, start_jd: float) -> np.ndarray:
    met = deciding_after >= need
    first = np.argmax(met, axis=1)
    return np.where(met.any(axis=1), (end_jd[first] - start_jd) / DAYS_PER_YEAR, np.inf)


def years_quantiles(years: np.ndarray) -> dict:
    """p10/p50/p90 of years to goal; inf where fewer trials than that share reach it."""
    ordered = np.sort(years)
    pick = lambda share: float(ordered[min(int(np.ceil(share * ordered.size)) - 1, ordered.size - 1)])  # noqa: E731
    return {"years_to_goal_p10": pick(0.1), "years_to_goal_p50": pick(0.5), "years_to_goal_p90": pick(0.9)}


def _year_of_visit(end_jd: np.ndarray, spec: CampaignSpec) -> tuple[np.ndarray, int]:
    years = int(np.ceil(spec.horizon_years))
    cutoffs = spec.start.utc.jd + DAYS_PER_YEAR * np.minimum(np.arange(1, years + 1), spec.horizon_years)
    return np.searchsorted(cutoffs, end_jd, side="left"), years


def _yearly(target, spec, delta, need, a, b, frame, clear, fraction) -> pd.DataFrame:
    """Per campaign year (reference scenario): stacked hours, SNR at the goal resolution,
    resolution at the goal SNR, p10/p50/p90 over trials."""
    year, years = _year_of_visit(frame["end_jd_utc"].to_numpy(), spec)
    at_goal = stacking.at_year_ends(stacking.visit_information(a, b, spec.goal_resolution), clear, year, years, fraction)
    on_grid = stacking.at_year_ends(stacking.visit_information(a, b, stacking.RESOLUTION_GRID), clear, year, years,
                                    fraction)
    hours = np.stack([clear[:, year <= y] @ frame["in_transit_h"].to_numpy()[year <= y] for y in range(years)], axis=1)
    snr = stacking.snr(delta, spec.instrument.noise_floor_ppm * 1e-6, at_goal)
    resolution = stacking.resolution_reached(on_grid, need)
    q = lambda a, p: np.percentile(a, p, axis=0)  # noqa: E731 - a one-line helper keeps the table readable
    number = np.arange(1, years + 1)
    return pd.DataFrame({
        "target": target, "campaign_year": number, "calendar_year": spec.start.utc.ymdhms["year"] + number - 1,
        "in_transit_hours_p50": q(hours, 50), "in_transit_hours_p10": q(hours, 10), "in_transit_hours_p90": q(hours, 90),
        "snr_at_goal_resolution_p50": q(snr, 50),
        "resolution_at_goal_snr_p50": q(resolution, 50), "resolution_at_goal_snr_p10": q(resolution, 10),
        "resolution_at_goal_snr_p90": q(resolution, 90),
    })


def target_forecast(target: str, body: Body, spec: CampaignSpec, visits: pd.DataFrame, clear: np.ndarray,
                    ground: bool, prior_h: tuple[float, float] = (0.0, 0.0)) -> TargetForecast:
    """Forecast of one target from the scheduled ``visits`` and their ``clear`` mask (trials,
    visits); ``prior_h`` are the (in-transit, baseline) hours stacked before the start."""
    rows = np.flatnonzero((visits["target"] == target).to_numpy())
    rows = rows[np.argsort(visits["end_jd_utc"].to_numpy()[rows], kind="stable")]
    mine = visits.iloc[rows]
    visit = median_visit(mine, ground)
    start_jd = spec.start.utc.jd
    frame, clear_mine = _with_prior(mine, clear[:, rows], visit, start_jd)
    a, b = _parts(body, spec, frame)
    scale = _prior_scale(prior_h, visit)
    a[0], b[0] = (a[0] / scale, b[0] / scale) if scale > 0 else (np.inf, np.inf)
    frame.loc[0, "in_transit_h"] = prior_h[0]
    fraction, floor = spec.goal_bin_fraction, spec.instrument.noise_floor_ppm * 1e-6
    deciding_after = stacking.cumulative_deciding(stacking.visit_information(a, b, spec.goal_resolution), clear_mine,
                                                  fraction)
    end_jd = frame["end_jd_utc"].to_numpy()
    observed = clear[:, rows].sum(axis=1)
    new_hours = clear[:, rows] @ mine["in_transit_h"].to_numpy()
    common = {"target": target, "goal_resolution": spec.goal_resolution, "goal_snr": spec.goal_snr,
              "transits_per_year": float(observed.mean() / spec.horizon_years),
              "in_transit_hours_per_year": float(new_hours.mean() / spec.horizon_years)}
    out, reference_years, yearly = [], None, None
    for scenario in scenarios.target_scenarios(body.planet, spec.scenarios):
        delta = scenarios.feature_depth(body.planet, body.star, scenario)
        need = stacking.needed_information(delta, spec.goal_snr, floor)
        years = _years(deciding_after, need, end_jd, start_jd)
        out.append({**common, "scenario": scenario.name, "mu": scenario.mu,
                    "n_scale_heights": scenario.n_scale_heights, "feature_ppm": delta * 1e6,
                    **years_quantiles(years), "reachable": bool(np.mean(np.isfinite(years)) >= REACHABLE_SHARE),
                    "snr_cap": float(np.inf if floor == 0 else delta / floor),
                    "hours_needed": hours_needed(body, spec, visit, need)})
        if reference_years is None:
            reference_years = years
            yearly = _yearly(target, spec, delta, need, a, b, frame, clear_mine, fraction)
    budget = budget_table(target, body, spec, visit, float(np.median(observed)))
    return TargetForecast(out, yearly, reference_years, budget, visit)


def expected_in_transit_h(visits: pd.DataFrame, clear_fraction: dict, target: str) -> float:
    """Mean stacked in-transit hours over the horizon if every listed visit of `target` is attempted."""
    mine = visits[visits["target"] == target]
    clear = [clear_fraction[s][m - 1] for s, m in zip(mine["site"], mine["month"])]
    return float(np.dot(mine["in_transit_h"].to_numpy(), clear)) if len(mine) else 0.0


def dominant_term(budget: pd.DataFrame) -> str:
    """The term with the largest share of the stacked variance."""
    return str(budget.loc[budget["share_of_variance"].idxmax(), "term"])


def limiting_factor(row: dict, goal_snr: float, scheduled_h: float, candidate_h: float,
                    candidate_h_without_padding: float | None, dominant: str) -> str:
    """Why a scenario misses its goal within the horizon ('' when it is reachable).

    noise floor: the goal SNR exceeds what the floor allows at any resolution; weather: the
    schedule collects enough hours on average, but not in half the trials; allocation: every
    counted window together would suffice, the caps and clashes do not let them all in;
    ephemeris too stale: the windows lost to timing padding would have sufficed; too few
    windows: even all counted windows, attempted, fall short. The noise term that dominates
    the stacked variance (``dominant``) follows in brackets. Hours are expectations over the
    weather, compared with ``row["hours_needed"]``. `candidate_h_without_padding` (the windows
    again with K = 0) may be None when not computed: the verdict is then "too few windows"
    where it could be "ephemeris too stale", and the campaign runner computes it and asks again.
    """
    if row["reachable"]:
        return ""
    if row["snr_cap"] <= goal_snr:
        return "noise floor"
    need = row["hours_needed"]
    if scheduled_h >= need:
        reason = "weather"
    elif candidate_h >= need:
        reason = "allocation"
    elif candidate_h_without_padding is not None and candidate_h_without_padding >= need:
        reason = "ephemeris too stale"
    else:
        reason = "too few windows"
    return f"{reason} ({dominant})"
