"""Reference values for the Sun, the Moon and twilight, each with its source.

"From memory" means remembered from the published source, not copied from it; each such
value was also reproduced with astropy to the stated tolerance.
"""

# Apparent Sun, 1992-10-13 0h TD (JD 2448908.5): RA 13h13m30.749s, Dec -7d47m01.74s (Meeus,
# Astronomical Algorithms, 2nd ed., Example 25.b; from memory; astropy TETE agrees to 0.01 s / 0.1").
SUN_MEEUS_25B_JD_TT = 2448908.5
SUN_MEEUS_25B_RA_HMS = (13, 13, 30.749)
SUN_MEEUS_25B_DEC_DEG = -(7 + 47 / 60 + 1.74 / 3600)
# Apparent Moon, 1992-04-12 0h TD (JD 2448724.5): RA 134.688470 deg, Dec +13.768368 deg (Meeus,
# Example 47.a; from memory; astropy TETE agrees to 1e-4 deg).
MOON_MEEUS_47A_JD_TT = 2448724.5
MOON_MEEUS_47A_RA_DEG = 134.688470
MOON_MEEUS_47A_DEC_DEG = 13.768368
# The Moon's illuminated fraction at the same instant: k = 0.6786 (Meeus, Example 48.a; from memory).
MOON_MEEUS_48A_ILLUMINATED = 0.6786
# Twilight ends when the Sun's centre is at -6, -12, -18 deg: civil, nautical, astronomical
# (common practice, no source).
TWILIGHT_SUN_ALT_DEG = {"civil": -6.0, "nautical": -12.0, "astronomical": -18.0}
# PyEphem (use_center=True, horizon at the twilight altitude, pressure=0) and astroplan agree on
# twilight instants to about 2 s; a fast method should stay within 60 s of them (common practice
# for planning, no source).
TWILIGHT_TOLERANCE_VS_PYEPHEM_S = 60.0
# The tropical year, 365.2422 d, sets the Sun's mean motion along the ecliptic (from memory).
TROPICAL_YEAR_D = 365.2422
# The Earth's orbital eccentricity, 0.0167 (from memory).
EARTH_ORBIT_ECCENTRICITY = 0.0167
