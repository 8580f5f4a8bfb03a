"""Reference values for the noise-budget tests, each with its source.

"From memory" means remembered from the published source, not copied from it.
"""

# Scintillation, Young (1967) in the form of Osborn et al. (2015, MNRAS 452, 1707, eq. 7):
# sigma_Y^2 = 10e-6 D^(-4/3) t^(-1) (cos z)^(-3) exp(-2 h_obs / H), D aperture (m), t exposure (s),
# z zenith distance, h_obs site altitude (m), H = 8000 m. Osborn et al. find the measured median
# larger; multiplying sigma_Y by about 1.5 is the usual conservative choice (from memory).
YOUNG_CONSTANT = 10e-6
YOUNG_SCALE_HEIGHT_M = 8000.0
OSBORN_CONSERVATIVE_FACTOR = 1.5

# Atmospheric extinction in V at a good site: about 0.12-0.15 mag per airmass (common practice,
# no source); much less in the near infrared outside telluric bands.
EXTINCTION_V_MAG_PER_AIRMASS = (0.12, 0.15)
# Dark V sky at a good site: about 21.5-22 mag arcsec^-2 (common practice; the Krisciunas &
# Schaefer 1991, PASP 103, 1033 model adds moonlight to it).
DARK_SKY_V_MAG_ARCSEC2 = (21.5, 22.0)
# Krisciunas & Schaefer (1991, eqs. 15-21; from memory): conversion of V mag arcsec^-2 to
# nanolamberts, B = 34.08 exp(20.7233 - 0.92104 V), the Moon's illuminance
# I* = 10^(-0.4 (3.84 + 0.026 |alpha| + 4e-9 alpha^4)), the scattering function
# f(rho) = 10^5.36 (1.06 + cos^2 rho) + 10^(6.15 - rho / 40), their airmass
# X(Z) = (1 - 0.96 sin^2 Z)^(-1/2) and k_V = 0.172 mag per airmass.
KS_NANOLAMBERT = (34.08, 20.7233, 0.92104)
KS_EXTINCTION_V = 0.172

# Red noise across visits: per-visit systematics that differ from visit to visit average as
# 1/sqrt(visits); a floor common to all visits does not (common practice, no source).

# Transmission Spectroscopy Metric (Kempton et al. 2018, PASP 130, 114401, eq. 1):
# TSM = scale x R_p^3 T_eq / (M_p R_*^2) x 10^(-m_J / 5), one scale factor per size bin
# (0.190, 1.26, 1.28, 1.15 for R_p < 1.5, 1.5-2.75, 2.75-4, 4-10 R_earth).
TSM_SIZE_BINS_R_EARTH = (1.5, 2.75, 4.0, 10.0)

# Trapezoid: ingress and egress durations from Winn (2010, "Transits and Occultations", eqs. 14
# and 15, small-angle limit): T14 ∝ sqrt((1 + k)^2 - b^2), T23 ∝ sqrt((1 - k)^2 - b^2).
