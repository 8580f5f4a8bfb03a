"""Reference values for the spectrum-model tests, each with its source.

"From memory" means remembered from the published source, not copied from it.
"""

# IAU 2015 Resolution B3 nominal solar T_eff (from memory).
SUN_TEFF_K = 5772.0
# IAU 2015 nominal terrestrial GM (m^3 s^-2) and equatorial radius (m) (from memory).
EARTH_GM_M3_S2 = 3.986004e14
EARTH_RADIUS_M = 6.3781e6
# Earth's semi-major axis over the solar radius, 1 au / R_sun (IAU 2012 au, IAU 2015 R_sun).
EARTH_A_OVER_RSUN = 1.495978707e11 / 6.957e8
# Earth's zero-albedo, fully redistributed equilibrium temperature, about 278 K
# (common practice, no source).
EARTH_TEQ_ZERO_ALBEDO_K = 278.0
