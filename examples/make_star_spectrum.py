"""Write examples/star_spectrum.ecsv: an invented spectrum of a cool dwarf for `star_spectrum_file`.

It is vigil's own built-in model of a 3300 K dwarf (stars.surface_flux_w_m2_um) with one
invented change: an absorption band taking up to 50 % of the light, Gaussian in wavelength,
centred at 0.58 um with a 1-sigma width of 0.03 um. No observed or published spectrum is used.
Sampled at R = 500 from 0.4 to 2.5 um (covers V, J, H, Ks and the demo instrument's 0.55-0.90 um),
F_lambda in erg s^-1 cm^-2 A^-1 at the stellar surface: vigil scales it to the target's
magnitude, so only its shape matters.

Run from the repository's root: ``python examples/make_star_spectrum.py``.
"""

from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.table import Table

from vigil import stars

TEFF_K = 3300.0
BAND_CENTRE_UM, BAND_WIDTH_UM, BAND_DEPTH = 0.58, 0.03, 0.5
RESOLUTION = 500
RANGE_UM = (0.4, 2.5)
OUT = Path(__file__).with_name("star_spectrum.ecsv")


def example_table() -> Table:
    """The invented spectrum as an astropy table (wavelength in um, flux in erg s^-1 cm^-2 A^-1)."""
    count = int(np.log(RANGE_UM[1] / RANGE_UM[0]) * RESOLUTION) + 1
    wavelength_um = np.geomspace(*RANGE_UM, count)
    model = np.exp(np.interp(np.log(wavelength_um), np.log(stars.GRID_UM), np.log(stars.surface_flux_w_m2_um(TEFF_K))))
    band = 1.0 - BAND_DEPTH * np.exp(-0.5 * ((wavelength_um - BAND_CENTRE_UM) / BAND_WIDTH_UM) ** 2)
    flux = (model * band * u.W / (u.m**2 * u.um)).to(u.erg / (u.s * u.cm**2 * u.AA))
    table = Table({"wavelength": [float(f"{w:.6g}") for w in wavelength_um],
                   "flux": [float(f"{f:.6g}") for f in flux.value]})
    table["wavelength"].unit, table["flux"].unit = u.um, flux.unit
    table.meta["comments"] = ["Invented example for vigil (examples/make_star_spectrum.py): the built-in model of a",
                              "3300 K dwarf with an invented absorption band at 0.58 um. Not an observed star."]
    return table


if __name__ == "__main__":
    example_table().write(OUT, format="ascii.ecsv", overwrite=True)
    print(f"wrote {OUT}")
