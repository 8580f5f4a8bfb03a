"""Keep astropy offline: bundled Earth-orientation data only, predictions beyond it accepted.

vigil plans observations years and decades ahead, far beyond the Earth-orientation
predictions bundled with astropy (about one year). Beyond that range astropy holds UT1-UTC at
its last tabulated value (it does not extrapolate it) and takes polar motion from its 50-year
mean; the unforeseeable drift of UT1 (under a second a year) moves rising, setting and
twilight by about as much. We accept that, say so in one note (`timescales.
beyond_earth_orientation_note`), and never let astropy reach for the network.
"""

import logging
import warnings

from astropy.utils import iers
from astropy.utils.data import conf as data_conf

log = logging.getLogger("vigil")


def configure_offline() -> None:
    """Configure astropy so that it never downloads and tolerates far-future dates."""
    data_conf.allow_internet = False
    iers.conf.auto_download = False
    iers.conf.auto_max_age = None
    iers.conf.iers_degraded_accuracy = "warn"
    # The bundled leap-second table carries an expiry date; past it astropy would try to
    # refresh. Leap seconds announced after the bundle are unknowable offline anyway.
    warnings.filterwarnings("ignore", message=".*leap-second.*", module="astropy")
    warnings.filterwarnings("ignore", category=iers.IERSStaleWarning)
    warnings.filterwarnings("ignore", message=".*Tried to get polar motions.*")
    warnings.filterwarnings("ignore", category=iers.IERSDegradedAccuracyWarning)
    warnings.filterwarnings("ignore", message=".*dubious year.*")
    # Past 2100 (or before 1900) the Earth's position series is used outside the years it was
    # fitted to; vigil says so once in its own words (timescales.outside_earth_series_notes).
    warnings.filterwarnings("ignore", message=r'.*"epv00".*outside\s*the range 1900-2100')
