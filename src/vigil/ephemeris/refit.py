"""Refit a linear ephemeris T(n) = T0 + n P per target from measured mid-transit times.

Weighted least squares with weights 1/sigma^2. The fitted T0 is quoted at the integer epoch
nearest the weighted mean epoch, where the T0-P covariance nearly vanishes, so T0 is a real
transit and sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2 + 2 n cov stays well conditioned.
Uncertainties are the formal ones from the stated timing errors; compare reduced_chi2 with 1
to judge whether those errors (or a linear ephemeris) are adequate.

Outliers: a timing more than OUTLIER_SIGMA from the fit to all timings is flagged; the fit is
then repeated once without the flagged timings (unless fewer than two distinct epochs would
remain, in which case all timings are kept). The O-C table reports residuals against the final
fit and says which timings were used.

Epoch numbering: with a catalogue row, n = round((t - T0_cat) / P_cat); a timing more than a
quarter period from the catalogue prediction, or a catalogue ephemeris whose 5-sigma
uncertainty at that epoch exceeds half a period, is ambiguous. The catalogue ephemeris only
numbers epochs; it is not a data point in the fit. Without a catalogue row the shortest spacing
between distinct events is taken as the period guess (timings closer than SAME_EVENT_SIGMA
combined errors count as one event); every timing must then lie within EPOCH_TOLERANCE_CYCLES
of a whole number of guessed periods. That rule cannot see a period twice too long when no two
observed transits are consecutive; give a catalogue row whenever that may be the case.
"""

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from vigil.ephemeris.fitting import validated
from vigil.errors import InputError

OUTLIER_SIGMA = 5.0
SAME_EVENT_SIGMA = 5.0
EPOCH_TOLERANCE_CYCLES = 0.1
MINUTES_PER_DAY = 1440.0

TIMING_COLUMNS = ("target", "mid_bjd_tdb", "mid_err_d")
EPHEMERIS_COLUMNS = ("name", "ra_deg", "dec_deg", "t0_bjd_tdb", "t0_err_d", "period_d", "period_err_d", "duration_h")
FIT_COLUMNS = ("t0_period_cov_d2", "reduced_chi2", "n_timings", "n_outliers")


@dataclass(frozen=True)
class LinearFit:
    """Weighted least-squares linear ephemeris; times BJD_TDB in days, T0 at `reference_epoch`."""

    reference_epoch: int
    t0_bjd_tdb: float
    period_d: float
    t0_err_d: float
    period_err_d: float
    t0_period_cov_d2: float
    chi2: float
    n_timings: int

    @property
    def reduced_chi2(self) -> float:
        """chi^2 per degree of freedom (n_timings - 2); NaN when there is no freedom left."""
        dof = self.n_timings - 2
        return self.chi2 / dof if dof > 0 else float("nan")

    def predict_bjd_tdb(self, epochs) -> np.ndarray:
        """Predicted mid-transit BJD_TDB at epochs numbered like the fitted ones."""
        return self.t0_bjd_tdb + (np.asarray(epochs, dtype=float) - self.reference_epoch) * self.period_d


def fit_linear_ephemeris(epochs, times_bjd_tdb, errors_d, target: str = "timings") -> LinearFit:
    """Fit T(n) = T0 + (n - n_ref) P to integer epochs, mid-times BJD_TDB (d) and 1-sigma errors (d).

    `target` only labels error messages. Raises InputError for NaNs, non-positive errors,
    non-integer epochs, mismatched lengths or fewer than two distinct epochs.
    """
    n, t, sigma = _validated_arrays(epochs, times_bjd_tdb, errors_d, target)
    w = 1.0 / sigma**2
    reference_epoch = int(np.floor(np.sum(w * n) / np.sum(w) + 0.5))
    x = n - reference_epoch
    y = t - t[0]  # subtract an anchor so the sums keep full precision
    s, sx, sxx = np.sum(w), np.sum(w * x), np.sum(w * x * x)
    sy, sxy = np.sum(w * y), np.sum(w * x * y)
    det = s * sxx - sx * sx
    intercept = (sxx * sy - sx * sxy) / det
    period = (s * sxy - sx * sy) / det
    chi2 = float(np.sum(w * (y - intercept - period * x) ** 2))
    return LinearFit(
        reference_epoch=reference_epoch,
        t0_bjd_tdb=float(t[0] + intercept),
        period_d=float(period),
        t0_err_d=float(np.sqrt(sxx / det)),
        period_err_d=float(np.sqrt(s / det)),
        t0_period_cov_d2=float(-sx / det),
        chi2=chi2,
        n_timings=int(n.size),
    )


def _validated_arrays(epochs, times_bjd_tdb, errors_d, target):
    n, t, sigma = validated(epochs, times_bjd_tdb, errors_d, target)
    if np.unique(n).size < 2:
        raise InputError(f"target {target!r}: need timings at two or more distinct epochs to fit a period")
    return n, t, sigma


def refit_targets(timings_df: pd.DataFrame, targets_df: pd.DataFrame | None = None) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Refit every target in `timings_df`; return (new targets table, O-C table).

    timings_df: columns target, mid_bjd_tdb (BJD_TDB, d), mid_err_d (d), optional note.
    targets_df: optional catalogue (name, ra_deg, dec_deg, t0_bjd_tdb, t0_err_d, period_d,
    period_err_d, duration_h, optional t0_period_cov_d2, any other columns). When given, all its
    rows are returned, refitted ones with new ephemerides and the rest unchanged (n_timings 0);
    a missing covariance is filled with 0. Without it, coordinates and duration are NaN.

    New targets table: the catalogue columns plus t0_period_cov_d2 (d^2), reduced_chi2,
    n_timings (used in the fit) and n_outliers (flagged). O-C table: target, epoch (counted
    from the refitted T0), mid_bjd_tdb, o_minus_c_min, err_min, residual_sigma, outlier,
    used_in_fit, and note when the timings carry one.
    """
    timings = _validated_timings(timings_df)
    catalogue = _indexed_catalogue(targets_df)
    fits, oc_tables = {}, []
    for target, rows in timings.groupby("target", sort=False):
        rows = rows.sort_values("mid_bjd_tdb")
        t, sigma = rows["mid_bjd_tdb"].to_numpy(float), rows["mid_err_d"].to_numpy(float)
        if catalogue is None:
            epochs = _epochs_from_spacing(t, sigma, target)
        elif target in catalogue.index:
            epochs = _epochs_from_catalogue(t, catalogue.loc[target], target)
        else:
            raise InputError(f"timings: target {target!r} is not in the targets table")
        fit, outlier, used = _fit_rejecting_outliers(epochs, t, sigma, target)
        fits[target] = (fit, int(outlier.sum()))
        oc_tables.append(_o_minus_c_rows(target, rows, epochs, fit, outlier, used))
    return _new_targets_table(fits, catalogue), pd.concat(oc_tables, ignore_index=True)


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


def _epochs_from_catalogue(t: np.ndarray, row: pd.Series, target: str) -> np.ndarray:
    t0, period = float(row["t0_bjd_tdb"]), float(row["period_d"])
    t0_err, period_err = float(row["t0_err_d"]), float(row["period_err_d"])
    cov = float(row["t0_period_cov_d2"]) if pd.notna(row.get("t0_period_cov_d2", np.nan)) else 0.0
    if not (np.isfinite([t0, period, t0_err, period_err]).all() and period > 0):
        raise InputError(f"targets: target {target!r} needs finite t0_bjd_tdb, t0_err_d, period_err_d and positive period_d")
    cycles = (t - t0) / period
    epochs = np.round(cycles)
    worst = int(np.argmax(np.abs(cycles - epochs)))
    if abs(cycles[worst] - epochs[worst]) > 0.25:
        raise InputError(
            f"target {target!r}: timing at BJD_TDB {t[worst]:.5f} lies {cycles[worst] - epochs[worst]:+.2f} periods "
            "from the catalogue prediction; its epoch is ambiguous"
        )
    predicted_sigma = np.sqrt(np.maximum(t0_err**2 + epochs**2 * period_err**2 + 2 * epochs * cov, 0.0))
    if np.any(5.0 * predicted_sigma > 0.5 * period):
        raise InputError(
            f"target {target!r}: the catalogue ephemeris is too uncertain at the timed epochs to count cycles "
            "(5 sigma exceeds half a period)"
        )
    return epochs


def _epochs_from_spacing(t: np.ndarray, sigma: np.ndarray, target: str) -> np.ndarray:
    gaps = np.diff(t)
    combined = np.sqrt(sigma[1:] ** 2 + sigma[:-1] ** 2)
    distinct_gaps = gaps[gaps > SAME_EVENT_SIGMA * combined]
    if distinct_gaps.size == 0:
        raise InputError(f"target {target!r}: need timings at two or more distinct epochs to fit a period")
    period_guess = distinct_gaps.min()
    cycles = (t - t[0]) / period_guess
    epochs = np.round(cycles)
    if np.max(np.abs(cycles - epochs)) > EPOCH_TOLERANCE_CYCLES:
        raise InputError(
            f"target {target!r}: timings are not whole multiples of their shortest spacing ({period_guess:.5f} d); "
            "epochs are ambiguous, give the target's catalogue row"
        )
    return epochs


def _fit_rejecting_outliers(epochs, t, sigma, target):
    """Fit all timings, flag |residual| > OUTLIER_SIGMA, refit once without the flagged ones."""
    first = fit_linear_ephemeris(epochs, t, sigma, target)
    outlier = np.abs(t - first.predict_bjd_tdb(epochs)) / sigma > OUTLIER_SIGMA
    used = ~outlier
    if not outlier.any() or np.unique(epochs[used]).size < 2:
        return first, outlier, np.ones_like(outlier)
    return fit_linear_ephemeris(epochs[used], t[used], sigma[used], target), outlier, used


def _o_minus_c_rows(target, rows, epochs, fit, outlier, used) -> pd.DataFrame:
    t, sigma = rows["mid_bjd_tdb"].to_numpy(float), rows["mid_err_d"].to_numpy(float)
    residual_d = t - fit.predict_bjd_tdb(epochs)
    table = pd.DataFrame(
        {
            "target": target,
            "epoch": (epochs - fit.reference_epoch).astype(int),
            "mid_bjd_tdb": t,
            "o_minus_c_min": residual_d * MINUTES_PER_DAY,
            "err_min": sigma * MINUTES_PER_DAY,
            "residual_sigma": residual_d / sigma,
            "outlier": outlier,
            "used_in_fit": used,
        }
    )
    if "note" in rows.columns:
        table["note"] = rows["note"].to_numpy()
    return table


def _new_targets_table(fits: dict, catalogue: pd.DataFrame | None) -> pd.DataFrame:
    if catalogue is None:
        table = pd.DataFrame({"name": list(fits)})
    else:
        table = catalogue.reset_index(drop=True).copy()
    for column in EPHEMERIS_COLUMNS + ("t0_period_cov_d2",):
        if column not in table.columns:
            table[column] = np.nan
    table["t0_period_cov_d2"] = table["t0_period_cov_d2"].astype(float).fillna(0.0)
    table["reduced_chi2"], table["n_timings"], table["n_outliers"] = np.nan, 0, 0
    for name, (fit, n_outliers) in fits.items():
        at = table["name"] == name
        table.loc[at, "t0_bjd_tdb"] = fit.t0_bjd_tdb
        table.loc[at, "t0_err_d"] = fit.t0_err_d
        table.loc[at, "period_d"] = fit.period_d
        table.loc[at, "period_err_d"] = fit.period_err_d
        table.loc[at, "t0_period_cov_d2"] = fit.t0_period_cov_d2
        table.loc[at, "reduced_chi2"] = fit.reduced_chi2
        table.loc[at, "n_timings"] = fit.n_timings
        table.loc[at, "n_outliers"] = n_outliers
    leading = list(EPHEMERIS_COLUMNS + FIT_COLUMNS)
    return table[leading + [c for c in table.columns if c not in leading]]


_POINT_STYLES = {
    False: {"fmt": "o", "color": "tab:blue", "label": "timing"},
    True: {"fmt": "x", "color": "tab:red", "label": f"outlier (> {OUTLIER_SIGMA:g} sigma)"},
}


def plot_o_minus_c(oc_df: pd.DataFrame, path) -> Path:
    """Write an O-C diagram (one panel per target, minutes vs epoch) as an image; return its path."""
    if oc_df.empty:
        raise InputError("O-C table: no rows to plot")
    targets = list(dict.fromkeys(oc_df["target"]))
    fig = Figure(figsize=(7.0, 2.4 * len(targets) + 0.6), layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(len(targets), 1, squeeze=False)[:, 0]
    for ax, target in zip(axes, targets):
        rows = oc_df[oc_df["target"] == target]
        for flagged, style in _POINT_STYLES.items():
            part = rows[rows["outlier"] == flagged]
            if not part.empty:
                ax.errorbar(part["epoch"], part["o_minus_c_min"], yerr=part["err_min"],
                            capsize=2, ms=4, ls="none", **style)
        ax.axhline(0.0, color="0.5", lw=0.8)
        ax.set_title(str(target))
        ax.set_ylabel("O - C (min)")
        ax.legend(loc="best", fontsize="small")
    axes[-1].set_xlabel("Epoch (cycles from refitted T0)")
    out = Path(path)
    fig.savefig(out, dpi=110)
    return out
