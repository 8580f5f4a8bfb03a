"""The night chart of one transit window: target altitude against UTC and the site's local time.

Drawn per window: sky shading (day, civil, nautical, astronomical twilight, night; the Sun's
geometric centre at 0, -6, -12, -18 deg, from the fast almanac), the target's apparent altitude
(astropy AltAz with the site's refraction) with an airmass axis, ingress, mid-transit and egress,
the out-of-transit baseline and the +-K sigma timing band, the altitude limit and horizon mask,
the Moon's altitude and its separation at mid-transit, and the target's meridian crossing.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import timedelta
from zoneinfo import ZoneInfo

import matplotlib.dates as mdates
import numpy as np
import pandas as pd
from astropy.time import Time
from matplotlib.figure import Figure
from matplotlib.patches import Patch

from vigil import sky
from vigil.constraints import Constraints
from vigil.export.windows_csv import UNIX_EPOCH_JD, jd_view  # matplotlib's date numbers count days from the epoch
from vigil.local_sky import dark_intervals
from vigil.sites import Site
from vigil.errors import InputError
from vigil.export import palette
from vigil.timescales import earth_location
from vigil.time_units import HOURS_PER_DAY, MINUTES_PER_DAY

STEP_MIN = 2.0
MARGIN_H = 6.0  # shown on each side of the padded window
SKY_LEVELS_DEG = (("civil", 0.0), ("nautical", -6.0), ("astronomical", -12.0), ("night", -18.0))
AIRMASS_TICKS = (1.0, 1.1, 1.3, 1.5, 2.0, 3.0)


@dataclass(frozen=True)
class NightCurves:
    """What a night chart draws, sampled every STEP_MIN minutes (times JD UTC, angles degrees).

    sky: (level, start_jd_utc, end_jd_utc) for each level in SKY_LEVELS_DEG, the intervals
    when the Sun's centre is below that level's altitude.
    """

    jd_utc: np.ndarray
    target_alt_deg: np.ndarray
    mask_alt_deg: np.ndarray
    moon_alt_deg: np.ndarray
    moon_sep_deg: np.ndarray
    sky: tuple
    meridian_jd_utc: float

    def altitude_at(self, jd_utc) -> np.ndarray:
        """The plotted target altitude (deg) at `jd_utc`, interpolated as the line is drawn."""
        return np.interp(jd_utc, self.jd_utc, self.target_alt_deg)


def with_coordinates(windows: pd.DataFrame, targets: pd.DataFrame) -> pd.DataFrame:
    """The windows (either form, see windows_csv.jd_view) in JD form with each target's ra_deg
    and dec_deg (ICRS degrees) from the targets table, as the night chart needs them.

    Example: ``with_coordinates(vigil.plan_windows(...), vigil.read_targets("targets.csv"))``.
    """
    out = jd_view(windows).copy()
    by_name = targets.set_index("name")
    out["ra_deg"] = out["target"].map(by_name["ra_deg"])
    out["dec_deg"] = out["target"].map(by_name["dec_deg"])
    return out


def _meridian(jd_utc: np.ndarray, ha_deg: np.ndarray) -> float:
    """First upper-culmination time (hour angle - to +) in the samples, interpolated; NaN if none."""
    rising = np.flatnonzero((ha_deg[:-1] < 0) & (ha_deg[1:] >= 0) & (ha_deg[1:] - ha_deg[:-1] < 90))
    if not rising.size:
        return float("nan")
    i = rising[0]
    return float(jd_utc[i] - ha_deg[i] * (jd_utc[i + 1] - jd_utc[i]) / (ha_deg[i + 1] - ha_deg[i]))


def night_curves(window, site: Site, margin_h: float = MARGIN_H, step_min: float = STEP_MIN) -> NightCurves:
    """Sample target, Moon and sky around one window (a row of the windows table with ra_deg,
    dec_deg and window_start_jd_utc/window_end_jd_utc), from margin_h hours before to after.

    Example: ``night_curves(windows.iloc[0], sites["mirador_sur"]).altitude_at(windows.mid_jd_utc[0])``.
    """
    if site.kind != "ground":
        raise InputError(f"site {site.name!r}: night charts are for ground sites (a space site has no night)")
    lo = float(window.window_start_jd_utc) - margin_h / HOURS_PER_DAY
    hi = float(window.window_end_jd_utc) + margin_h / HOURS_PER_DAY
    jd = np.linspace(lo, hi, int(np.ceil((hi - lo) * MINUTES_PER_DAY / step_min)) + 1)
    times = Time(jd, format="jd", scale="utc")
    location = earth_location(site.latitude_deg, site.longitude_deg, site.elevation_m)
    ra, dec = float(window.ra_deg), float(window.dec_deg)
    alt, az = sky.target_altaz_deg(ra, dec, times, location, site.air_pressure_hpa, site.temperature_c)
    ha, _ = sky.target_hadec_deg(ra, dec, times, location)
    mask = site.facility.mask_alt_at(az) if site.facility.mask_az_deg else np.full(jd.shape, np.nan)
    shading = tuple((level, *dark_intervals(site.latitude_deg, site.longitude_deg, site.elevation_m,
                                                    lo, hi, sun_alt_deg))
                    for level, sun_alt_deg in SKY_LEVELS_DEG)
    return NightCurves(jd, alt, mask, sky.moon_altitude_deg(times, location),
                       sky.moon_separation_deg(ra, dec, times, location), shading, _meridian(jd, ha))


def _utc_offset_h(site: Site, jd_utc: float) -> tuple[float, str]:
    """The site's UTC offset (hours) at jd_utc and the axis label; local mean time without a zone."""
    if site.timezone:
        moment = pd.Timestamp(Time(jd_utc, format="jd", scale="utc").to_datetime(), tz="UTC")
        offset = moment.tz_convert(ZoneInfo(site.timezone)).utcoffset() / timedelta(hours=1)
        return offset, f"local time, {site.timezone} (UTC{offset:+g} h)"
    offset = site.longitude_deg / 15.0
    return offset, f"local mean solar time (UTC{offset:+.2f} h)"


def _x(jd_utc):
    return np.asarray(jd_utc, dtype=float) - UNIX_EPOCH_JD


def _airmass_axis(axes) -> None:
    """A right-hand axis with airmass ticks at their apparent altitudes (Kasten & Young 1989)."""
    grid_deg = np.linspace(5.0, 90.0, 2000)
    airmass = sky.airmass_kasten_young(grid_deg)
    right = axes.twinx()
    right.set_ylim(axes.get_ylim())
    right.set_yticks([float(np.interp(-x, -airmass, grid_deg)) for x in AIRMASS_TICKS],
                     [f"{x:g}" for x in AIRMASS_TICKS])
    right.set_ylabel("airmass")


def _shade_sky(axes, curves: NightCurves) -> None:
    axes.set_facecolor(palette.SKY["day"])
    for level, starts, ends in curves.sky:
        for start, end in zip(starts, ends):
            axes.axvspan(_x(start), _x(end), color=palette.SKY[level], linewidth=0, zorder=0)


def _mark_transit(axes, window, sigma_k: float) -> None:
    ksig = sigma_k * float(window.mid_sigma_d)
    axes.axvspan(_x(window.window_start_jd_utc), _x(window.window_end_jd_utc), color=palette.SKY_BLUE, alpha=0.25,
                 linewidth=0, zorder=1, label="window (baseline and timing padding)")
    for when in (window.ingress_jd_utc, window.egress_jd_utc, window.mid_jd_utc):
        if ksig > 0:
            axes.axvspan(_x(when - ksig), _x(when + ksig), color=palette.ORANGE, alpha=0.35, linewidth=0, zorder=1)
    axes.axvline(_x(window.ingress_jd_utc), color=palette.BLACK, linewidth=1.2, zorder=3)
    axes.axvline(_x(window.egress_jd_utc), color=palette.BLACK, linewidth=1.2, zorder=3)
    axes.axvline(_x(window.mid_jd_utc), color=palette.BLACK, linewidth=1.2, linestyle="--", zorder=3)
    top = axes.get_ylim()[1]
    for when, text in ((window.ingress_jd_utc, "ingress"), (window.mid_jd_utc, "mid"), (window.egress_jd_utc, "egress")):
        axes.text(_x(when), top, text, rotation=90, va="top", ha="right", fontsize=7, zorder=4)
    if ksig > 0:
        axes.axvspan(0, 0, color=palette.ORANGE, alpha=0.35, label=f"±{sigma_k:g}σ timing ({ksig * MINUTES_PER_DAY:.1f} min)")


def draw_night(axes, window, site: Site, constraints: Constraints, curves: NightCurves) -> None:
    """Draw one window's night chart on `axes` (curves from `night_curves`)."""
    _shade_sky(axes, curves)
    axes.set_ylim(0.0, 90.0)
    _mark_transit(axes, window, constraints.sigma_k)
    x = _x(curves.jd_utc)
    axes.plot(x, curves.target_alt_deg, color=palette.BLUE, linewidth=2.2, zorder=5, label=f"{window.target} altitude")
    axes.plot(x, curves.moon_alt_deg, color=palette.PURPLE, linewidth=1.3, linestyle=(0, (4, 2)), zorder=4,
              label=f"Moon altitude ({100 * float(window.moon_illumination):.0f}% lit, "
                    f"{float(np.interp(window.mid_jd_utc, curves.jd_utc, curves.moon_sep_deg)):.0f}° away at mid)")
    axes.axhline(constraints.min_altitude_deg, color=palette.VERMILLION, linewidth=1.2, linestyle="-.", zorder=4,
                 label=f"altitude limit {constraints.min_altitude_deg:g}°")
    if np.isfinite(curves.mask_alt_deg).any():
        axes.fill_between(x, 0, curves.mask_alt_deg, color=palette.VERMILLION, alpha=0.3, linewidth=0, zorder=2,
                          label="horizon mask toward the target")
    if np.isfinite(curves.meridian_jd_utc):
        axes.axvline(_x(curves.meridian_jd_utc), color=palette.GREEN, linewidth=1.2, linestyle=":", zorder=4,
                     label="meridian crossing")
    axes.set_xlim(x[0], x[-1])
    axes.xaxis.set_major_locator(mdates.HourLocator(interval=2))
    axes.xaxis.set_major_formatter(mdates.DateFormatter("%H:%M"))
    offset_h, label = _utc_offset_h(site, float(window.mid_jd_utc))
    evening = Time(window.mid_jd_utc + offset_h / HOURS_PER_DAY - 0.5, format="jd", scale="utc").iso[:10]
    axes.set_xlabel(f"UTC (h:min); night starting on {evening} (local date)")
    axes.set_ylabel("apparent altitude (deg)")
    top = axes.secondary_xaxis("top", functions=(lambda v: v + offset_h / HOURS_PER_DAY, lambda v: v - offset_h / HOURS_PER_DAY))
    top.xaxis.set_major_locator(mdates.HourLocator(interval=2))
    top.xaxis.set_major_formatter(mdates.DateFormatter("%H:%M"))
    top.set_xlabel(label, fontsize=8)
    _airmass_axis(axes)
    axes.set_title(f"{window.target} {getattr(window, 'event', 'transit')} epoch {int(window.epoch)} at {site.name}: "
                   f"{window.coverage}, {100 * float(window.observable_fraction):.0f}% observable", fontsize=9)
    handles, _ = axes.get_legend_handles_labels()
    shades = [Patch(color=palette.SKY[level], label=f"Sun below {alt:g}°") for level, alt in SKY_LEVELS_DEG]
    axes.legend(handles=[*handles, *shades], fontsize=6.5, loc="upper left", bbox_to_anchor=(1.07, 1.0), frameon=False)


def night_chart(windows: pd.DataFrame, sites: dict[str, Site], constraints: dict[str, Constraints]) -> Figure:
    """One panel per row of `windows` (the windows table), stacked; `constraints` per site name.

    Example: ``night_chart(windows.head(2), sites, {n: Constraints() for n in sites})``.
    """
    if windows.empty:
        raise InputError("no windows to chart: widen the dates or pass --all to chart unobservable transits")
    figure = Figure(figsize=(10.5, 4.2 * len(windows)))
    for panel, window in enumerate(windows.itertuples(index=False)):
        site = sites[window.site]
        axes = figure.add_subplot(len(windows), 1, panel + 1)
        draw_night(axes, window, site, constraints[window.site], night_curves(window, site))
    figure.tight_layout()
    return figure
