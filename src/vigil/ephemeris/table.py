"""Per-epoch ephemeris tables: predicted mid-times with their 1-sigma, from a dynamical fit.

For a system with transit-timing variations no polynomial will do; the observer's own
dynamical fit gives the predicted mid-time of each transit. The CSV has one row per transit:
    target, epoch, mid_bjd_tdb, mid_err_d
(epochs counted from the catalogue's T0, consecutive within each target; BJD_TDB and days).
A table is used inside its span only. Asked to extrapolate, it continues with a weighted
linear fit to its own rows, whose 1-sigma adds the table's rms scatter about that fit in
quadrature (the timing variations themselves are not predicted beyond the table).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from pathlib import Path

import numpy as np
import pandas as pd

from vigil.ephemeris.fitting import fit_polynomial
from vigil.ephemeris.models import PolynomialEphemeris
from vigil.errors import InputError

TABLE_COLUMNS = ("target", "epoch", "mid_bjd_tdb", "mid_err_d")


@dataclass(frozen=True, eq=False)
class TableEphemeris:
    """Mid-times per consecutive epoch (BJD_TDB, d) with 1-sigma (d); see the module docstring.

    Examples
    --------
    >>> table = TableEphemeris("b", np.array([3, 4, 5]), np.array([2460006.0, 2460008.01, 2460010.0]),
    ...                        np.array([1e-3, 1e-3, 1e-3]))
    >>> table.epoch_range(2460007.0, 2460010.0)
    (4, 5)
    """

    target: str
    epochs: np.ndarray
    mids_bjd_tdb: np.ndarray
    errors_d: np.ndarray
    extrapolate: bool = False
    kind: str = "table"

    def _inside(self, epochs) -> np.ndarray:
        n = np.asarray(epochs)
        return (n >= self.epochs[0]) & (n <= self.epochs[-1])

    @cached_property
    def _trend(self) -> tuple[PolynomialEphemeris, float]:
        fit = fit_polynomial(self.epochs, self.mids_bjd_tdb, self.errors_d, degree=1)
        rms_d = float(np.sqrt(np.mean((self.mids_bjd_tdb - fit.ephemeris.mid_bjd_tdb(self.epochs)) ** 2)))
        return fit.ephemeris, rms_d

    def _refuse(self, start_bjd_tdb: float, end_bjd_tdb: float) -> None:
        if self.extrapolate or (start_bjd_tdb >= self.mids_bjd_tdb[0] and end_bjd_tdb <= self.mids_bjd_tdb[-1]):
            return
        raise InputError(f"ephemeris table of {self.target!r} covers BJD_TDB {self.mids_bjd_tdb[0]:.3f} to "
                         f"{self.mids_bjd_tdb[-1]:.3f} (epochs {self.epochs[0]} to {self.epochs[-1]}); the dates asked "
                         "for go beyond it (allow a linear continuation with --extrapolate-table, or "
                         "extrapolate_table = true in a campaign file)")

    def epoch_range(self, start_bjd_tdb: float, end_bjd_tdb: float) -> tuple[int, int]:
        self._refuse(start_bjd_tdb, end_bjd_tdb)
        first, last = self._trend[0].epoch_range(start_bjd_tdb, end_bjd_tdb)
        mids = self.mid_bjd_tdb(np.arange(first - 1, last + 2))  # timing variations can cross an edge
        inside = np.flatnonzero((mids >= start_bjd_tdb) & (mids <= end_bjd_tdb)) + first - 1
        return (int(inside[0]), int(inside[-1])) if inside.size else (first, first - 1)

    def mid_bjd_tdb(self, epochs) -> np.ndarray:
        n = np.asarray(epochs, dtype=np.int64)
        inside = self._inside(n)
        out = np.asarray(self._trend[0].mid_bjd_tdb(n), dtype=float) if not inside.all() else np.empty(n.shape)
        out[inside] = self.mids_bjd_tdb[n[inside] - self.epochs[0]]
        return out

    def mid_sigma_d(self, epochs) -> np.ndarray:
        n = np.asarray(epochs, dtype=np.int64)
        inside = self._inside(n)
        out = np.empty(n.shape)
        if not inside.all():
            trend, rms_d = self._trend
            out = np.hypot(trend.mid_sigma_d(n), rms_d)
        out[inside] = self.errors_d[n[inside] - self.epochs[0]]
        return out


def read_ephemeris_table(path: str | Path, extrapolate: bool = False) -> dict[str, TableEphemeris]:
    """Read a per-epoch table CSV (module docstring) into one TableEphemeris per target.

    InputError names the file, line and field: a missing column, a non-number, an epoch that is
    not whole, a gap or repeat in a target's epochs, a non-positive mid_err_d.
    """
    path = Path(path)
    try:
        table = pd.read_csv(path, dtype=str, keep_default_na=False, encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError, pd.errors.ParserError) as exc:
        raise InputError(f"{path}: cannot read the ephemeris table ({exc})") from None
    missing = [c for c in TABLE_COLUMNS if c not in table.columns]
    if missing:
        raise InputError(f"{path}: line 1: missing column(s) {', '.join(missing)}; expected {', '.join(TABLE_COLUMNS)}")
    values = {c: pd.to_numeric(table[c].str.strip(), errors="coerce").to_numpy(float) for c in TABLE_COLUMNS[1:]}
    for column, ok in (("epoch", np.isfinite(values["epoch"]) & (values["epoch"] == np.round(values["epoch"]))),
                       ("mid_bjd_tdb", np.isfinite(values["mid_bjd_tdb"])),
                       ("mid_err_d", np.isfinite(values["mid_err_d"]) & (values["mid_err_d"] > 0))):
        if not ok.all():
            i = int(np.flatnonzero(~ok)[0])
            raise InputError(f"{path}: line {i + 2}, field {column}: expected a number (epoch whole, mid_err_d > 0), "
                             f"got {table[column].iat[i]!r}")
    models = {}
    for target, rows in table.assign(_line=np.arange(len(table)) + 2, **values).groupby("target", sort=False):
        rows = rows.sort_values("epoch")
        epochs = rows["epoch"].to_numpy().astype(np.int64)
        steps = np.diff(epochs)
        if epochs.size < 2:
            raise InputError(f"{path}: line {rows['_line'].iat[0]}: target {target!r} has one row; a table needs two "
                             "or more consecutive epochs")
        if np.any(steps != 1):
            i = int(np.flatnonzero(steps != 1)[0]) + 1
            raise InputError(f"{path}: line {rows['_line'].iat[i]}, field epoch: expected consecutive epochs for "
                             f"target {target!r}, got {epochs[i - 1]} then {epochs[i]}")
        models[target] = TableEphemeris(target, epochs, rows["mid_bjd_tdb"].to_numpy(), rows["mid_err_d"].to_numpy(),
                                        extrapolate)
    return models
