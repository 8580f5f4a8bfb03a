"""vigil: plan transit observations from ephemeris to stacked-spectrum forecast."""

from vigil.offline import configure_offline

configure_offline()

__version__ = "0.1.0"
