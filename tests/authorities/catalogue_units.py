"""Reference values for reading catalogues: units, angles and the table formats, each with its source.

"From memory" means remembered from the published source, not copied from it.
"""

# Non-SI units accepted for use with the SI: minute = 60 s, hour = 3600 s, day = 86 400 s
# (BIPM, The International System of Units, 9th ed. 2019, Table 8; from memory).
MINUTE_S = 60.0
HOUR_S = 3600.0
DAY_S = 86400.0

# Right ascension: 24 h of hour angle make 360 degrees, so 1 h = 15 deg (definition; common practice, no source).
DEG_PER_HOUR_OF_RA = 15.0

# IAU 2015 Resolution B3 nominal equatorial radius of Jupiter, 7.1492e7 m (from memory; the Earth's
# is in spectrum_refs).
JUPITER_RADIUS_M = 7.1492e7

# ECSV: the first line of a file is "# %ECSV <version>" (astropy APE 6, "Enhanced Character Separated
# Values", from memory). VOTable is an XML format of the IVOA (VOTable 1.4 Recommendation, 2019);
# its null cells are empty TD elements (section 6 of that document; from memory). IPAC tables
# declare name, type, unit and null rows between '|' delimiters (IRSA "IPAC Table Format"
# documentation; from memory).
ECSV_SIGNATURE = "# %ECSV"
