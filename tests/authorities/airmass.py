"""Reference values for airmass and the atmosphere, each with its source."""

# Kasten & Young (1989, Applied Optics 28, 4735): X = 1 / (cos z + 0.50572 (96.07995 deg - z)^-1.6364).
KASTEN_YOUNG_A = 0.50572
KASTEN_YOUNG_B_DEG = 96.07995
KASTEN_YOUNG_C = 1.6364
# X at zenith distance 60 deg from that formula: 1.9943 (computed from the formula).
KASTEN_YOUNG_X_AT_Z60 = 1.9943
# Plane-parallel atmosphere: X = sec z (common practice, no source); the fitted formula sits
# within 1e-3 of it up to z = 40 deg (computed from the formula).
SEC_Z_AGREEMENT_UP_TO_Z_DEG = 40.0
SEC_Z_RELATIVE_TOLERANCE = 1e-3
# The standard atmosphere gives 795.0 hPa at 2000 m (standard tables; from memory).
STANDARD_PRESSURE_AT_2000_M_HPA = 795.0
