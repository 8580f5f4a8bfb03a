"""Reference values for the tests of a stellar spectrum supplied by the observer, with sources.

"From memory" means remembered from the published source, not copied from it.
"""

# Flux density per unit frequency and per unit wavelength describe one spectrum:
# f_nu = f_lambda * lambda^2 / c (common practice, no source; e.g. any radiative-transfer text).
# A photon of wavelength lambda carries h c / lambda, so photons per unit wavelength are
# f_lambda * lambda / (h c) (common practice, no source).
# The constants below are exact SI values (2019 SI redefinition; from memory).
SPEED_OF_LIGHT_M_S = 299_792_458.0
PLANCK_J_S = 6.626_070_15e-34

# The AB system: a source flat in f_nu at 3631 Jy has AB magnitude 0 in every band
# (Oke & Gunn 1983, ApJ 266, 713; from memory).
AB_ZERO_JY = 3631.0

# The same spectrum written in another unit is read back to the same flux; the tolerance
# covers only decimal round-trips through the file's text (relative).
UNIT_FORMS_TOLERANCE = 1e-9

# A spectrum file written from the built-in stellar model, sampled at R ~ 30,000 and averaged
# over the model grid's cells (R ~ 700), gives the model's photons per bin and its forecast to
# this relative tolerance (the model's colour correction has kinks in ln lambda that a cell
# average rounds off by < 1e-4; stated here, no source).
SAME_MODEL_TOLERANCE = 1e-3
