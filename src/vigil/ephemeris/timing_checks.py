"""Sanity of a measured mid-time before it updates an ephemeris.

Two rules refuse a timing unless the observer forces it (then it is recorded, marked with
FORCED_MARK at the head of the visit's notes, and used):
- inside its visit: the mid-time (BJD_TDB) must fall within the visit's start and end (UTC),
  widened by VISIT_MARGIN_D for the difference between the two (barycentric light time, at most
  8.4 min, plus TT - UTC, about 69 s; common practice, no source);
- near the prediction: the mid-time must lie within TIMING_SIGMA combined sigma,
  sqrt(sigma_timing^2 + sigma_T(n)^2), of the ephemeris's prediction for its epoch.
"""

from __future__ import annotations

import math

from vigil.ephemeris.models import Ephemeris
from vigil.time_units import MINUTES_PER_DAY

FORCED_MARK = "[timing forced]"
TIMING_SIGMA = 5.0
VISIT_MARGIN_D = 0.01
def outside_visit(mid_bjd_tdb: float, start_jd_utc: float, end_jd_utc: float) -> str | None:
    """Why the mid-time cannot belong to the visit [start, end] (JD UTC), or None when it can.

    Examples
    --------
    >>> outside_visit(2460000.5, 2460000.4, 2460000.6) is None
    True
    >>> outside_visit(2460001.5, 2460000.4, 2460000.6)
    'the mid-time lies 0.900 d after the visit ends'
    """
    if mid_bjd_tdb < start_jd_utc - VISIT_MARGIN_D:
        return f"the mid-time lies {start_jd_utc - mid_bjd_tdb:.3f} d before the visit starts"
    if mid_bjd_tdb > end_jd_utc + VISIT_MARGIN_D:
        return f"the mid-time lies {mid_bjd_tdb - end_jd_utc:.3f} d after the visit ends"
    return None


def far_from_prediction(model: Ephemeris, epoch: int, mid_bjd_tdb: float, mid_err_d: float) -> str | None:
    """Why the mid-time disagrees with the ephemeris at `epoch` (> TIMING_SIGMA combined), or None.

    Examples
    --------
    >>> from vigil.ephemeris.models import linear_ephemeris
    >>> model = linear_ephemeris(2460000.0, 3e-4, 2.0, 0.0)
    >>> far_from_prediction(model, 10, 2460020.0005, 4e-4) is None
    True
    >>> far_from_prediction(model, 10, 2460020.01, 4e-4)
    'it is 14.4 min from the prediction for epoch 10, 20.0 combined sigma (limit 5)'
    """
    predicted = float(model.mid_bjd_tdb(epoch))
    combined = math.hypot(mid_err_d, float(model.mid_sigma_d(epoch)))
    offset = mid_bjd_tdb - predicted
    if abs(offset) <= TIMING_SIGMA * combined:
        return None
    return (f"it is {offset * MINUTES_PER_DAY:.1f} min from the prediction for epoch {epoch}, "
            f"{abs(offset) / combined:.1f} combined sigma (limit {TIMING_SIGMA:g})")


def is_forced(notes) -> bool:
    """Whether a visit's notes carry the mark of a forced timing."""
    return isinstance(notes, str) and notes.startswith(FORCED_MARK)
