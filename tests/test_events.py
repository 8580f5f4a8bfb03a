"""Occultation events through the ephemeris and the calendar."""

import numpy as np
import pandas as pd
import pytest

from vigil.ephemeris.projection import project_transits
from vigil.errors import InputError
from vigil.export.calendar import event_uid


def _targets(**extra):
    row = {"name": "Ecc-1 b", "ra_deg": 100.0, "dec_deg": -30.0, "t0_bjd_tdb": 2461000.5, "t0_err_d": 0.001,
           "period_d": 4.13, "period_err_d": 1e-5, "duration_h": 3.0, "t0_period_cov_d2": 0.0}
    row.update(extra)
    return pd.DataFrame([row])


def test_circular_occultation_falls_half_a_period_after_transit():
    # Circular orbit: superior conjunction is exactly half a period after inferior conjunction
    # (orbital geometry; Winn 2010, eq. 33 with e = 0).
    transits = project_transits(_targets(), 2461100.0, 2461130.0)
    occultations = project_transits(_targets(), 2461100.0, 2461130.0, event="occultation")
    paired = transits.merge(occultations, on="epoch", suffixes=("_tr", "_oc"))
    assert len(paired) >= 6
    np.testing.assert_allclose(paired["mid_bjd_tdb_oc"] - paired["mid_bjd_tdb_tr"], 4.13 / 2, atol=1e-9)
    np.testing.assert_allclose(paired["duration_h_oc"], 3.0)


def test_eccentric_occultation_offset_matches_winn_first_order():
    # Winn 2010 eq. 33 (from memory): dt = (P/pi) e cos(w) (1 + csc^2 i); i = 90 deg gives 2 P e cos(w) / pi.
    # The exact offset differs from it at order e^3 (about 0.1 % of the offset here).
    e, omega = 0.05, 30.0
    targets = _targets(eccentricity=str(e), omega_deg=str(omega))
    transits = project_transits(targets, 2461100.0, 2461130.0)
    occultations = project_transits(targets, 2461100.0, 2461130.0, event="occultation")
    paired = transits.merge(occultations, on="epoch", suffixes=("_tr", "_oc"))
    first_order = 2 * 4.13 * e * np.cos(np.radians(omega)) / np.pi
    offset = paired["mid_bjd_tdb_oc"] - paired["mid_bjd_tdb_tr"] - 4.13 / 2
    np.testing.assert_allclose(offset, first_order, rtol=5e-3)


def test_eccentric_orbit_without_omega_is_refused():
    with pytest.raises(InputError, match="omega_deg"):
        project_transits(_targets(eccentricity="0.1"), 2461100.0, 2461130.0, event="occultation")


def test_occultation_and_transit_of_one_epoch_have_different_uids():
    assert event_uid("Ecc-1 b", "site", 7) != event_uid("Ecc-1 b", "site", 7, "occultation")
    assert event_uid("Ecc-1 b", "site", 7) == event_uid("Ecc-1 b", "site", 7, "transit")
