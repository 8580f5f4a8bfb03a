"""Which event of the orbit is projected: the transit, or the occultation (secondary eclipse).

Occultations need eccentricity and omega_deg (argument of periastron; both 0 for a circular
orbit, which may be left empty) and use inclination_deg when given (else 90); the offset is
exact in e at the conjunctions plus the inclination term of Winn (2010) eq. 33.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from vigil.ephemeris import occultation
from vigil.ephemeris.models import numeric_column
from vigil.errors import ArgumentError, InputError

EVENTS = ("transit", "occultation")
ORBIT_COLUMNS = {"eccentricity": (0.0, 0.95), "omega_deg": (-360.0, 360.0), "inclination_deg": (0.0, 180.0)}


def event_offsets(targets: pd.DataFrame, event: str) -> tuple[np.ndarray, np.ndarray]:
    """Per target: (mid-time offset from the transit of the same epoch in days, event duration in hours).

    Examples
    --------
    >>> table = pd.DataFrame({"name": ["b"], "duration_h": [2.0], "period_d": [3.0]})
    >>> offsets, durations = event_offsets(table, "occultation")
    >>> float(offsets[0]), float(durations[0])
    (1.5, 2.0)
    """
    if event not in EVENTS:
        raise ArgumentError("event", f"expected transit or occultation, got {event!r}")
    duration_h = targets["duration_h"].to_numpy(dtype=float)
    if event == "transit":
        return np.zeros(len(targets)), duration_h
    e = np.nan_to_num(numeric_column(targets, "eccentricity", *ORBIT_COLUMNS["eccentricity"]), nan=0.0)
    omega = numeric_column(targets, "omega_deg", *ORBIT_COLUMNS["omega_deg"])
    missing = (e > 0) & np.isnan(omega)
    if missing.any():
        name = targets["name"].iat[int(np.flatnonzero(missing)[0])]
        raise InputError(f"target {name!r}, field omega_deg: needed for the occultation of an eccentric orbit")
    omega = np.nan_to_num(omega, nan=90.0)
    inclination = np.nan_to_num(numeric_column(targets, "inclination_deg", *ORBIT_COLUMNS["inclination_deg"]), nan=90.0)
    period = targets["period_d"].to_numpy(dtype=float)
    offset = occultation.occultation_mid_bjd_tdb(0.0, period, e, omega, inclination)
    return offset, occultation.occultation_duration_h(duration_h, e, omega)
