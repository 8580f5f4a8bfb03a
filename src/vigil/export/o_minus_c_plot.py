"""O-C picture of a refit: the timings against the catalogue, and the projection ahead.

Per target, two labelled panels. Left, "timings": O - C in minutes against the catalogue
ephemeris (C; the linear refit when there is no catalogue row) by epoch, used timings as points
with error bars, removed ones as crosses, the chosen model and its 1-sigma band. Right,
"projection": the chosen model minus C over the coming years, its projected 1-sigma cone, the
catalogue's own cone and the stale threshold: the sigma at which K sigma exceeds a quarter of
the transit duration (vigil.ephemeris.staleness).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from vigil.ephemeris.refit import TargetRefit
from vigil.ephemeris.staleness import DURATION_FRACTION
from vigil.errors import InputError
from vigil.export.palette import save_png
from vigil.time_units import DAYS_PER_JULIAN_YEAR, HOURS_PER_DAY, MINUTES_PER_DAY

J2000_JD = 2451545.0
def _year(bjd_tdb):
    return 2000.0 + (np.asarray(bjd_tdb, dtype=float) - J2000_JD) / DAYS_PER_JULIAN_YEAR


def _timings_panel(axes, rows: pd.DataFrame, fit: TargetRefit, reference) -> None:
    used, removed = rows[rows["used_in_fit"]], rows[~rows["used_in_fit"]]
    offset = lambda part: (part["mid_bjd_tdb"] - reference.mid_bjd_tdb(part["epoch"])) * MINUTES_PER_DAY  # noqa: E731
    axes.errorbar(used["epoch"], offset(used), yerr=used["err_min"], fmt="o", ms=4, capsize=2, color="tab:blue",
                  label="timing used")
    for rule, part in removed.groupby("removed_by"):
        axes.plot(part["epoch"], offset(part), "x", color="tab:red", ms=7, label=f"removed: {rule}")
    n = np.linspace(rows["epoch"].min(), rows["epoch"].max(), 200)
    _model_band(axes, fit, reference, n, n)
    axes.axhline(0.0, color="0.4", lw=0.8, label="C (catalogue)" if fit.catalogue is not None else "C (linear refit)")
    axes.set_xlabel("Epoch (counted from the catalogue T0)")
    axes.set_ylabel("O - C (min)")
    axes.set_title(f"{fit.name}: timings")


def _model_band(axes, fit: TargetRefit, reference, n, x) -> None:
    model = fit.ephemeris
    curve = (model.mid_bjd_tdb(n) - reference.mid_bjd_tdb(n)) * MINUTES_PER_DAY
    sigma = model.mid_sigma_d(n) * MINUTES_PER_DAY
    label = ("quadratic" if fit.choice.chosen.degree == 2 else "linear") + " refit"
    axes.plot(x, curve, color="tab:green", lw=1.2, label=label)
    axes.fill_between(x, curve - sigma, curve + sigma, color="tab:green", alpha=0.2, lw=0, label=f"{label} 1 sigma")


def _projection_panel(axes, fit: TargetRefit, reference, last_bjd_tdb: float, duration_h: float,
                      sigma_k: float, years: float) -> None:
    first, last = fit.ephemeris.epoch_range(last_bjd_tdb, last_bjd_tdb + years * DAYS_PER_JULIAN_YEAR)
    n = np.linspace(first, max(last, first + 1), 200)
    x = _year(fit.ephemeris.mid_bjd_tdb(n))
    _model_band(axes, fit, reference, n, x)
    if fit.catalogue is not None:
        cone = fit.catalogue.mid_sigma_d(n) * MINUTES_PER_DAY
        base = (fit.catalogue.mid_bjd_tdb(n) - reference.mid_bjd_tdb(n)) * MINUTES_PER_DAY
        axes.plot(x, base + cone, "--", color="0.4", lw=0.8, label="catalogue 1 sigma")
        axes.plot(x, base - cone, "--", color="0.4", lw=0.8)
    if np.isfinite(duration_h):
        limit_min = DURATION_FRACTION * duration_h / sigma_k / HOURS_PER_DAY * MINUTES_PER_DAY
        axes.axhline(limit_min, color="tab:orange", ls=":", label=f"stale threshold ({sigma_k:g} sigma > "
                     f"{DURATION_FRACTION:g} x duration)")
        axes.axhline(-limit_min, color="tab:orange", ls=":")
    axes.set_xlabel("Year (BJD_TDB)")
    axes.set_ylabel("model - C (min)")
    axes.set_title(f"{fit.name}: projection")


def plot_o_minus_c(oc_df: pd.DataFrame, fits: dict, durations_h: dict, path, sigma_k: float = 1.0,
                   years: float = 10.0) -> None:
    """Write the O-C picture (module docstring) of the refit `fits` (target -> TargetRefit) as PNG,
    atomically; durations_h maps target -> transit duration in hours (NaN: no stale threshold)."""
    if oc_df.empty:
        raise InputError("O-C table: no rows to plot")
    targets = list(dict.fromkeys(oc_df["target"]))
    figure = Figure(figsize=(12.0, 3.2 * len(targets) + 0.4), layout="constrained")
    axes = figure.subplots(len(targets), 2, squeeze=False)
    for (left, right), target in zip(axes, targets):
        fit = fits[target]
        rows = oc_df[oc_df["target"] == target]
        reference = fit.catalogue if fit.catalogue is not None else fit.choice.linear.ephemeris
        _timings_panel(left, rows, fit, reference)
        _projection_panel(right, fit, reference, float(rows["mid_bjd_tdb"].max()),
                          float(durations_h.get(target, np.nan)), sigma_k, years)
        for panel in (left, right):
            panel.legend(fontsize=7)
            panel.grid(alpha=0.3)
    save_png(figure, path)
