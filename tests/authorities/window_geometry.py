"""Reference settings for the per-window geometry checks: meridian crossing, Moon below the
horizon, altitude at mid-transit below and above the horizon.

References are outside libraries: astroplan's Observer.target_meridian_transit_time, PyEphem's
Moon rising (use_center=True, pressure=0, horizon 0: the Moon's geometric centre on the level),
astropy AltAz with and without pressure.
"""

# The meridian crossing against astroplan's target_meridian_transit_time (which="nearest"):
# the tolerance the issue asks for (common practice, no source).
MERIDIAN_TOLERANCE_S = 30.0

# A window edge set by the Moon rising against PyEphem's rising time: the engines' edge budget
# (one minute, the tolerance of the fast-vs-reference tests; common practice, no source).
MOONRISE_EDGE_TOLERANCE_S = 60.0

# Below the horizon neither engine refracts, so the engines differ only by the fast engine's
# place-of-date budget (< 0.01 deg, vigil.engines.fast docstring) and the reference matches
# astropy AltAz without pressure exactly. Above the horizon both refract with their own models
# (astropy's ERFA vs Saemundsson 1986, Meeus ch. 16): 0.05 deg above 5 deg altitude, the
# tolerance of the fast-vs-reference tests (common practice, no source).
ALT_BELOW_HORIZON_TOLERANCE_DEG = 0.01
ALT_ABOVE_HORIZON_TOLERANCE_DEG = 0.05
ALT_COMPARED_ABOVE_DEG = 5.0
