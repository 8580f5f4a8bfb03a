"""Refit each target's ephemeris from measured mid-transit times, as an update of the catalogue.

Per target (rules in vigil.ephemeris.fitting):
- Epochs count from the catalogue's T0 (n = nearest whole epoch of the catalogue prediction);
  a timing more than a quarter period from that prediction, or a catalogue ephemeris whose
  5-sigma uncertainty at a timed epoch exceeds half a period, is ambiguous. Without a
  catalogue row, epoch 0 is the first timing and the shortest spacing between distinct events
  is the period guess (timings closer than SAME_EVENT_SIGMA combined errors count as one event;
  every timing must lie within EPOCH_TOLERANCE_CYCLES of a whole number of guessed periods). That
  rule cannot see a period twice too long when no two observed transits are consecutive; pass
  the catalogue whenever that may be the case.
- A row repeating an earlier one (same target, mid-time and error) is dropped with a note.
- By default the catalogue ephemeris is the prior of the fit (`use_prior=False` fits the
  timings alone). Outliers are removed by the leave-one-out rule; each removed timing says
  which rule removed it and is never used.
- Linear and quadratic models are compared by BIC; the chosen one is written.
The refitted T0 is quoted at the whole epoch nearest the timings' weighted mean, recorded in
`t0_epoch` (catalogue numbering), so every later run numbers transits as the catalogue does.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from vigil.ephemeris.fitting import OUTLIER_RULE, ModelChoice, choose_model
from vigil import schema
from vigil.ephemeris.models import EPOCH_ORIGIN_COLUMN, QUADRATIC_COLUMNS, PolynomialEphemeris, target_ephemerides
from vigil.errors import ArgumentError, InputError
from vigil.time_units import MINUTES_PER_DAY

SAME_EVENT_SIGMA = 5.0
EPOCH_TOLERANCE_CYCLES = 0.1
# bits (0.5760000000000001): minutes to 1e-6 min (60 ns), ratios to 1e-4, fitted values other
# than T0 to 15 significant digits (the most a double always carries through a decimal round
# trip; T0, a full Julian date, keeps every digit).
_MINUTE_DECIMALS, _RATIO_DECIMALS, _SIGNIFICANT = 6, 4, 15
DUPLICATE_RULE = "duplicate of an earlier row"

TIMING_COLUMNS = ("target", "mid_bjd_tdb", "mid_err_d")
EPHEMERIS_COLUMNS = ("name", "ra_deg", "dec_deg", "t0_bjd_tdb", EPOCH_ORIGIN_COLUMN, "t0_err_d", "period_d",
                     "period_err_d", "duration_h")
FIT_COLUMNS = ("t0_period_cov_d2", *QUADRATIC_COLUMNS, "model",
               "dp_dt_ms_yr", "dp_dt_err_ms_yr", "delta_bic", "prior", "reduced_chi2", "n_timings", "n_outliers")


@dataclass(frozen=True, eq=False)
class TargetRefit:
    """One target's refit: the model choice, the catalogue ephemeris (None without a row) and
    whether it was the prior."""

    name: str
    choice: ModelChoice
    catalogue: PolynomialEphemeris | None
    prior_used: bool

    @property
    def ephemeris(self) -> PolynomialEphemeris:
        return self.choice.chosen.ephemeris


@dataclass(frozen=True, eq=False)
class RefitResult:
    """New targets table, O-C table and the per-target fits (see `refit_targets`)."""

    targets: pd.DataFrame
    o_minus_c: pd.DataFrame
    fits: dict


def refit_targets(timings_df: pd.DataFrame, targets_df: pd.DataFrame | None = None,
                  use_prior: bool = True) -> RefitResult:
    """Refit every target in `timings_df` (module docstring).

    timings_df: target, mid_bjd_tdb (BJD_TDB, d), mid_err_d (d), optional note. targets_df:
    optional catalogue (targets CSV columns); all its rows are returned, refitted ones with new
    ephemerides and the rest unchanged (n_timings 0). Without it, coordinates and duration are NaN.

    New targets table: EPHEMERIS_COLUMNS + FIT_COLUMNS (model linear or quadratic, dP/dt in ms/yr,
    delta_bic = BIC linear - quadratic, prior catalogue or none) then the catalogue's other
    columns. O-C table: target, epoch (catalogue numbering), mid_bjd_tdb, o_minus_c_min (against
    the chosen model), o_minus_c_catalogue_min, err_min, residual_sigma, used_in_fit, removed_by
    (the rule, empty when used) and note when the timings carry one.

    Examples
    --------
    >>> timings = pd.DataFrame({"target": "b", "mid_bjd_tdb": [2460000.0, 2460002.5, 2460005.0],
    ...                         "mid_err_d": [1e-3, 1e-3, 1e-3]})
    >>> float(refit_targets(timings).targets.loc[0, "period_d"])
    2.5
    """
    timings = _validated_timings(timings_df)
    catalogue = _indexed_catalogue(targets_df)
    models = dict(zip(catalogue.index, target_ephemerides(catalogue))) if catalogue is not None else {}
    fits, oc_tables = {}, []
    for target, rows in timings.groupby("target", sort=False):
        rows = rows.sort_values("mid_bjd_tdb", kind="stable")
        duplicate = rows.duplicated(["mid_bjd_tdb", "mid_err_d"]).to_numpy()
        t, sigma = rows["mid_bjd_tdb"].to_numpy(float), rows["mid_err_d"].to_numpy(float)
        if catalogue is not None and target not in catalogue.index:
            raise InputError(f"timings: target {target!r} is not in the targets table")
        cat = models.get(target)
        epochs = _epochs_from_catalogue(t, cat, target) if cat else _epochs_from_spacing(t[~duplicate], sigma[~duplicate], t, target)
        prior = cat if use_prior else None
        choice = choose_model(epochs[~duplicate], t[~duplicate], sigma[~duplicate], prior, target)
        fits[target] = TargetRefit(target, choice, cat, prior is not None)
        removed_by = np.where(duplicate, DUPLICATE_RULE, "").astype(object)
        removed_by[np.flatnonzero(~duplicate)[choice.removed]] = OUTLIER_RULE
        oc_tables.append(_o_minus_c_rows(target, rows, epochs, fits[target], removed_by))
    return RefitResult(_new_targets_table(fits, catalogue), pd.concat(oc_tables, ignore_index=True), fits)


def _validated_timings(timings_df: pd.DataFrame) -> pd.DataFrame:
    missing = [c for c in TIMING_COLUMNS if c not in timings_df.columns]
    if missing:
        raise InputError(f"timings: missing column(s) {', '.join(missing)}; expected {', '.join(TIMING_COLUMNS)}")
    if timings_df.empty:
        raise InputError("timings: the table has no rows")
    timings = timings_df.copy()
    for label, row in timings.iterrows():
        target = row["target"]
        if not isinstance(target, str) or not target.strip():
            raise InputError(f"timings row {label}: target must be a non-empty name")
        t, err = row["mid_bjd_tdb"], row["mid_err_d"]
        if not _is_finite_number(t):
            raise InputError(f"timings row {label} (target {target!r}): mid_bjd_tdb must be a finite BJD_TDB, got {t!r}")
        if not _is_finite_number(err) or err <= 0:
            raise InputError(f"timings row {label} (target {target!r}): mid_err_d must be a positive number of days, got {err!r}")
    timings["mid_bjd_tdb"] = timings["mid_bjd_tdb"].astype(float)
    timings["mid_err_d"] = timings["mid_err_d"].astype(float)
    return timings


def _is_finite_number(value) -> bool:
    try:
        return bool(np.isfinite(float(value)))
    except (TypeError, ValueError):
        return False


def _indexed_catalogue(targets_df: pd.DataFrame | None) -> pd.DataFrame | None:
    if targets_df is None:
        return None
    needed = ("name", "t0_bjd_tdb", "t0_err_d", "period_d", "period_err_d")
    missing = [c for c in needed if c not in targets_df.columns]
    if missing:
        raise InputError(f"targets: missing column(s) {', '.join(missing)} needed to number epochs")
    duplicated = targets_df["name"][targets_df["name"].duplicated()]
    if not duplicated.empty:
        raise InputError(f"targets: name {duplicated.iloc[0]!r} appears more than once")
    return targets_df.set_index("name", drop=False)


def _epochs_from_catalogue(t: np.ndarray, model: PolynomialEphemeris, target: str) -> np.ndarray:
    if not (np.isfinite([model.t0_bjd_tdb, model.period_d]).all() and model.period_d > 0):
        raise InputError(f"targets: target {target!r} needs a finite t0_bjd_tdb and a positive period_d")
    cycles = np.array([model.epoch_at(x) for x in t])
    epochs = np.round(cycles)
    worst = int(np.argmax(np.abs(cycles - epochs)))
    if abs(cycles[worst] - epochs[worst]) > 0.25:
        raise InputError(
            f"target {target!r}: timing at BJD_TDB {t[worst]:.5f} lies {cycles[worst] - epochs[worst]:+.2f} periods "
            "from the catalogue prediction; its epoch is ambiguous"
        )
    if np.any(5.0 * model.mid_sigma_d(epochs) > 0.5 * model.period_d):
        raise InputError(
            f"target {target!r}: the catalogue ephemeris is too uncertain at the timed epochs to count cycles "
            "(5 sigma exceeds half a period)"
        )
    return epochs


def _epochs_from_spacing(distinct_t: np.ndarray, distinct_sigma: np.ndarray, t: np.ndarray, target: str) -> np.ndarray:
    """Epochs of all timings `t`, counted from the first, from the shortest spacing of the distinct ones."""
    gaps = np.diff(distinct_t)
    combined = np.sqrt(distinct_sigma[1:] ** 2 + distinct_sigma[:-1] ** 2)
    distinct_gaps = gaps[gaps > SAME_EVENT_SIGMA * combined]
    if distinct_gaps.size == 0:
        raise ArgumentError("targets", "", f"target {target!r}: need timings at two or more distinct epochs to fit a "
                                           "period (or pass the catalogue as {argument} to update its ephemeris)")
    period_guess = distinct_gaps.min()
    cycles = (t - t[0]) / period_guess
    epochs = np.round(cycles)
    if np.max(np.abs(cycles - epochs)) > EPOCH_TOLERANCE_CYCLES:
        raise ArgumentError("targets", "", f"target {target!r}: timings are not whole multiples of their shortest "
                                           f"spacing ({period_guess:.5f} d), so their epochs are ambiguous: pass the "
                                           "catalogue as {argument} to number them")
    return epochs


def _o_minus_c_rows(target: str, rows: pd.DataFrame, epochs: np.ndarray, fit: TargetRefit,
                    removed_by: np.ndarray) -> pd.DataFrame:
    t, sigma = rows["mid_bjd_tdb"].to_numpy(float), rows["mid_err_d"].to_numpy(float)
    residual_d = t - fit.ephemeris.mid_bjd_tdb(epochs)
    catalogue_d = t - fit.catalogue.mid_bjd_tdb(epochs) if fit.catalogue is not None else np.full(t.size, np.nan)
    table = pd.DataFrame({
        "target": target,
        "epoch": epochs.astype(np.int64),
        "mid_bjd_tdb": t,
        "o_minus_c_min": np.round(residual_d * MINUTES_PER_DAY, _MINUTE_DECIMALS),
        "o_minus_c_catalogue_min": np.round(catalogue_d * MINUTES_PER_DAY, _MINUTE_DECIMALS),
        "err_min": np.round(sigma * MINUTES_PER_DAY, _MINUTE_DECIMALS),
        "residual_sigma": np.round(residual_d / sigma, _RATIO_DECIMALS),
        "used_in_fit": removed_by == "",
        "removed_by": removed_by,
    })
    if "note" in rows.columns:
        table["note"] = rows["note"].to_numpy()
    return table


def _fit_values(fit: TargetRefit) -> dict:
    model, chosen = fit.ephemeris, fit.choice.chosen
    c = np.asarray(model.covariance_d2)
    quadratic = chosen.degree == 2
    rate, rate_err = chosen.dp_dt_ms_yr
    return {
        "t0_bjd_tdb": float(model.t0_bjd_tdb), EPOCH_ORIGIN_COLUMN: int(model.t0_epoch),
        "t0_err_d": float(model.t0_err_d), "period_d": float(model.period_d), "period_err_d": float(model.period_err_d),
        "t0_period_cov_d2": float(c[0, 1]), schema.DP_DN_D: float(model.dp_dn_d) if quadratic else np.nan,
        schema.DP_DN_ERR_D: float(model.dp_dn_err_d) if quadratic else np.nan,
        schema.T0_DP_DN_COV_D2: float(c[0, 2]) if quadratic else np.nan,
        schema.PERIOD_DP_DN_COV_D2: float(c[1, 2]) if quadratic else np.nan,
        "model": "quadratic" if quadratic else "linear",
        "dp_dt_ms_yr": rate if quadratic else np.nan, "dp_dt_err_ms_yr": rate_err if quadratic else np.nan,
        "delta_bic": fit.choice.delta_bic, "prior": "catalogue" if fit.prior_used else "none",
        "reduced_chi2": chosen.reduced_chi2, "n_timings": chosen.n_timings, "n_outliers": int(fit.choice.removed.sum()),
    }


def _significant(value):
    """Floats to _SIGNIFICANT significant digits; anything else unchanged."""
    return float(f"{value:.{_SIGNIFICANT}g}") if isinstance(value, float) else value


def _new_targets_table(fits: dict, catalogue: pd.DataFrame | None) -> pd.DataFrame:
    table = pd.DataFrame({"name": list(fits)}) if catalogue is None else catalogue.reset_index(drop=True).copy()
    for column in EPHEMERIS_COLUMNS + FIT_COLUMNS:
        if column not in table.columns:
            table[column] = np.nan
    table["t0_period_cov_d2"] = table["t0_period_cov_d2"].astype(float).fillna(0.0)
    table[EPOCH_ORIGIN_COLUMN] = pd.to_numeric(table[EPOCH_ORIGIN_COLUMN], errors="coerce").fillna(0).astype(np.int64)
    table = table.astype({c: object for c in ("model", "prior")})
    table["n_timings"], table["n_outliers"] = 0, 0
    for name, fit in fits.items():
        at = np.flatnonzero((table["name"] == name).to_numpy())[0]
        for column, value in _fit_values(fit).items():
            table.at[at, column] = value if column == "t0_bjd_tdb" else _significant(value)
    leading = list(EPHEMERIS_COLUMNS + FIT_COLUMNS)
    return table[leading + [c for c in table.columns if c not in leading]]
