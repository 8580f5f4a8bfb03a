"""Reference relations for the photon-noise forecast, each with its source."""

# Transmission feature depth delta = 2 n_H H R_p / R_*^2 with n_H = 2 scale heights and
# H = k_B T / (mu m_u g) (common practice, no source). For an Earth-size planet at 255 K with
# mu = 28.97 around a Sun-size star, about 0.39 ppm (computed from the relation).
N_SCALE_HEIGHTS = 2.0
EARTH_AIR_MU = 28.97
EARTH_LIKE_TEQ_K = 255.0
EARTH_LIKE_FEATURE_DEPTH = 0.39e-6
# Photon-noise limit: at fixed resolution the SNR per bin grows as sqrt(time); at fixed SNR the
# resolution reached grows linearly with stacked in-transit time until a systematic floor stops
# it, so the SNR per bin never exceeds delta / floor (common practice, no source).
