"""`vigil refit`: update each target's ephemeris with measured mid-times, and say what changed."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Optional

import numpy as np

from vigil import api
from vigil.cli_support import out, setup_logging, user_errors
from vigil.ephemeris.fitting import BIC_MARGIN, OUTLIER_RULE
from vigil.ephemeris.refit import TargetRefit
from vigil.ephemeris.staleness import DURATION_FRACTION, stale_date
from vigil.errors import ArgumentError, InputError
from vigil.export.files import OutputTransaction
from vigil.export.o_minus_c_plot import plot_o_minus_c
from vigil.export.table import write_csv
from vigil.target_source import CatalogueOptions
from vigil.time_units import DAYS_PER_JULIAN_YEAR, HOURS_PER_DAY, MINUTES_PER_DAY

COMPARE_AFTER_YEARS = 2.0


def run_refit(timings_file: Path, out_path: Path, targets_file: Optional[Path], catalogue: CatalogueOptions,
              use_prior: bool, sigma_k: float, force: bool) -> None:
    """`vigil refit` (options in vigil.cli): refit, write the targets CSV, O-C table and picture, report."""
    setup_logging()
    oc_path = out_path.with_name(out_path.stem + "_o_minus_c.csv")
    plot_path = oc_path.with_suffix(".png")
    outputs = (out_path, oc_path, plot_path)
    with user_errors(), OutputTransaction(outputs, (timings_file, targets_file, catalogue.columns), force).committing():
        timings = api.read_timings(timings_file)
        targets = (api.read_targets(targets_file, format=catalogue.format, columns=catalogue.columns,
                                    strict=catalogue.strict) if targets_file is not None else None)
        try:
            result = api.refit(timings, targets, use_prior=use_prior)
        except InputError as exc:
            message = exc.named("--targets TARGETS.csv") if isinstance(exc, ArgumentError) and exc.argument == "targets" \
                else str(exc)
            hint = "" if targets_file is not None or "--targets" in message else " (pass --targets TARGETS.csv)"
            raise InputError(f"{timings_file}: {message}{hint}") from None
        durations = dict(zip(result.targets["name"], result.targets["duration_h"].astype(float)))
        write_csv(result.targets, out_path)
        write_csv(result.o_minus_c, oc_path)
        plot_o_minus_c(result.o_minus_c, result.fits, durations, plot_path, sigma_k)
    for name, fit in result.fits.items():
        rows = result.o_minus_c[result.o_minus_c["target"] == name]
        for line in _report(fit, rows, durations[name], sigma_k):
            out.print(line, highlight=False, markup=False, soft_wrap=True)
    out.print(f"wrote {out_path}, {oc_path}, {plot_path}", highlight=False, soft_wrap=True)


def _report(fit: TargetRefit, rows, duration_h: float, sigma_k: float) -> list[str]:
    """The lines printed for one target: model and why, prior, ephemeris, chi2, removals, sigma, staleness."""
    model, chosen = fit.ephemeris, fit.choice.chosen
    prior = "catalogue ephemeris used as prior" if fit.prior_used else "timings alone, no prior"
    chi2 = (f"reduced chi2 {chosen.reduced_chi2:.2f}" if math.isfinite(chosen.reduced_chi2)
            else "reduced chi2 not available (fewer than 3 timings or no freedom left)")
    lines = [f"{fit.name}: {fit.choice.reason}; {prior}",
             f"  P = {float(model.period_d):.9f} ± {float(model.period_err_d):.2g} d, T0 = {float(model.t0_bjd_tdb):.6f} "
             f"± {float(model.t0_err_d) * MINUTES_PER_DAY:.2f} min (BJD_TDB) at epoch {int(model.t0_epoch)}; {chi2}; "
             f"{chosen.n_timings} timings used"]
    if fit.choice.quadratic is not None:
        rate, rate_err = fit.choice.quadratic.dp_dt_ms_yr
        status = "chosen" if chosen is fit.choice.quadratic else f"not chosen: BIC gain <= {BIC_MARGIN:g}"
        lines.append(f"  dP/dt = {rate:.1f} ± {rate_err:.1f} ms/yr (quadratic fit, {status})")
    for row in rows[~rows["used_in_fit"]].itertuples(index=False):
        lines.append(f"  removed BJD_TDB {row.mid_bjd_tdb:.5f} (epoch {row.epoch}): {row.removed_by}"
                     + (f", O-C {row.o_minus_c_min:+.1f} min = {row.residual_sigma:+.1f} sigma"
                        if row.removed_by == OUTLIER_RULE else ""))
    last = float(rows["mid_bjd_tdb"].max()) + COMPARE_AFTER_YEARS * DAYS_PER_JULIAN_YEAR
    epoch = int(np.round(model.epoch_at(last)))
    compare = f"  mid-time sigma {COMPARE_AFTER_YEARS:g} years after the last timing (epoch {epoch}): refit " \
              f"{float(model.mid_sigma_d(epoch)) * MINUTES_PER_DAY:.2f} min"
    if fit.catalogue is not None:
        compare += f", catalogue {float(fit.catalogue.mid_sigma_d(epoch)) * MINUTES_PER_DAY:.2f} min"
    lines.append(compare)
    if math.isfinite(duration_h):
        stale = stale_date(model, DURATION_FRACTION * duration_h / HOURS_PER_DAY, sigma_k)
        when = "never" if stale.time is None else f"from {stale.time.utc.iso[:10]} (epoch {int(stale.epoch)})"
        lines.append(f"  stale ({sigma_k:g} sigma > {DURATION_FRACTION:g} of the {duration_h:g} h transit): {when}")
    return lines
