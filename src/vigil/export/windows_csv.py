"""The windows table as the observer's CSV: one row per transit per site."""

from __future__ import annotations

from typing import Iterable
from zoneinfo import ZoneInfo

import pandas as pd

from vigil import schema
from vigil.export.files import atomic_stream
from vigil.export.table import csv_bytes, iso_utc
from vigil.time_units import MINUTES_PER_DAY

TIME_COLUMNS = {
    "mid_utc": schema.MID_JD_UTC,
    "ingress_utc": schema.INGRESS_JD_UTC,
    "egress_utc": schema.EGRESS_JD_UTC,
    "window_start_utc": schema.WINDOW_START_JD_UTC,
    "window_end_utc": schema.WINDOW_END_JD_UTC,
    "observable_start_utc": schema.OBSERVABLE_START_JD_UTC,
    "observable_end_utc": schema.OBSERVABLE_END_JD_UTC,
}
COLUMNS = ["target", "site", "event", "epoch", "mid_bjd_tdb", "mid_utc", "mid_sigma_min", "ingress_utc", "egress_utc",
           "window_start_utc", "window_end_utc", "coverage", schema.OBSERVABLE_FRACTION, "observable_start_utc",
           "observable_end_utc", "alt_mid_deg", "airmass_mid", "sun_alt_mid_deg", "moon_sep_deg", "moon_illumination", "stale", "shared_with"]
DECIMALS = {schema.MID_BJD_TDB: 6, "mid_sigma_min": 2, schema.OBSERVABLE_FRACTION: 4, "alt_mid_deg": 2,
            "airmass_mid": 3, "sun_alt_mid_deg": 2, "moon_sep_deg": 2, "moon_illumination": 3}


def windows_for_export(windows: pd.DataFrame) -> pd.DataFrame:
    """The export columns: ISO UTC times, sigma in minutes, rounded numbers."""
    out = pd.DataFrame({c: windows[c] for c in ("target", "site", "event", "epoch", schema.MID_BJD_TDB, "coverage",
                                                 schema.OBSERVABLE_FRACTION, "alt_mid_deg", "airmass_mid",
                                                 "sun_alt_mid_deg", "moon_sep_deg", "moon_illumination", "stale")})
    out["mid_sigma_min"] = windows[schema.MID_SIGMA_D] * MINUTES_PER_DAY
    out["shared_with"] = windows["shared_with"] if "shared_with" in windows.columns else ""
    for name, source in TIME_COLUMNS.items():
        out[name] = iso_utc(windows[source].to_numpy())
    return out[COLUMNS].round(DECIMALS)


LOCAL_COLUMNS = {"mid_local": schema.MID_JD_UTC, "window_start_local": schema.WINDOW_START_JD_UTC,
                 "window_end_local": schema.WINDOW_END_JD_UTC}


def local_times(windows: pd.DataFrame, timezones: dict) -> pd.DataFrame:
    """Local civil times (ISO 8601 with UTC offset) in each site's IANA zone; empty without a zone."""
    out = {}
    for name, source in LOCAL_COLUMNS.items():
        utc = pd.to_datetime(iso_utc(windows[source].to_numpy()), utc=True, errors="coerce")
        out[name] = [t.tz_convert(ZoneInfo(timezones[s])).isoformat() if timezones.get(s) and not pd.isna(t) else ""
                     for t, s in zip(utc, windows["site"])]
    return pd.DataFrame(out, index=windows.index)


def write_windows_csv(windows: pd.DataFrame, path, timezones: dict | None = None) -> None:
    """Write the windows CSV atomically; with `timezones` (site -> IANA zone) add local-time columns."""
    write_windows_csv_pieces([windows], path, timezones)


def write_windows_csv_pieces(pieces: Iterable[pd.DataFrame], path, timezones: dict | None = None) -> None:
    """Write the windows CSV from consecutive pieces of the table (vigil.sweep.iter_windows),
    holding one piece at a time; the file appears only once every piece is written.

    Examples
    --------
    >>> write_windows_csv_pieces(iter_windows(targets, sites, {}, start, end), "windows.csv")  # doctest: +SKIP
    """
    with atomic_stream(path) as stream:
        for number, windows in enumerate(pieces):
            table = windows_for_export(schema.WINDOWS.check(windows))
            if timezones is not None:
                table = pd.concat([table, local_times(windows, timezones)], axis=1)
            stream.write(csv_bytes(table, text_columns=("target", "site", "shared_with"), header=number == 0))
