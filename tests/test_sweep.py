"""Chunked (and multi-process) planning gives exactly the table of windows.plan_windows.

Reference: windows.plan_windows on the whole catalog at once (the contract sweep promises to
keep: same rows, columns, dtypes and order), on an invented workload and the demo's invented
sites.
"""

from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pandas as pd
import pytest
from astropy.time import Time

from vigil import sweep, windows
from vigil.errors import InputError

from conftest import random_targets

START, END = Time("2027-05-01", scale="utc"), Time("2027-06-15", scale="utc")


@pytest.fixture(scope="module")
def catalog():
    """Fourteen invented targets over the whole sky, periods 0.6-20 d."""
    return random_targets(14, 4, "Orrin-{} c", periods_d=(0.6, 20.0), t0_base=2461100.0, t0_err_d=(1e-4, 2e-3),
                          duration_h=(1.0, 5.0))


@pytest.mark.parametrize("include_unobservable", [False, True])
@pytest.mark.parametrize("chunk_targets", [1, 4, None])
def test_one_process_matches_plan_windows(catalog, demo_sites, chunk_targets, include_unobservable):
    expected = windows.plan_windows(catalog, demo_sites, {"moon_sep_deg": 20.0}, START, END,
                                    include_unobservable=include_unobservable)
    got = sweep.plan_windows_chunked(catalog, demo_sites, {"moon_sep_deg": 20.0}, START, END, jobs=1,
                                     chunk_targets=chunk_targets, include_unobservable=include_unobservable)
    assert len(expected) > 30
    pd.testing.assert_frame_equal(got, expected, check_exact=True)


def test_two_processes_match_plan_windows(catalog, demo_sites):
    expected = windows.plan_windows(catalog, demo_sites, {}, START, END)
    got = sweep.plan_windows_chunked(catalog, demo_sites, {}, START, END, jobs=2, chunk_targets=5)
    pd.testing.assert_frame_equal(got, expected, check_exact=True)


@pytest.mark.parametrize("include_unobservable", [False, True])
def test_time_segments_match_plan_windows(catalog, demo_sites, include_unobservable):
    # Week-long segments: each transit belongs to the segment holding its mid-time at the site.
    expected = windows.plan_windows(catalog, demo_sites, {"moon_sep_deg": 20.0}, START, END,
                                    include_unobservable=include_unobservable)
    pieces = list(sweep.iter_windows(catalog, demo_sites, {"moon_sep_deg": 20.0}, START, END, chunk_targets=4,
                                     segment_days=7.0, include_unobservable=include_unobservable))
    assert len(pieces) == 7
    assert all(a["mid_jd_utc"].max() < b["mid_jd_utc"].min() for a, b in zip(pieces, pieces[1:]))
    got = sweep.plan_windows_chunked(catalog, demo_sites, {"moon_sep_deg": 20.0}, START, END, chunk_targets=4,
                                     segment_days=7.0, include_unobservable=include_unobservable)
    pd.testing.assert_frame_equal(got, expected, check_exact=True)


def test_any_executor_with_parquet_chunk_files_matches_plan_windows(catalog, demo_sites, tmp_path):
    # Tasks on a thread pool leave their tables as Parquet files, read back and removed here.
    pytest.importorskip("pyarrow", reason="Parquet chunk files need the optional extra: pip install 'vigil[dask]'")
    expected = windows.plan_windows(catalog, demo_sites, {}, START, END)
    with ThreadPoolExecutor(max_workers=2) as pool:
        got = sweep.plan_windows_chunked(catalog, demo_sites, {}, START, END, jobs=2, chunk_targets=3,
                                         segment_days=10.0, executor=pool, chunk_dir=tmp_path)
    pd.testing.assert_frame_equal(got, expected, check_exact=True)
    assert list(tmp_path.iterdir()) == []


def test_occultations_match_plan_windows(catalog, demo_sites):
    # The event type is passed through; eccentric orbits move the occultation off half-phase.
    eccentric = catalog.assign(eccentricity=0.2, omega_deg=np.linspace(0.0, 330.0, len(catalog)))
    expected = windows.plan_windows(eccentric, demo_sites, {}, START, END, event="occultation")
    got = sweep.plan_windows_chunked(eccentric, demo_sites, {}, START, END, chunk_targets=3, event="occultation")
    assert set(got["event"]) == {"occultation"}
    pd.testing.assert_frame_equal(got, expected, check_exact=True)


def test_chunks_sized_by_expected_transits_match(catalog, demo_sites, monkeypatch):
    # With a tiny transit budget every chunk holds one or two targets.
    monkeypatch.setattr(sweep, "CHUNK_TRANSITS", 40)
    seen = []
    got = sweep.plan_windows_chunked(catalog, demo_sites, {}, START, END,
                                     on_chunk=lambda table, done, total: seen.append((len(table), done, total)))
    pd.testing.assert_frame_equal(got, windows.plan_windows(catalog, demo_sites, {}, START, END), check_exact=True)
    assert len(seen) > 5
    assert [done for _, done, _ in seen] == sorted({done for _, done, _ in seen})
    assert seen[-1][1] == seen[-1][2] == len(seen)
    assert sum(rows for rows, _, _ in seen) == len(got)


def test_equal_mid_times_fall_back_to_the_full_sort(catalog, demo_sites):
    # Two targets with the same ephemeris and place have the same mid-times: rows then order
    # by target name, as plan_windows orders them; the twin sits in another chunk.
    twins = pd.concat([catalog, catalog.iloc[[2]].assign(name="Orrin-0 a")], ignore_index=True)
    expected = windows.plan_windows(twins, demo_sites, {}, START, END, include_unobservable=True)
    assert expected["mid_jd_utc"].duplicated().any()
    got = sweep.plan_windows_chunked(twins, demo_sites, {}, START, END, chunk_targets=3, include_unobservable=True)
    pd.testing.assert_frame_equal(got, expected, check_exact=True)


def test_nothing_observable_gives_the_same_empty_table(catalog, demo_sites):
    # A 2-minute span holds no whole transit window anywhere.
    end = START + 2.0 / 1440.0
    expected = windows.plan_windows(catalog, demo_sites, {}, START, end)
    got = sweep.plan_windows_chunked(catalog, demo_sites, {}, START, end, chunk_targets=3)
    assert expected.empty
    pd.testing.assert_frame_equal(got, expected, check_exact=True)


@pytest.mark.parametrize("kwargs, field", [({"jobs": 0}, "jobs"), ({"jobs": 1.5}, "jobs"),
                                           ({"chunk_targets": 0}, "chunk_targets"),
                                           ({"chunk_targets": True}, "chunk_targets"),
                                           ({"segment_days": 0.0}, "segment_days")])
def test_bad_settings_are_refused(catalog, demo_sites, kwargs, field):
    with pytest.raises(InputError, match=field):
        sweep.plan_windows_chunked(catalog, demo_sites, {}, START, END, **kwargs)


def test_duplicate_target_names_are_refused(catalog, demo_sites):
    doubled = pd.concat([catalog, catalog.iloc[[0]]], ignore_index=True)
    with pytest.raises(InputError, match="Orrin-0 c"):
        sweep.plan_windows_chunked(doubled, demo_sites, {}, START, END)


def test_end_before_start_is_refused_like_plan_windows(catalog, demo_sites):
    with pytest.raises(InputError, match="must come after"):
        sweep.plan_windows_chunked(catalog, demo_sites, {}, END, START)


def test_time_order_equals_pandas_three_key_sort(catalog, demo_sites):
    # Reference: pandas' stable sort_values on (mid_jd_utc, target, site); the fast engine's
    # mid-times are geocentric, so every transit ties across the three sites.
    table = windows.plan_windows(catalog, demo_sites, {}, START, END, include_unobservable=True, ordered=False)
    shuffled = table.sample(frac=1.0, random_state=3).reset_index(drop=True)
    expected = shuffled.sort_values(["mid_jd_utc", "target", "site"], kind="stable").reset_index(drop=True)
    assert expected["mid_jd_utc"].duplicated().sum() > 100
    pd.testing.assert_frame_equal(windows.in_time_order(shuffled), expected, check_exact=True)
