"""The tables vigil passes between stages or writes, defined once: columns, units, kinds.

Times inside the tables are Julian dates whose scale is part of the name (`_bjd_tdb`,
`_jd_utc`); exports turn them into ISO 8601 strings. Durations carry `_d`, `_h` or `_min`.
Each `Table` gives `empty()` (a table with no rows and exactly the columns and kinds of a full
one) and `check()`, called where a stage hands a table on: a table that breaks its schema is a
bug in vigil, reported as a `SchemaError`.
"""

from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

COVERAGE_CLASSES = ("full", "ingress", "egress", "partial", "none")
EVENTS = ("transit", "occultation")

# Column names that cross modules.
TARGET = "target"
SITE = "site"
EPOCH = "epoch"
MID_BJD_TDB = "mid_bjd_tdb"
MID_SIGMA_D = "mid_sigma_d"
MID_JD_UTC = "mid_jd_utc"
INGRESS_JD_UTC = "ingress_jd_utc"
EGRESS_JD_UTC = "egress_jd_utc"
WINDOW_START_JD_UTC = "window_start_jd_utc"
WINDOW_END_JD_UTC = "window_end_jd_utc"
COVERAGE = "coverage"
OBSERVABLE_FRACTION = "observable_fraction"
OBSERVABLE_START_JD_UTC = "observable_start_jd_utc"
OBSERVABLE_END_JD_UTC = "observable_end_jd_utc"
MERIDIAN_JD_UTC = "meridian_jd_utc"
MERIDIAN_IN_TRANSIT = "meridian_in_transit"

_DTYPES = {"float": "float64", "int": "int64", "bool": "bool", "text": "str", "utc": "datetime64[s, UTC]"}


class SchemaError(RuntimeError):
    """A table handed between stages does not match its schema (a bug in vigil, not in the input)."""


@dataclass(frozen=True)
class Column:
    """One column: name, unit ('' for none), kind (float, int, bool, text or a tuple of the
    allowed categories) and what it holds."""

    name: str
    unit: str
    kind: str | tuple
    text: str


@dataclass(frozen=True)
class Table:
    """A table's columns in order; `optional` columns may be absent; `extra_allowed` tables keep
    columns of their own too (the targets table keeps the user's extra columns)."""

    name: str
    columns: tuple[Column, ...]
    optional: tuple[Column, ...] = ()
    extra_allowed: bool = False

    @property
    def names(self) -> tuple[str, ...]:
        """The required column names, in order."""
        return tuple(c.name for c in self.columns)

    @property
    def descriptions(self) -> dict[str, str]:
        """Column name -> what it holds, with its unit."""
        return {c.name: f"{c.text}{f' ({c.unit})' if c.unit else ''}" for c in (*self.columns, *self.optional)}

    def empty(self) -> pd.DataFrame:
        """A table with no rows and exactly the required columns and kinds of a full one.

        Examples
        --------
        >>> list(Table("t", (Column("a_h", "h", "float", "hours"),)).empty().dtypes.astype(str))
        ['float64']
        """
        return pd.DataFrame({c.name: _empty_column(c.kind) for c in self.columns})

    def check(self, table: pd.DataFrame) -> pd.DataFrame:
        """`table` itself if it has the required columns in order with their kinds (and no others
        unless optional or `extra_allowed`); else a SchemaError naming the table and the column."""
        missing = [n for n in self.names if n not in table.columns]
        if missing:
            raise SchemaError(f"{self.name} table: missing column(s) {', '.join(missing)}")
        if [c for c in table.columns if c in self.names] != list(self.names):
            raise SchemaError(f"{self.name} table: columns out of order; expected {', '.join(self.names)}")
        known = {*self.names, *(c.name for c in self.optional)}
        extra = [c for c in table.columns if c not in known]
        if extra and not self.extra_allowed:
            raise SchemaError(f"{self.name} table: unexpected column(s) {', '.join(map(str, extra))}")
        for column in (*self.columns, *(c for c in self.optional if c.name in table.columns)):
            if not _has_kind(table[column.name], column.kind):
                raise SchemaError(f"{self.name} table: column {column.name} holds {table[column.name].dtype}, "
                                  f"expected {column.kind}")
        return table


def _empty_column(kind) -> pd.Series:
    if isinstance(kind, tuple):
        return pd.Series(pd.Categorical([], categories=kind))
    return pd.Series([], dtype=_DTYPES[kind])


def _has_kind(values: pd.Series, kind) -> bool:
    dtype = values.dtype
    if isinstance(kind, tuple):
        return set(pd.unique(values.dropna()).astype(str)) <= set(kind)  # the distinct values only: fast
    if kind == "float":
        return pd.api.types.is_numeric_dtype(dtype) and not pd.api.types.is_bool_dtype(dtype)
    if kind == "int":
        return pd.api.types.is_integer_dtype(dtype)
    if kind == "bool":
        return pd.api.types.is_bool_dtype(dtype)
    if kind == "utc":
        return isinstance(dtype, pd.DatetimeTZDtype) and str(dtype.tz) == "UTC"
    return not pd.api.types.is_numeric_dtype(dtype) or values.empty


def _col(name: str, unit: str, kind, text: str) -> Column:
    return Column(name, unit, kind, text)


_TARGET_NAME = _col(TARGET, "", "text", "planet name")
_SITE_NAME = _col(SITE, "", "text", "site name")
_EPOCH = _col(EPOCH, "", "int", "transit number counted from t0")
_COVERAGE = _col(COVERAGE, "", COVERAGE_CLASSES, "full, ingress, egress, partial or none")
_SHARED_WITH = _col("shared_with", "", "text", "other planets of the same star whose windows overlap this one")

# Optional ephemeris columns of the targets table (read by vigil.ephemeris.models): a quadratic
# ephemeris T(n) = T0 + kP + k^2 dP/dN / 2 with k = n - t0_epoch, and its covariances.
T0_EPOCH = "t0_epoch"
DP_DN_D = "dp_dn_d"
DP_DN_ERR_D = "dp_dn_err_d"
T0_DP_DN_COV_D2 = "t0_dp_dn_cov_d2"
PERIOD_DP_DN_COV_D2 = "period_dp_dn_cov_d2"
TARGET_EPHEMERIS_COLUMNS = (
    _col(T0_EPOCH, "", "float", "epoch number of t0_bjd_tdb, counted from the catalogue's T0 (0 when absent)"),
    _col(DP_DN_D, "d", "float", "dP/dN, change of the period per epoch (negative for a shrinking orbit)"),
    _col(DP_DN_ERR_D, "d", "float", "1-sigma uncertainty of dp_dn_d"),
    _col(T0_DP_DN_COV_D2, "d^2", "float", "covariance of t0 and dp_dn_d"),
    _col(PERIOD_DP_DN_COV_D2, "d^2", "float", "covariance of period and dp_dn_d"),
)

TARGETS = Table("targets", (
    _col("name", "", "text", "planet name"),
    _col("ra_deg", "deg", "float", "right ascension, ICRS"),
    _col("dec_deg", "deg", "float", "declination, ICRS"),
    _col("t0_bjd_tdb", "BJD_TDB", "float", "reference mid-transit time"),
    _col("t0_err_d", "d", "float", "1-sigma uncertainty of t0"),
    _col("period_d", "d", "float", "orbital period"),
    _col("period_err_d", "d", "float", "1-sigma uncertainty of the period"),
    _col("duration_h", "h", "float", "total transit duration, first to fourth contact"),
    _col("t0_period_cov_d2", "d^2", "float", "covariance of t0 and period (0 when absent)"),
), optional=TARGET_EPHEMERIS_COLUMNS, extra_allowed=True)

TRANSITS = Table("transits", (
    _TARGET_NAME,
    _col("event", "", EVENTS, "transit, or occultation (secondary eclipse) following the transit of the same epoch"),
    _EPOCH,
    _col(MID_BJD_TDB, "BJD_TDB", "float", "predicted mid-event time"),
    _col(MID_SIGMA_D, "d", "float", "1-sigma uncertainty of the mid-time"),
    _col("duration_h", "h", "float", "event duration, first to fourth contact"),
    _col("period_d", "d", "float", "orbital period"),
    _col("ra_deg", "deg", "float", "right ascension of the target, ICRS"),
    _col("dec_deg", "deg", "float", "declination of the target, ICRS"),
))

WINDOWS = Table("windows", (
    *TRANSITS.columns,
    _SITE_NAME,
    _col(MID_JD_UTC, "JD UTC", "float", "mid-time as seen at the site"),
    _col(INGRESS_JD_UTC, "JD UTC", "float", "first contact at the site"),
    _col(EGRESS_JD_UTC, "JD UTC", "float", "fourth contact at the site"),
    _col(WINDOW_START_JD_UTC, "JD UTC", "float", "ingress minus baseline minus K sigma"),
    _col(WINDOW_END_JD_UTC, "JD UTC", "float", "egress plus baseline plus K sigma"),
    _col("stale", "", "bool", "K sigma exceeds a quarter of the duration or the baseline: refresh the ephemeris"),
    _COVERAGE,
    _col(OBSERVABLE_FRACTION, "", "float", "fraction of [ingress, egress] that is observable"),
    _col(OBSERVABLE_START_JD_UTC, "JD UTC", "float", "start of the longest observable stretch overlapping the transit"),
    _col(OBSERVABLE_END_JD_UTC, "JD UTC", "float", "end of that stretch"),
    _col("alt_mid_deg", "deg", "float", "target altitude at mid-transit: apparent (refraction included) above "
         "the horizon, geometric below it"),
    _col("airmass_mid", "", "float", "airmass at mid-transit (Kasten & Young 1989)"),
    _col("sun_alt_mid_deg", "deg", "float", "altitude of the Sun's centre at mid-transit (geometric)"),
    _col("moon_sep_deg", "deg", "float", "Moon-target separation at mid-transit"),
    _col("moon_illumination", "", "float", "illuminated fraction of the Moon's disk at mid-transit (0 new, 1 full)"),
    _col("moon_alt_mid_deg", "deg", "float", "altitude of the Moon's centre at mid-transit (geometric; below 0 it "
         "is down and adds no sky light); NaN in space"),
    _col(MERIDIAN_JD_UTC, "JD UTC", "float", "the target's upper culmination (hour angle 0) nearest mid-transit; "
         "NaN in space"),
    _col(MERIDIAN_IN_TRANSIT, "", "bool", "that culmination falls between ingress and egress: a German "
         "equatorial mount flips during the transit (False in space)"),
), optional=(_SHARED_WITH,))

_VISIT_COLUMNS = (
    _TARGET_NAME, _SITE_NAME, _EPOCH, _COVERAGE,
    _col(MID_JD_UTC, "JD UTC", "float", "mid-time as seen at the site"),
    _col("start_jd_utc", "JD UTC", "float", "start of the visit (the window's observable stretch)"),
    _col("end_jd_utc", "JD UTC", "float", "end of the visit"),
    _col("in_transit_h", "h", "float", "in-transit time inside the visit"),
    _col("baseline_h", "h", "float", "out-of-transit time inside the visit"),
    _col("telescope_h", "h", "float", "the visit plus the overhead"),
)
VISITS = Table("visits", (
    *_VISIT_COLUMNS,
    _col("night", "", "int", "local noon-to-noon day (JD number; UTC days in space)"),
    _col("month", "", "int", "calendar month of the mid-time, 1-12"),
    _col("half_year", "", "int", "2 x year + 1 for July-December: the allocation period"),
), optional=(_col("gain", "", "float", "spectral gain per telescope hour (scheduled visits)"),
              _col("airmass", "", "float", "airmass at mid-transit (noise budget; NaN unknown or space)"),
              _col("moon_illumination", "", "float", "Moon's illuminated fraction at mid-transit (noise budget)"),
              _col("moon_sep_deg", "deg", "float", "Moon-target separation at mid-transit (noise budget)"),
              _col("moon_alt_deg", "deg", "float", "altitude of the Moon's centre at mid-transit (noise budget; "
                   "NaN unknown or space)"),
              _col("elevation_m", "m", "float", "site elevation (scintillation)"),
              _col("ground", "", "bool", "ground site: the atmosphere's noise terms apply"),
              _col("pointing", "", "int", "number of the pointing: visits of planets of one star observed together"),
              _SHARED_WITH))

LEDGER = Table("ledger", (
    *_VISIT_COLUMNS,
    _SHARED_WITH,
    _col("sky", "", ("clear", "cloudy"), "sky in trial 0 (not the journal's outcome weather)"),
    _col("clear_share", "", "float", "share of trials in which the visit was clear"),
))

SUMMARY = Table("summary", (
    _TARGET_NAME,
    _col("goal_resolution", "", "float", "spectral resolution wanted"),
    _col("goal_snr", "", "float", "SNR per bin wanted"),
    _col("transits_per_year", "1/yr", "float", "clear visits a year, mean over trials"),
    _col("in_transit_hours_per_year", "h/yr", "float", "in-transit hours a year, mean over trials"),
    _col("years_to_goal_p10", "yr", "float", "years to the goal, 10th percentile of trials (inf: never)"),
    _col("years_to_goal_p50", "yr", "float", "median years to the goal (inf: never)"),
    _col("years_to_goal_p90", "yr", "float", "years to the goal, 90th percentile (inf: never)"),
    _col("reachable", "", "bool", "goal met within the horizon in at least half the trials"),
    _col("snr_cap", "", "float", "highest SNR per bin the noise floor allows"),
    _col("hours_needed", "h", "float", "in-transit hours needed for the goal"),
    _col("limited_by", "", "text", "why the goal is missed ('' when reachable)"),
), extra_allowed=True)

FORECAST = Table("forecast", (
    _TARGET_NAME,
    _col("campaign_year", "", "int", "year of the campaign, from 1"),
    _col("calendar_year", "", "int", "calendar year it starts in"),
    _col("in_transit_hours_p50", "h", "float", "stacked in-transit hours, median over trials"),
    _col("in_transit_hours_p10", "h", "float", "stacked in-transit hours, 10th percentile"),
    _col("in_transit_hours_p90", "h", "float", "stacked in-transit hours, 90th percentile"),
    _col("snr_at_goal_resolution_p50", "", "float", "SNR per bin at the goal resolution, median"),
    _col("resolution_at_goal_snr_p50", "", "float", "resolution reached at the goal SNR, median"),
    _col("resolution_at_goal_snr_p10", "", "float", "resolution reached at the goal SNR, 10th percentile"),
    _col("resolution_at_goal_snr_p90", "", "float", "resolution reached at the goal SNR, 90th percentile"),
), extra_allowed=True)

SCENARIOS = Table("scenarios", (
    *SUMMARY.columns,
    _col("scenario", "", "text", "atmosphere scenario (catalog: the target's own mu)"),
    _col("mu", "u", "float", "mean molecular weight of the scenario"),
    _col("n_scale_heights", "", "float", "feature amplitude in scale heights"),
    _col("feature_ppm", "ppm", "float", "feature amplitude, change of the transit depth"),
))

BUDGET = Table("budget", (
    _TARGET_NAME,
    _col("term", "", ("photon_target", "photon_comparison", "sky", "read", "scintillation", "red_noise", "floor"),
         "noise term"),
    _col("ppm_per_bin_per_visit", "ppm", "float", "the term's noise on the depth in the deciding bin, median visit"),
    _col("share_of_variance", "", "float", "its share of the variance after visits_stacked such visits"),
    _col("wavelength_um", "um", "float", "centre of the deciding bin"),
    _col("visits_stacked", "", "float", "clear visits over the horizon, median over trials (at least 1)"),
))

# The windows table as the Python API hands it out and the writers read it: times as UTC
# datetimes (kind "utc") to the second, the mid-time's sigma in minutes.
_OUT_TIME = {"mid_utc": "mid-time as seen at the site", "ingress_utc": "first contact at the site",
             "egress_utc": "fourth contact at the site", "window_start_utc": "ingress minus baseline minus K sigma",
             "window_end_utc": "egress plus baseline plus K sigma",
             "observable_start_utc": "start of the longest observable stretch overlapping the transit",
             "observable_end_utc": "end of that stretch",
             "meridian_utc": "the target's upper culmination (hour angle 0) nearest mid-transit; empty in space"}
_WINDOW_COLUMN = {c.name: c for c in WINDOWS.columns}
WINDOWS_OUT = Table("windows (handed out)", (
    *(_WINDOW_COLUMN[n] for n in (TARGET, SITE, "event", EPOCH, MID_BJD_TDB)),
    _col("mid_utc", "UTC", "utc", _OUT_TIME["mid_utc"]),
    _col("mid_sigma_min", "min", "float", "1-sigma uncertainty of the mid-time"),
    *(_col(n, "UTC", "utc", _OUT_TIME[n]) for n in ("ingress_utc", "egress_utc", "window_start_utc", "window_end_utc")),
    _COVERAGE, _WINDOW_COLUMN[OBSERVABLE_FRACTION],
    *(_col(n, "UTC", "utc", _OUT_TIME[n]) for n in ("observable_start_utc", "observable_end_utc")),
    *(_WINDOW_COLUMN[n] for n in ("alt_mid_deg", "airmass_mid", "sun_alt_mid_deg", "moon_sep_deg", "moon_illumination",
                                  "moon_alt_mid_deg")),
    _col("meridian_utc", "UTC", "utc", _OUT_TIME["meridian_utc"]), _WINDOW_COLUMN[MERIDIAN_IN_TRANSIT],
    _WINDOW_COLUMN["stale"],
    _SHARED_WITH,
))

TABLES = (TARGETS, TRANSITS, WINDOWS, WINDOWS_OUT, VISITS, LEDGER, SUMMARY, FORECAST, SCENARIOS, BUDGET)
TARGET_COLUMNS = TARGETS.descriptions
