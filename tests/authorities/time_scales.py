"""Reference values for time scales and the Earth's rotation, each with its source.

"From memory" means remembered from the published source, not copied from it; each such
value was also reproduced with astropy to the stated tolerance.
"""

# TAI - UTC = 37 s from 2017-01-01 until the next leap second (IERS Bulletin C); TT = TAI + 32.184 s
# (IAU definition): TT - UTC = 69.184 s.
TT_MINUS_UTC_SINCE_2017_S = 69.184
# TDB - TT stays below 2 ms (IAU definition of TDB; from memory).
TDB_MINUS_TT_MAX_S = 0.002
# Greenwich mean sidereal time, 1987-04-10 0h UT (JD 2446895.5): 13h10m46.3668s; at 19h21m00s UT
# the same day: 8h34m57.0896s (Meeus, Astronomical Algorithms, 2nd ed., Examples 12.a and 12.b;
# from memory; astropy gives both within 0.01 s). As (JD UT1, (h, m, s)).
GMST_MEEUS_12A = (2446895.5, (13, 10, 46.3668))
GMST_MEEUS_12B = (2446895.5 + (19 + 21 / 60) / 24, (8, 34, 57.0896))
# Greenwich apparent sidereal time at 1987-04-10 0h UT: 13h10m46.1351s (Meeus, Example 12.a; from memory).
GAST_MEEUS_12A = (2446895.5, (13, 10, 46.1351))
# BJD_TDB - JD_UTC includes the barycentric light travel time, which for a target on the ecliptic
# swings by about +-8.3 min over a year (Eastman, Siverd & Gaudi 2010, PASP 122, 935). A conversion
# should agree with astropy's Time.light_travel_time to better than this (same source's advice).
LIGHT_TRAVEL_TIME_SWING_MIN = 8.3
LIGHT_TRAVEL_TIME_TOLERANCE_S = 1.0
# The Earth's barycentric position and velocity series of SOFA/ERFA (iauEpv00, used by astropy
# and by vigil's fast conversion) was fitted to the years 1900-2100 (its documentation, "Notes";
# from memory); outside them it still runs, less precisely.
EARTH_SERIES_FIT_YEARS = (1900, 2100)
