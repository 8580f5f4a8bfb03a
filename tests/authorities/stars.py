"""Reference values for the stellar-flux tests, each with its source.

"From memory" means remembered from the published source, not copied from it.
"""

# Mean dwarf sequence: Pecaut & Mamajek 2013, ApJS 208, 9, Table 5, in E. Mamajek's maintained
# version "A Modern Mean Dwarf Stellar Color and Effective Temperature Sequence" (2024.05.15).
# Rows: spectral type, T_eff (K), M_V, M_J, M_Ks (Johnson V, 2MASS J and Ks; Vega magnitudes).
MEAN_DWARF_SEQUENCE = (
    ("F9V", 6050.0, 4.25, 3.21, 2.915), ("G2V", 5770.0, 4.80, 3.60, 3.236), ("G8V", 5480.0, 5.30, 3.96, 3.532),
    ("K0V", 5290.0, 5.78, 4.31, 3.827), ("K3V", 4870.0, 6.53, 4.78, 4.100), ("K5V", 4440.0, 7.28, 5.10, 4.397),
    ("K7V", 4090.0, 8.20, 5.59, 4.81), ("M0V", 3850.0, 8.80, 5.97, 5.15), ("M2V", 3560.0, 10.21, 6.81, 5.98),
    ("M3V", 3430.0, 11.15, 7.38, 6.55), ("M4V", 3210.0, 12.61, 8.20, 7.36), ("M5V", 3060.0, 14.15, 9.09, 8.20),
)
# Tolerance of the colour check, mag (the acceptance criterion).
COLOUR_TOLERANCE_MAG = 0.1
# A blackbody scaled to one band is too blue for cool dwarfs: V - J too small by about 0.4 mag
# at K7-M0, 0.8 at M3, 1.2 at M4 and 1.6 at M5 against the sequence above (derived from the
# table: synthetic blackbody colours at its T_eff, rounded).
BLACKBODY_V_MINUS_J_DEFICIT_MAG = {"K7V": 0.4, "M0V": 0.4, "M3V": 0.8, "M4V": 1.2, "M5V": 1.6}

# Absolute magnitudes of the Sun, Vega system: Willmer 2018, ApJS 236, 47, Table 3 (from memory).
SUN_ABSOLUTE_MAG = {"V": 4.81, "J": 3.67, "H": 3.32, "Ks": 3.27}
# Absolute Gaia G magnitude of the Sun: Casagrande & VandenBerg 2018, MNRAS 479, L102 (from memory).
SUN_ABSOLUTE_G_MAG = 4.67
# IAU 2015 Resolution B3 nominal solar values (from memory).
SUN_TEFF_K = 5772.0
SUN_RADIUS_M = 6.957e8
# Total solar irradiance at 1 au, Kopp & Lean 2011, GRL 38, L01706 (from memory).
SOLAR_IRRADIANCE_W_M2 = 1361.0

# A V = 0 star delivers about 1000 photons s^-1 cm^-2 A^-1 near 550 nm (common practice, no
# source); the check allows 5 %.
V0_PHOTONS_S_CM2_A = 1000.0
V0_TOLERANCE = 0.05
# Energy flux of a TESS magnitude 0 star over the band, erg s^-1 cm^-2: Sullivan et al. 2015,
# ApJ 809, 77, section 6.1 (from memory).
TESS_ZERO_FLUX_ERG_S_CM2 = 4.03e-6
