"""Planets of one star in a campaign: overlapping visits are one pointing, worked out by hand.

Two nights at one site on the Greenwich meridian (local night = UTC), overhead 0.5 h a pointing:
- night 1: Orla b observable 22:00-02:00 with its transit 23:00-01:00; Orla c observable
  00:00-03:00 with its transit 00:30-02:30; Vey b (another star) observable 01:00-02:00 with its
  transit 01:00-01:30;
- night 2: Orla b observable 21:00-01:00 with its transit 22:00-00:00.
By hand: one pointing 22:00-03:00 on night 1 (5 h + 0.5 h) observes Orla b (2 h in transit,
2 h baseline) and Orla c (2 h in transit, 1 h baseline); Vey b clashes with it; night 2 is a
pointing of 4 h + 0.5 h for Orla b (2 h in transit, 2 h baseline). Totals: Orla b 4 h in
transit and 4 h baseline, Orla c 2 h and 1 h, telescope 5.5 + 4.5 = 10 h (not 12.5 h: the
shared hours are counted once).
"""

import pandas as pd
import pytest

from vigil.campaign.schedule import schedule, visits_from_windows
from vigil.sites import Site

MIDNIGHT_1 = 2461000.5  # JD of 0h UTC
HOUR_D = 1.0 / 24.0
HOSTS = {"Orla b": "Orla", "Orla c": "Orla", "Vey b": "Vey"}


def _window(target, epoch, midnight, observable_h, transit_h):
    (lo, hi), (ingress, egress) = observable_h, transit_h
    return {"target": target, "site": "meridian", "epoch": epoch, "coverage": "full", "observable_fraction": 1.0,
            "observable_start_jd_utc": midnight + lo * HOUR_D, "observable_end_jd_utc": midnight + hi * HOUR_D,
            "ingress_jd_utc": midnight + ingress * HOUR_D, "egress_jd_utc": midnight + egress * HOUR_D,
            "mid_jd_utc": midnight + (ingress + egress) / 2 * HOUR_D}


@pytest.fixture
def visits():
    windows = pd.DataFrame([
        _window("Orla b", 10, MIDNIGHT_1, (-2, 2), (-1, 1)),
        _window("Orla c", 4, MIDNIGHT_1, (0, 3), (0.5, 2.5)),
        _window("Vey b", 7, MIDNIGHT_1, (1, 2), (1, 1.5)),
        _window("Orla b", 11, MIDNIGHT_1 + 1, (-3, 1), (-2, 0)),
    ])
    sites = {"meridian": Site("meridian", 51.5, 0.0, 50.0)}
    return visits_from_windows(windows, sites, ("full",), 0.0, 0.5)


def _totals(scheduled):
    return scheduled.groupby("target")[["in_transit_h", "baseline_h"]].sum()


def test_overlapping_visits_of_one_host_are_one_pointing(visits):
    scheduled = schedule(visits, {t: 1.0 for t in HOSTS}, {t: 0 for t in HOSTS}, None, None, HOSTS)
    totals = _totals(scheduled)
    assert totals.loc["Orla b"].tolist() == pytest.approx([4.0, 4.0], abs=1e-6)
    assert totals.loc["Orla c"].tolist() == pytest.approx([2.0, 1.0], abs=1e-6)
    assert "Vey b" not in set(scheduled["target"])
    assert scheduled["telescope_h"].sum() == pytest.approx(5.5 + 4.5, abs=1e-6)
    first = scheduled[scheduled["epoch"].isin([10, 4])]
    assert first["pointing"].nunique() == 1 and set(first["shared_with"]) == {"Orla b", "Orla c"}
    assert first["night"].nunique() == 1  # one weather draw for the pointing


def test_without_hosts_the_second_planet_clashes(visits):
    scheduled = schedule(visits, {t: 1.0 for t in HOSTS}, {t: 0 for t in HOSTS}, None, None)
    # By hand: Orla c's visit gains 2 / 3.5 per telescope hour, Orla b's 2 / 4.5: only Orla c is kept on night 1.
    night_1 = scheduled[scheduled["epoch"].isin([10, 4, 7])]
    assert night_1["target"].tolist() == ["Orla c"]
    assert set(scheduled["shared_with"]) == {""}


def test_a_pointing_counts_once_for_the_site_and_once_for_each_planet(visits):
    # A cap of one visit per site and half-year: the shared pointing (gain (2 + 2) / 5.5 per hour)
    # is booked first and uses it; both planets are still observed in it.
    scheduled = schedule(visits, {t: 1.0 for t in HOSTS}, {t: 0 for t in HOSTS}, None, 1, HOSTS)
    assert sorted(scheduled["target"]) == ["Orla b", "Orla c"]
    capped = schedule(visits, {t: 1.0 for t in HOSTS}, {t: 0 for t in HOSTS}, 1, None, HOSTS)
    assert _totals(capped).loc["Orla b", "in_transit_h"] == pytest.approx(2.0, abs=1e-6)  # one visit per planet
