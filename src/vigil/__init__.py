"""vigil: plan transit observations from ephemeris to stacked-spectrum forecast.

The Python interface (the same functions the command line calls) is listed in `__all__`;
each is loaded on first use, so `import vigil` stays light.

Examples
--------
>>> import vigil
>>> windows = vigil.plan_windows("targets.csv", "sites.toml", "2027-01-01", "2027-02-01",
...                              min_altitude=35)  # doctest: +SKIP
"""

from vigil.offline import configure_offline

configure_offline()

__version__ = "0.1.0"

# public name -> module that defines it
_EXPORTS = {
    "InputError": "vigil.errors",
    "read_targets": "vigil.api", "read_timings": "vigil.api", "read_sites": "vigil.api",
    "project_transits": "vigil.api", "plan_windows": "vigil.api", "iter_windows": "vigil.api",
    "write_windows_csv": "vigil.api", "write_windows_ics": "vigil.api",
    "read_campaign": "vigil.api", "run_campaign": "vigil.api", "CampaignSpec": "vigil.campaign.spec",
    "CampaignOutcome": "vigil.campaign.outcome", "refit": "vigil.api", "open_journal": "vigil.journal",
    "make_site": "vigil.site_inputs", "Site": "vigil.sites",
    "to_qtable": "vigil.export.qtable",
}
__all__ = ["__version__", *_EXPORTS]


def __getattr__(name: str):
    if name not in _EXPORTS:
        raise AttributeError(f"module 'vigil' has no attribute {name!r}")
    import importlib

    value = getattr(importlib.import_module(_EXPORTS[name]), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))
