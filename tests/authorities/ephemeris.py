"""Reference values for the ephemeris tests (models, fitting, refit), each with its source.

"From memory" means remembered from the published source, not copied from it.
"""

# Decaying hot Jupiter: dP/dt = -29 +- 2 ms/yr, with P = 1.0914 d and dP/dN = -1.0e-9 d per
# orbit (Yee et al. 2020, ApJL 888, L5; from memory). An order-of-magnitude anchor for the units
# and the sign of the decay rate, not a precision value.
DECAY_RATE_MS_YR = -29.0
DECAY_RATE_ERR_MS_YR = 2.0
DECAY_PERIOD_D = 1.0914
DECAY_DP_DN_D = -1.0e-9

# BIC = chi^2 + k ln N for Gaussian errors (Schwarz 1978, Annals of Statistics 6, 461; from
# memory), and a BIC difference above 6 is "strong" evidence (Kass & Raftery 1995, JASA 90, 773,
# section 3.2, scale of 2 ln B; from memory).
BIC_STRONG = 6.0

# A weighted least-squares fit with weights 1/sigma^2 equals numpy.polyfit with w = 1/sigma and
# cov="unscaled" (numpy documentation of polyfit) and scipy.optimize.curve_fit with sigma and
# absolute_sigma=True (scipy documentation of curve_fit); the agreement demanded by the issue
# is 1e-10 d in the predicted mid-times.
AGREEMENT_D = 1e-10

# Share of seeded linear data sets for which the linear model must be chosen (issue 12 checks).
LINEAR_CHOSEN_AT_LEAST = 0.95

# The standard error of a sample standard deviation of N normal draws is sigma / sqrt(2 (N - 1))
# (common practice, no source).
