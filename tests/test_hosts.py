"""Planets of one star: host grouping (column or 2 arcsec), overlapping windows shared."""

import logging
from datetime import timezone

import pandas as pd
import pytest
from astropy.time import Time

from vigil.hosts import HOST_RADIUS_ARCSEC, host_of, overlap_groups, shared_with

ARCSEC_DEG = 1.0 / 3600.0  # 1 arcsec = 1/3600 degree (definition)


def _targets(dec_offsets_arcsec, **extra):
    n = len(dec_offsets_arcsec)
    return pd.DataFrame({"name": [f"Orla-{i} b" for i in range(n)], "ra_deg": [120.0] * n,
                         "dec_deg": [-30.0 + d * ARCSEC_DEG for d in dec_offsets_arcsec], **extra})


def test_targets_within_two_arcsec_share_a_host_and_a_note_says_so(caplog):
    # Offsets along a meridian: the separation is the declination difference (exact on a great circle).
    with caplog.at_level(logging.INFO, logger="vigil"):
        hosts = host_of(_targets([0.0, 1.5, 40.0, 41.5 + HOST_RADIUS_ARCSEC + 0.1]))
    assert hosts["Orla-0 b"] == hosts["Orla-1 b"]
    assert len({hosts["Orla-0 b"], hosts["Orla-2 b"], hosts["Orla-3 b"]}) == 3
    assert "Orla-0 b, Orla-1 b" in caplog.text and "2 arcsec" in caplog.text


def test_host_column_decides_over_positions():
    hosts = host_of(_targets([0.0, 1.0, 500.0], host=["Orla", "", "Orla"]))
    assert hosts == {"Orla-0 b": "Orla", "Orla-1 b": "Orla-1 b", "Orla-2 b": "Orla"}


def test_overlap_groups_chain_and_respect_keys():
    # By hand: [0,1] and [0.5,1.5] overlap; [1.5,2] only touches the second (no overlap); key t is apart.
    groups = overlap_groups(["s", "s", "s", "t"], [0.5, 0.0, 1.5, 0.6], [1.5, 1.0, 2.0, 0.7])
    assert groups[0] == groups[1] and len({groups[0], groups[2], groups[3]}) == 3


def test_shared_with_names_the_other_planets_of_the_host_at_the_same_site():
    windows = pd.DataFrame({
        "target": ["Orla b", "Orla c", "Orla b", "Orla c", "Vey b"],
        "site": ["north", "north", "south", "north", "north"],
        "window_start_jd_utc": [10.00, 10.10, 10.05, 12.0, 10.05],
        "window_end_jd_utc": [10.20, 10.30, 10.25, 12.2, 10.25],
    })
    got = shared_with(windows, {"Orla b": "Orla", "Orla c": "Orla", "Vey b": "Vey"}).tolist()
    assert got == ["Orla c", "Orla b", "", "", ""]


def _window(target, epoch, start, end, shared=""):
    """One row of the windows table as vigil.plan_windows hands it out (times as UTC datetimes)."""
    utc = lambda jd: Time(jd, format="jd", scale="utc").to_datetime(timezone=timezone.utc)  # noqa: E731
    return {"target": target, "site": "north", "event": "transit", "epoch": epoch, "mid_bjd_tdb": 2461000.0,
            "mid_utc": utc((start + end) / 2), "mid_sigma_min": 1.44, "ingress_utc": utc(start + 0.04),
            "egress_utc": utc(end - 0.04), "window_start_utc": utc(start), "window_end_utc": utc(end),
            "coverage": "full", "observable_fraction": 1.0, "observable_start_utc": utc(start),
            "observable_end_utc": utc(end), "alt_mid_deg": 50.0, "airmass_mid": 1.3, "sun_alt_mid_deg": -30.0,
            "moon_sep_deg": 80.0, "moon_illumination": 0.5, "stale": False, "shared_with": shared}


def test_calendar_shows_a_shared_pointing_as_one_event_naming_both_planets():
    from vigil.export.calendar import windows_calendar

    windows = pd.DataFrame([_window("Orla b", 12, 2461000.60, 2461000.75, "Orla c"),
                            _window("Orla c", 7, 2461000.70, 2461000.85, "Orla b"),
                            _window("Orla b", 13, 2461003.60, 2461003.75)]).astype({
        c: "datetime64[s, UTC]" for c in ("mid_utc", "ingress_utc", "egress_utc", "window_start_utc", "window_end_utc",
                                           "observable_start_utc", "observable_end_utc")})
    calendar = icalendar_events(windows_calendar(windows).to_ical())
    assert len(calendar) == 2
    shared = calendar[0]
    assert "Orla b" in str(shared["SUMMARY"]) and "Orla c" in str(shared["SUMMARY"])
    # RFC 5545 DTSTART/DTEND: the event spans both windows (first start to last end).
    first_start = Time(2461000.60, format="jd", scale="utc").to_datetime(timezone=timezone.utc)
    assert abs((shared.decoded("DTSTART") - first_start).total_seconds()) <= 0.5
    span_h = (shared.decoded("DTEND") - shared.decoded("DTSTART")).total_seconds() / 3600
    assert span_h == pytest.approx((0.85 - 0.60) * 24, abs=1 / 3600)
    assert str(calendar[1]["SUMMARY"]).startswith("Orla b transit,")


def icalendar_events(raw: bytes):
    import icalendar

    return list(icalendar.Calendar.from_ical(raw).walk("VEVENT"))


def test_marks_on_streamed_pieces_equal_marks_on_the_whole_table():
    from vigil.hosts import mark_shared

    starts = [10.0, 10.1, 11.0, 11.05, 11.5, 12.0]
    windows = pd.DataFrame({"target": ["Orla b", "Orla c", "Orla b", "Orla c", "Vey b", "Orla c"],
                            "site": ["north"] * 6, "window_start_jd_utc": starts,
                            "window_end_jd_utc": [s + 0.2 for s in starts]})
    hosts = {"Orla b": "Orla", "Orla c": "Orla", "Vey b": "Vey"}
    whole = shared_with(windows, hosts).tolist()
    for cut in range(1, 6):  # every cut, including one between two overlapping windows
        pieces = [windows.iloc[:cut], windows.iloc[cut:cut + 1], windows.iloc[cut + 1:]]
        streamed = [m for p in mark_shared(pieces, hosts) for m in p["shared_with"]]
        assert streamed == whole, cut


def test_calendar_written_piece_by_piece_equals_the_calendar_written_whole(tmp_path, monkeypatch):
    # A shared pointing cut between two pieces is still one event, and the file is byte for byte
    # the one written from the whole table (RFC 5545 content lines in the same order).
    from vigil.export.calendar import windows_ics_writer, write_windows_ics

    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1800000000")
    windows = pd.DataFrame([_window("Vey b", 3, 2460999.10, 2460999.30),
                            _window("Orla b", 12, 2461000.60, 2461000.75, "Orla c"),
                            _window("Orla c", 7, 2461000.70, 2461000.85, "Orla b"),
                            _window("Vey b", 4, 2461000.72, 2461000.90),
                            _window("Orla b", 13, 2461003.60, 2461003.75, "Orla c"),
                            _window("Orla c", 8, 2461003.65, 2461003.80, "Orla b")]).astype({
        c: "datetime64[s, UTC]" for c in ("mid_utc", "ingress_utc", "egress_utc", "window_start_utc", "window_end_utc",
                                           "observable_start_utc", "observable_end_utc")})
    write_windows_ics(windows, tmp_path / "whole.ics")
    whole = (tmp_path / "whole.ics").read_bytes()
    assert len(icalendar_events(whole)) == 4
    for cut in range(len(windows) + 1):  # every cut, including inside each shared pointing
        for second in range(cut, len(windows) + 1):
            with windows_ics_writer(tmp_path / "pieces.ics") as add:
                for piece in (windows.iloc[:cut], windows.iloc[cut:second], windows.iloc[second:]):
                    add(piece)
            assert (tmp_path / "pieces.ics").read_bytes() == whole, (cut, second)
