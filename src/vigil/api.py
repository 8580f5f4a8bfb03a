"""vigil's Python interface: the functions the command line itself calls.

Inputs are taken in astropy's and pandas' terms (see `vigil.inputs`, `vigil.table_inputs`,
`vigil.site_inputs`) and checked exactly as the files are, raising `vigil.InputError` with the
files' messages. Tables come back as pandas DataFrames with UTC times as timezone-aware
datetimes and BJD_TDB as float days; `vigil.to_qtable` turns any of them into an astropy QTable.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import Callable

import astropy.units as u
import pandas as pd

from vigil import catalog, notes
from vigil.campaign import spec as campaign_spec
from vigil.campaign.outcome import CampaignOutcome
from vigil.campaign.run import run_campaign as simulate_campaign
from vigil.campaign.spec import CampaignSpec
from vigil.ephemeris.projection import project_transits as project_events
from vigil.ephemeris.projection import with_models
from vigil.ephemeris.refit import RefitResult, refit_targets
from vigil.ephemeris.table import read_ephemeris_table
from vigil.sites import Site
from vigil.timescales import check_plan_date
from vigil.errors import ArgumentError, InputError
from vigil.export.calendar import write_windows_ics as write_ics
from vigil.export.windows_csv import windows_table
from vigil.export.windows_csv import write_windows_csv as write_csv
from vigil.inputs import as_number, as_time, unknown_name_error
from vigil.textfile import did_you_mean
from vigil.time_units import MINUTES_PER_DAY
from vigil.site_inputs import as_sites
from vigil import sweep
from vigil.cluster import workers_for
from vigil.hosts import host_of, mark_shared
from vigil.table_inputs import memory_cells
from vigil.target_source import CatalogueOptions, prepared_cells
from vigil.constraints import Constraints

# Constraint keyword (the command-line option's name) -> (constraint field, unit of a plain number).
CONSTRAINTS = {"min_altitude": ("min_altitude_deg", u.deg), "twilight": ("twilight", None),
               "baseline": ("baseline_h", u.hour), "sigma": ("sigma_k", None), "moon_sep": ("moon_sep_deg", u.deg)}
_CHECKED = "vigil_checked"  # attrs key: content hash of a table that passed the checks


def read_targets(source, *, format: str | None = None, columns=None, strict: bool = False, ephemeris_table=None,
                 extrapolate_table: bool = False) -> pd.DataFrame:
    """The targets, checked like a targets file, from a file or a table built in Python.

    Parameters
    ----------
    source : str, Path, pandas.DataFrame, astropy Table or QTable, or list of dicts
        A targets catalogue (CSV, ECSV, VOTable or IPAC), or a table with its columns: name,
        ra_deg and dec_deg (or ra, dec as sexagesimal text, or one SkyCoord column),
        t0_bjd_tdb (full Julian date; `Time` values in scale tdb are accepted), t0_err_d,
        period_d, period_err_d, duration_h, and optionally t0_period_cov_d2 (0 when absent)
        and the physical columns. Quantities are converted into the unit the column's name
        states (period_d given in hours becomes days).
    format : {"csv", "ecsv", "votable", "ipac"}, optional
        A file's format (default: by its extension).
    columns : str or Path, optional
        A column mapping TOML (which column holds each vigil field, in which unit).
    strict : bool
        Refuse a row that lacks a required value (otherwise it is left out with a warning).
    ephemeris_table : str or Path, optional
        A per-epoch table of predicted mid-times (vigil.ephemeris.table) that replaces the
        named targets' linear ephemerides; `extrapolate_table` continues it beyond its span.

    Returns
    -------
    pandas.DataFrame
        One row per target. Raises `InputError` naming the row and field of the first problem,
        with the message a file would get (`targets: row N` in place of `FILE: line N`).

    Examples
    --------
    >>> targets = read_targets([{"name": "Lumen-1 b", "ra_deg": 120.0, "dec_deg": -20.0,
    ...     "t0_bjd_tdb": 2461000.25, "t0_err_d": 4e-4, "period_d": 2.5 * u.day, "period_err_d": 2e-6,
    ...     "duration_h": 150 * u.min}])
    >>> float(targets["duration_h"][0])
    2.5
    """
    options = CatalogueOptions(format, None if columns is None else Path(columns), strict)
    if isinstance(source, (str, Path)):
        targets = catalog.read_targets(source, options)
    elif _is_checked(source):
        targets = source
    else:
        targets = catalog.targets_from_source(prepared_cells(memory_cells(source, "targets"), options), strict)
    if ephemeris_table is not None:
        targets = with_models(targets, read_ephemeris_table(ephemeris_table, extrapolate_table), ephemeris_table)
    return _mark_checked(targets)


def read_timings(source) -> pd.DataFrame:
    """Measured mid-times (target, mid_bjd_tdb, mid_err_d in days, optional note), checked like a
    timings CSV, from a file or a table built in Python (as `read_targets` takes).

    Examples
    --------
    >>> read_timings([{"target": "Lumen-1 b", "mid_bjd_tdb": 2461000.25, "mid_err_d": 5e-4}])["mid_err_d"].iloc[0]
    0.0005
    """
    if isinstance(source, (str, Path)):
        return _mark_checked(catalog.read_timings(source))
    if _is_checked(source):
        return source
    cells = memory_cells(source, "timings", "timing")
    return _mark_checked(catalog.timings_from_cells(cells.path, cells.header, cells.cells))


def read_sites(source, site=None) -> dict[str, Site]:
    """Sites by name, in order, from a sites TOML file or Python objects.

    Parameters
    ----------
    source : str, Path, Site, EarthLocation, astroplan Observer, dict or list of these
        A dict maps names to sites; an EarthLocation or Observer alone is named by its `name`
        (else "site"). `vigil.make_site` builds one with limits and a time zone.
    site : str or list of str, optional
        Keep only these sites (the command line's --site).

    Examples
    --------
    >>> from astropy.coordinates import EarthLocation
    >>> read_sites({"ridge": EarthLocation.from_geodetic(-70.8 * u.deg, -30.5 * u.deg, 2400 * u.m)})["ridge"].elevation_m
    2400.0
    """
    sites = as_sites(source)
    if site is None:
        return sites
    names = [site] if isinstance(site, str) else list(site)
    unknown = [n for n in names if n not in sites]
    if unknown:
        where = source if isinstance(source, (str, Path)) else "sites"
        raise InputError(f"{where}: no site named {unknown[0]!r}{did_you_mean(unknown[0], sites)} "
                         f"(sites are {', '.join(sites)})")
    return {n: sites[n] for n in names}


def constraint_overrides(options: dict) -> dict:
    """Constraint keywords (min_altitude, twilight, baseline, sigma, moon_sep; None = the site's
    default) as the constraint fields they set, each value checked on its own.

    Examples
    --------
    >>> constraint_overrides({"min_altitude": 40 * u.deg, "baseline": 90 * u.min})
    {'min_altitude_deg': 40.0, 'baseline_h': 1.5}
    """
    overrides = {}
    for name, value in options.items():
        if name not in CONSTRAINTS:
            raise unknown_name_error("constraint", name, list(CONSTRAINTS))
        key, unit = CONSTRAINTS[name]
        if value is None:
            continue
        value = as_number(value, unit, name)
        try:
            Constraints(**{key: value})
        except InputError as exc:
            raise ArgumentError(name, str(exc).split(": ", 1)[1]) from None
        overrides[key] = value
    return overrides


def project_transits(targets, start, end, event: str = "transit") -> pd.DataFrame:
    """Every transit (or occultation) of each target with barycentric mid-time in [start, end].

    Parameters
    ----------
    targets : as `read_targets` takes
    start, end : astropy Time, ISO string (UTC) or timezone-aware datetime
    event : {"transit", "occultation"}

    Returns
    -------
    pandas.DataFrame
        target, event, epoch, mid_bjd_tdb (days), mid_sigma_min (1-sigma, minutes),
        duration_h, sorted by target then epoch.

    Examples
    --------
    >>> project_transits(targets, "2027-01-01", "2027-01-08")  # doctest: +SKIP
    """
    targets = read_targets(targets)
    start, end = as_time(start, "start"), as_time(end, "end")
    _check_span(start, end)
    table = project_events(targets, start.tdb.jd, end.tdb.jd, event)
    table["mid_sigma_min"] = table["mid_sigma_d"] * MINUTES_PER_DAY
    return table[["target", "event", "epoch", "mid_bjd_tdb", "mid_sigma_min", "duration_h"]]


def plan_windows(targets, sites, start, end, *, site=None, include_unobservable: bool = False,
                 event: str = "transit", exact: bool = False, jobs: int = 1, scheduler: str | None = None,
                 chunk_dir=None, on_progress: Callable[[int, int], None] | None = None,
                 **constraints) -> pd.DataFrame:
    """The observing windows of every target at every site between two dates.

    Parameters
    ----------
    targets : as `read_targets` takes (a CSV path, DataFrame, Table/QTable or records)
    sites : as `read_sites` takes (a TOML path, EarthLocation, Observer, Site, dict or list)
    start, end : astropy Time, ISO string (UTC) or timezone-aware datetime
        Transits whose mid-time at the site falls in [start, end] are listed.
    site : str or list of str, optional
        Only these sites.
    include_unobservable : bool
        Also list transits with coverage "none" (the command line's --all).
    event : {"transit", "occultation"}
    exact : bool
        Use the exact astropy engine instead of the fast one.
    jobs : int
        Worker processes (or, with `scheduler="local"`, dask workers).
    scheduler, chunk_dir : optional
        Run on a dask cluster: "local" or "tcp://HOST:PORT", and the folder the workers share
        (see `vigil.cluster`).
    on_progress : callable(done, total), optional
        Called after each chunk of work with the chunks done and their total.
    **constraints
        min_altitude (deg), twilight ("civil", "nautical", "astronomical"), baseline (hours,
        each side), sigma (K: pad by K sigma), moon_sep (deg); numbers in those units or
        Quantities. Unset ones take each site's default, then vigil's.

    Returns
    -------
    pandas.DataFrame
        The columns of the windows CSV: UTC times as datetime64[s, UTC], mid_bjd_tdb as
        float days, mid_sigma_min in minutes, missing values NaN/NaT; sorted by mid-time,
        then target, then site. Notes found on the way (e.g. a site that never gets dark) are
        logged on the "vigil" logger and kept in `table.attrs["notes"]`.

    Examples
    --------
    >>> import vigil
    >>> w = vigil.plan_windows("targets.csv", "sites.toml", "2027-01-01", "2027-01-08",
    ...                        min_altitude=35 * u.deg, baseline=1.5)  # doctest: +SKIP
    """
    pieces = list(iter_windows(targets, sites, start, end, site=site, include_unobservable=include_unobservable,
                               event=event, exact=exact, jobs=jobs, scheduler=scheduler, chunk_dir=chunk_dir,
                               on_progress=on_progress, **constraints))
    found = notes.merged(*(notes.of(p) for p in pieces))
    notes.report(found)
    filled = [p for p in pieces if len(p)]
    table = pd.concat(filled, ignore_index=True) if len(filled) > 1 else (filled or pieces)[0]
    return notes.attach(table, found)


def iter_windows(targets, sites, start, end, *, site=None, include_unobservable: bool = False,
                 event: str = "transit", exact: bool = False, jobs: int = 1, scheduler: str | None = None,
                 chunk_dir=None, on_progress: Callable[[int, int], None] | None = None, **constraints):
    """`plan_windows`' table as consecutive pieces in its order, for catalogs and spans whose
    table is too large to hold at once. Takes the arguments of `plan_windows`.

    Examples
    --------
    >>> for piece in vigil.iter_windows("targets.csv", "sites.toml", "2027-01-01", "2057-01-01"):  # doctest: +SKIP
    ...     print(len(piece))
    """
    overrides = constraint_overrides(constraints)
    start, end = as_time(start, "start"), as_time(end, "end")
    _check_span(start, end)
    targets, sites = read_targets(targets), read_sites(sites, site)
    with workers_for(scheduler, jobs, chunk_dir) as workers:
        pieces = sweep.iter_windows(targets, sites, overrides, start, end, jobs=workers.count,
                                    engine="reference" if exact else "fast", include_unobservable=include_unobservable,
                                    event=event, on_chunk=(lambda _, done, total: on_progress(done, total))
                                    if on_progress else None, executor=workers.executor, chunk_dir=workers.chunk_dir)
        for piece in mark_shared(pieces, host_of(targets)):
            yield windows_table(piece)


def refit(timings, targets=None, *, use_prior: bool = True) -> RefitResult:
    """Refit each target's ephemeris from measured mid-times (the command `vigil refit`).

    Parameters
    ----------
    timings : as `read_timings` takes (target, mid_bjd_tdb, mid_err_d in days, optional note)
    targets : as `read_targets` takes, optional
        The catalogue whose ephemerides number the epochs (and, with `use_prior`, are the prior).
    use_prior : bool
        Use the catalogue ephemeris as the prior (the command line's --no-prior turns it off).

    Returns
    -------
    RefitResult
        `.targets` (a targets table every vigil function reads), `.o_minus_c` (minutes), `.fits`.

    Examples
    --------
    >>> result = vigil.refit("timings.csv", "targets.csv")  # doctest: +SKIP
    >>> result.targets[["name", "period_d", "period_err_d"]]  # doctest: +SKIP
    """
    timings = read_timings(timings)
    return refit_targets(timings, None if targets is None else read_targets(targets), use_prior=use_prior)


def read_campaign(path) -> CampaignSpec:
    """A campaign TOML file as a CampaignSpec (a frozen dataclass: change it with
    `dataclasses.replace`, e.g. fewer trials or a shorter horizon).

    Examples
    --------
    >>> spec = dataclasses.replace(vigil.read_campaign("campaign.toml"), horizon_years=5, trials=50)  # doctest: +SKIP
    """
    return campaign_spec.read_campaign(path)


def run_campaign(campaign, targets=None, sites=None, *, target: str | None = None, strict: bool = False,
                 exact: bool = False, jobs: int = 1, scheduler: str | None = None, chunk_dir=None,
                 on_progress: Callable[[int], None] | None = None, **changes) -> CampaignOutcome:
    """Simulate a multi-year campaign and forecast when each stacked spectrum reaches the goal.

    Parameters
    ----------
    campaign : str, Path or CampaignSpec
        A campaign TOML file, or a spec (`read_campaign`, changed with dataclasses.replace).
    targets, sites : optional
        As `read_targets` and `read_sites` take; default the files the campaign names.
    target : str, optional
        Only this target (the command line's --target).
    strict, exact, jobs, scheduler, chunk_dir
        As for `read_targets` and `plan_windows`.
    on_progress : callable(trials_done), optional
    **changes
        CampaignSpec fields to change (e.g. ``trials=50, horizon_years=5``), checked as the
        spec's own values are: a bad value raises `ArgumentError` naming the field, an unknown
        name a `TypeError` with a suggestion.

    Returns
    -------
    CampaignOutcome
        summary, forecast and ledger tables, plot_resolution() and plot_hours() figures, write().

    Examples
    --------
    >>> outcome = vigil.run_campaign("campaign.toml", target="Tamsin-7 b")  # doctest: +SKIP
    >>> outcome.summary[["target", "years_to_goal_p50", "limited_by"]]  # doctest: +SKIP
    """
    spec = _campaign_spec(campaign, changes)
    if targets is None and spec.targets_file is None:
        raise ArgumentError("targets", "required: the campaign names no targets_file")
    if sites is None and spec.sites_file is None:
        raise ArgumentError("sites", "required: the campaign names no sites_file")
    targets = read_targets(spec.targets_file if targets is None else targets, format=spec.targets_options.format,
                           columns=spec.targets_options.columns, strict=strict, ephemeris_table=spec.ephemeris_table,
                           extrapolate_table=spec.extrapolate_table)
    if target is not None:
        if target not in set(targets["name"]):
            raise ArgumentError("target", f"no target named {target!r}{did_you_mean(target, targets['name'])}")
        left_out = [name for name in targets["name"] if name != target]
        targets = targets[targets["name"] == target].reset_index(drop=True)
    sites = read_sites(spec.sites_file if sites is None else sites)
    with workers_for(scheduler, jobs, chunk_dir) as workers:
        result = simulate_campaign(spec, targets, sites, engine="reference" if exact else "fast",
                                   on_progress=on_progress, jobs=workers.count, executor=workers.executor,
                                   chunk_dir=workers.chunk_dir, left_out=left_out if target is not None else ())
    notes.report(result.notes)
    return CampaignOutcome(spec, result)


def _campaign_spec(campaign, changes: dict) -> CampaignSpec:
    """The CampaignSpec of a file or spec with `changes` made (and checked)."""
    spec = campaign if isinstance(campaign, CampaignSpec) else read_campaign(campaign)
    known = [f.name for f in dataclasses.fields(CampaignSpec)]
    for name in changes:
        if name not in known:
            raise unknown_name_error("campaign setting", name, known)
    return dataclasses.replace(spec, **changes) if changes else spec


def write_windows_csv(windows: pd.DataFrame, path, sites=None) -> None:
    """Write a windows table as vigil's CSV (atomically): ISO 8601 UTC times to the second.

    Parameters
    ----------
    windows : pandas.DataFrame
        As `plan_windows` returns it.
    path : str or Path
    sites : as `read_sites` takes, optional
        Adds mid_local, window_start_local and window_end_local in each site's time zone.

    Examples
    --------
    >>> write_windows_csv(windows, "windows.csv")  # doctest: +SKIP
    """
    write_csv(windows, path, None if sites is None else _timezones(sites))


def write_windows_ics(windows: pd.DataFrame, path, sites=None) -> None:
    """Write a windows table as an iCalendar file (one event per window, UTC; atomically).

    `sites` (as `read_sites` takes), if given, names each site's time zone in the descriptions.

    Examples
    --------
    >>> write_windows_ics(windows, "windows.ics", sites)  # doctest: +SKIP
    """
    write_ics(windows, path, None if sites is None else _timezones(sites))


def _timezones(sites) -> dict:
    return {name: site.timezone for name, site in as_sites(sites).items()}


def _check_span(start, end) -> None:
    for name, time in (("start", start), ("end", end)):
        try:
            check_plan_date(time, name)
        except InputError as exc:
            raise ArgumentError(name, str(exc).split(": ", 1)[1]) from None
    if not end > start:
        raise ArgumentError("end", f"{end.utc.iso[:16]} must come after start {start.utc.iso[:16]}")


def _content_hash(table: pd.DataFrame) -> int:
    return int(pd.util.hash_pandas_object(table.astype(str), index=True).sum())


def _mark_checked(table: pd.DataFrame) -> pd.DataFrame:
    table.attrs[_CHECKED] = _content_hash(table)
    return table


def _is_checked(table) -> bool:
    """A DataFrame that came out of the checks unchanged (so its warnings are not given twice)."""
    return isinstance(table, pd.DataFrame) and table.attrs.get(_CHECKED) == _content_hash(table)
