"""The windows table flags transits whose timing padding has outgrown the window."""

import numpy as np
import pandas as pd

from vigil.ephemeris.models import mid_sigma_d
from vigil.constraints import Constraints
from vigil.visibility import pad_windows


def test_stale_flag_follows_the_propagated_sigma():
    # sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2 (standard error propagation); flagged once
    # K sigma exceeds a quarter of the duration or the baseline (vigil's stated convention).
    epochs = np.arange(0, 4000, 250)
    sigma = mid_sigma_d(epochs, 0.001, 2e-5)
    transits = pd.DataFrame({"mid_jd_utc": 2461000.0 + epochs * 3.0, "mid_sigma_d": sigma, "duration_h": 2.0})
    constraints = Constraints(baseline_h=1.0, sigma_k=2.0)
    flagged = pad_windows(transits, constraints)["stale"].to_numpy()
    pad_h = 2.0 * sigma * 24
    np.testing.assert_array_equal(flagged, (pad_h > 0.5) | (pad_h > 1.0))
    assert not flagged[0] and flagged[-1]
