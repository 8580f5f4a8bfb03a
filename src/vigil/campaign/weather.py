"""Campaign weather: each trial draws one clear/cloudy outcome per site and night from the clear
fraction of the night's month (seeded, so a campaign is reproducible)."""

from __future__ import annotations

import numpy as np
import pandas as pd


def clear_weather(visits: pd.DataFrame, clear_fraction: dict, trials: int, rng: np.random.Generator) -> np.ndarray:
    """Boolean (trials, visits): was the visit's night clear? One draw per site-night per trial,
    clear with the probability `clear_fraction[site][month - 1]`."""
    if visits.empty:
        return np.zeros((trials, 0), dtype=bool)
    keys = visits["site"].astype(str) + ":" + visits["night"].astype(str)
    nights, which = np.unique(keys.to_numpy(), return_inverse=True)
    first = pd.Series(np.arange(len(visits))).groupby(which).first().to_numpy()
    probability = np.array([clear_fraction[s][m - 1] for s, m in
                            zip(visits["site"].to_numpy()[first], visits["month"].to_numpy()[first])])
    clear_nights = rng.random((trials, nights.size)) < probability
    return clear_nights[:, which]
