"""The windows table as the observer's CSV: one row per transit per site."""

from __future__ import annotations

from contextlib import contextmanager
from typing import Callable, Iterator
from zoneinfo import ZoneInfo

import pandas as pd

from vigil import schema
from vigil.export.files import atomic_stream
from vigil.export.table import csv_bytes, iso_utc, utc_from_iso
from vigil.time_units import MINUTES_PER_DAY, SECONDS_PER_DAY

UNIX_EPOCH_JD = 2440587.5  # 1970-01-01T00:00:00 UTC (UTC days of 86400 s; leap seconds are not counted by POSIX time)

TIME_COLUMNS = {
    "mid_utc": schema.MID_JD_UTC,
    "ingress_utc": schema.INGRESS_JD_UTC,
    "egress_utc": schema.EGRESS_JD_UTC,
    "window_start_utc": schema.WINDOW_START_JD_UTC,
    "window_end_utc": schema.WINDOW_END_JD_UTC,
    "observable_start_utc": schema.OBSERVABLE_START_JD_UTC,
    "observable_end_utc": schema.OBSERVABLE_END_JD_UTC,
    "meridian_utc": schema.MERIDIAN_JD_UTC,
}
COLUMNS = list(schema.WINDOWS_OUT.names)
DECIMALS = {schema.MID_BJD_TDB: 6, "mid_sigma_min": 2, schema.OBSERVABLE_FRACTION: 4, "alt_mid_deg": 2,
            "airmass_mid": 3, "sun_alt_mid_deg": 2, "moon_sep_deg": 2, "moon_illumination": 3,
            "moon_alt_mid_deg": 2}


def utc_datetimes(jd_utc) -> pd.Series:
    """JD UTC as timezone-aware UTC datetimes (datetime64[s, UTC]: every date vigil plans for,
    1950-2300, fits) rounded to the second as in the CSV; NaT where the JD is NaN.

    Examples
    --------
    >>> utc_datetimes([2561000.25, float("nan")]).tolist()
    [Timestamp('2299-09-05 18:00:00+0000', tz='UTC'), NaT]
    """
    return utc_from_iso(iso_utc(jd_utc))


def windows_table(windows: pd.DataFrame) -> pd.DataFrame:
    """The windows table as vigil hands it out: the CSV's columns, times as UTC datetimes,
    BJD_TDB as float days, numbers unrounded, the notes kept. A table already in this form is
    returned as is.

    Examples
    --------
    >>> windows_table(internal)["mid_utc"].dtype  # doctest: +SKIP
    datetime64[s, UTC]
    """
    if schema.MID_JD_UTC not in windows.columns:
        return schema.WINDOWS_OUT.check(windows)
    schema.WINDOWS.check(windows)
    out = pd.DataFrame({c: windows[c] for c in ("target", "site", "event", "epoch", "mid_bjd_tdb", "coverage",
                                                 "observable_fraction", "alt_mid_deg", "airmass_mid",
                                                 "sun_alt_mid_deg", "moon_sep_deg", "moon_illumination", "moon_alt_mid_deg",
                                                 schema.MERIDIAN_IN_TRANSIT, "stale")})
    out["mid_sigma_min"] = windows[schema.MID_SIGMA_D] * MINUTES_PER_DAY
    out["shared_with"] = windows["shared_with"] if "shared_with" in windows.columns else ""
    for name, source in TIME_COLUMNS.items():
        out[name] = utc_datetimes(windows[source].to_numpy()).set_axis(out.index)
    out = out[COLUMNS].reset_index(drop=True)
    out.attrs.update(windows.attrs)  # notes found on the way (vigil.notes)
    return schema.WINDOWS_OUT.check(out)


def iso_text(times: pd.Series) -> pd.Series:
    """UTC datetimes as ISO 8601 text with a `Z`, to the second; empty where NaT."""
    return times.dt.strftime("%Y-%m-%dT%H:%M:%SZ").fillna("").astype(object)


def windows_for_export(windows: pd.DataFrame) -> pd.DataFrame:
    """The CSV's cells: ISO UTC times, rounded numbers."""
    out = windows_table(windows)[COLUMNS].copy()
    for name in TIME_COLUMNS:
        out[name] = iso_text(out[name])
    return out.round(DECIMALS)


LOCAL_COLUMNS = {"mid_local": "mid_utc", "window_start_local": "window_start_utc", "window_end_local": "window_end_utc"}


def local_times(windows: pd.DataFrame, timezones: dict) -> pd.DataFrame:
    """Local civil times (ISO 8601 with UTC offset) in each site's IANA zone; empty without a zone.
    `windows` as `windows_table` gives it."""
    out = {}
    for name, source in LOCAL_COLUMNS.items():
        out[name] = [t.tz_convert(ZoneInfo(timezones[s])).isoformat() if timezones.get(s) and not pd.isna(t) else ""
                     for t, s in zip(windows[source], windows["site"])]
    return pd.DataFrame(out, index=windows.index)


def write_windows_csv(windows: pd.DataFrame, path, timezones: dict | None = None) -> None:
    """Write the windows CSV atomically; with `timezones` (site -> IANA zone) add local-time columns."""
    with windows_csv_writer(path, timezones) as add:
        add(windows)


@contextmanager
def windows_csv_writer(path, timezones: dict | None = None) -> Iterator[Callable[[pd.DataFrame], None]]:
    """A function that appends consecutive pieces of the windows table (vigil.sweep.iter_windows)
    to the CSV at `path`, holding one piece at a time; the file appears only when the block ends
    without an error.

    Examples
    --------
    >>> with windows_csv_writer("windows.csv") as add:  # doctest: +SKIP
    ...     for piece in iter_windows(targets, sites, {}, start, end):
    ...         add(piece)
    """
    with atomic_stream(path) as stream:
        written = []

        def add(piece: pd.DataFrame) -> None:
            windows = windows_table(piece)
            table = windows_for_export(windows)
            if timezones is not None:
                table = pd.concat([table, local_times(windows, timezones)], axis=1)
            stream.write(csv_bytes(table, header=not written))
            written.append(True)

        yield add


def jd_view(windows: pd.DataFrame) -> pd.DataFrame:
    """The inverse of `windows_table`: a table with the internal time columns (JD UTC, mid_sigma_d)
    from one with UTC datetimes; an internal table is returned as is. Charts and the calendar
    compute in JD.

    Examples
    --------
    >>> jd_view(vigil.plan_windows("targets.csv", "sites.toml", "2027-01-01", "2027-01-08"))  # doctest: +SKIP
    """
    if schema.MID_JD_UTC in windows.columns or "mid_utc" not in windows.columns:
        return windows
    out = windows.copy()
    for name, internal in TIME_COLUMNS.items():
        if name not in windows.columns:  # meridian_utc: absent from tables written before it existed
            continue
        moments = pd.to_datetime(windows[name], utc=True)
        seconds = (moments - pd.Timestamp("1970-01-01", tz="UTC")).dt.total_seconds()
        out[internal] = UNIX_EPOCH_JD + seconds.to_numpy(dtype=float) / SECONDS_PER_DAY
    out[schema.MID_SIGMA_D] = windows["mid_sigma_min"] / MINUTES_PER_DAY
    return out
