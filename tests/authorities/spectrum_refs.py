"""Reference values for the spectrum-model tests, each with its source.

"From memory" means remembered from the published source, not copied from it.
"""

# IAU 2015 Resolution B3 nominal solar values (from memory).
SUN_TEFF_K = 5772.0
SUN_RADIUS_M = 6.957e8
# Total solar irradiance at 1 au, Kopp & Lean 2011, GRL 38, L01706 (from memory).
SOLAR_IRRADIANCE_W_M2 = 1361.0
# Absolute V magnitude of the Sun, about 4.83 (common compilations, e.g. Willmer 2018,
# ApJS 236, 47; from memory).
SUN_ABSOLUTE_V_MAG = 4.83
# IAU 2015 nominal terrestrial GM (m^3 s^-2) and equatorial radius (m) (from memory).
EARTH_GM_M3_S2 = 3.986004e14
EARTH_RADIUS_M = 6.3781e6
# Earth's semi-major axis over the solar radius, 1 au / R_sun (IAU 2012 au, IAU 2015 R_sun).
EARTH_A_OVER_RSUN = 1.495978707e11 / 6.957e8
# Earth's zero-albedo, fully redistributed equilibrium temperature, about 278 K
# (common practice, no source).
EARTH_TEQ_ZERO_ALBEDO_K = 278.0

# Band zero points: (effective wavelength um, F_lambda W m^-2 um^-1, F_nu Jy or None).
# Johnson V: Bessell, Castelli & Plez 1998, A&A 333, 231, Table A2: 363.1e-11 erg cm^-2 s^-1 A^-1
# at 0.545 um (from memory). 2MASS: Cohen, Wheaton & Megeath 2003, AJ 126, 1090, Table 2,
# isophotal wavelengths and F_lambda in W cm^-2 um^-1, F_nu in Jy (from memory).
ZERO_POINTS = {
    "V": (0.545, 363.1e-11 * 1e-7 / 1e-4 / 1e-4, None),
    "J": (1.235, 3.129e-13 * 1e4, 1594.0),
    "H": (1.662, 1.133e-13 * 1e4, 1024.0),
    "Ks": (2.159, 4.283e-14 * 1e4, 666.7),
}

# A V = 0 star delivers about 1000 photons s^-1 cm^-2 A^-1 near 550 nm
# (common practice, no source).
V0_PHOTONS_S_CM2_A = 1000.0
