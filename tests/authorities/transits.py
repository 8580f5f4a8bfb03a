"""Reference values for transit ephemerides and geometry, each with its source.

"From memory" means remembered from the published source, not copied from it.
"""

# Linear ephemeris T(n) = T0 + n P with sigma_T(n)^2 = sigma_T0^2 + n^2 sigma_P^2 + 2 n cov(T0, P)
# (standard error propagation). The formula, as a function the tests evaluate independently:


def propagated_sigma_d(n, t0_err_d, period_err_d, cov_d2=0.0):
    """sigma_T(n) in days from the standard propagation of a linear ephemeris's errors."""
    return (t0_err_d**2 + n**2 * period_err_d**2 + 2 * n * cov_d2) ** 0.5


# The Earth crossing the Sun (Winn 2010, "Transits and Occultations", in Exoplanets, eq. 14:
# T14 = (P/pi) asin[(R*/a) sqrt((1+k)^2 - b^2) / sin i]): P = 365.256 d, a/R* = 215.03,
# k = R_earth/R_sun = 0.00917; a central crossing lasts about 13.1 h.
EARTH_PERIOD_D = 365.256
EARTH_A_OVER_RSUN = 215.03
EARTH_K = 0.00917
EARTH_CENTRAL_T14_H = 13.1
# An Earth-like planet around a Sun-like star transits once a year for roughly 10-13 h, the upper
# end a central crossing (fact of the trade, no source).
EARTH_LIKE_T14_RANGE_H = (10.0, 13.2)
# IAU 2015 Resolution B3 nominal values (from memory): GM_sun (m^3 s^-2), R_sun (m).
GM_SUN_M3_S2 = 1.3271244e20
R_SUN_M = 6.957e8
# The Earth's sidereal year, days (from memory).
SIDEREAL_YEAR_D = 365.256363
# CODATA 2018 Newtonian constant of gravitation, m^3 kg^-1 s^-2 (from memory).
G_SI = 6.6743e-11
