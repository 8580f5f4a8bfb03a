"""Reference values for the chart, HTML and calendar tests, each with its source.

"From memory" means remembered from the published source, not copied from it.
"""

# Okabe & Ito (2008), "Color Universal Design (CUD): how to make figures and presentations that
# are friendly to colorblind people", J*Fly, Table "Color set" (sRGB 0-255; from memory).
OKABE_ITO_RGB = {
    "black": (0, 0, 0), "orange": (230, 159, 0), "sky blue": (86, 180, 233), "bluish green": (0, 158, 115),
    "yellow": (240, 228, 66), "blue": (0, 114, 178), "vermillion": (213, 94, 0), "reddish purple": (204, 121, 167),
}

# Tolerances asked of the charts by the issue that specified them (common practice, no source):
# the plotted altitude against an independent astropy AltAz transform, the sky-shading edges
# against PyEphem (use_center=True, pressure=0, horizon at the level), the meridian crossing
# against astroplan's meridian transit time.
ALTITUDE_TOLERANCE_DEG = 0.05
TWILIGHT_EDGE_TOLERANCE_S = 60.0
MERIDIAN_TOLERANCE_S = 30.0

# Twilight levels: the Sun's centre at 0 (geometric sunset), -6, -12, -18 deg (civil, nautical,
# astronomical; common practice, no source).
SKY_LEVELS_DEG = (0.0, -6.0, -12.0, -18.0)

# RFC 5545 section 3.8.7.4: SEQUENCE is 0 when an event is created and is incremented each
# time the organiser makes a significant revision (start or end time among them).
FIRST_SEQUENCE = 0
