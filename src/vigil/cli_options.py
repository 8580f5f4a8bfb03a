"""Command-line options shared by `vigil windows` and `vigil chart` (declared once, so the two
commands cannot drift apart in name, unit or help)."""

from __future__ import annotations

import functools
import inspect
from dataclasses import dataclass
from typing import Optional, get_type_hints

import typer

MIN_ALTITUDE_OPTION = typer.Option(None, "--min-altitude", metavar="DEG",
                                   help="Lowest target altitude, degrees [default 30].")
TWILIGHT_OPTION = typer.Option(None, "--twilight", metavar="KIND", help="Darkness needed: civil, nautical or "
                               "astronomical (Sun's centre below -6, -12 or -18 degrees) [default astronomical].")
BASELINE_OPTION = typer.Option(None, "--baseline", metavar="HOURS",
                               help="Out-of-transit time wanted before ingress and after egress, hours [default 1].")
SIGMA_OPTION = typer.Option(None, "--sigma", metavar="K",
                            help="Pad each side by K times the 1-sigma mid-time uncertainty; 0 disables [default 1].")
MOON_SEP_OPTION = typer.Option(None, "--moon-sep", metavar="DEG", help="Least Moon-target separation while the Moon "
                               "is above the horizon, degrees; 0 disables [default 0].")
COVERAGE_OPTION = typer.Option(None, "--coverage", metavar="LIST", help="List only these coverage classes, "
                               "comma-separated (full, ingress, egress, partial, none), in every output [default all].")
MIN_FRACTION_OPTION = typer.Option(None, "--min-fraction", metavar="F", help="List only windows with at least this "
                                   "fraction (0-1) of the transit observable, in every output.")
SITES_OPTION = typer.Option(..., "--sites", metavar="SITES.toml", help="Sites TOML with [sites.NAME] tables.")
SITE_OPTION = typer.Option(None, "--site", metavar="NAME",
                           help="Site name to use (repeatable); default every site in the file.")
FORCE_OPTION = typer.Option(False, "--force", help="Replace existing output files (otherwise vigil refuses).")


def constraint_options(min_altitude=None, twilight=None, baseline=None, sigma=None, moon_sep=None) -> dict:
    """The constraint options as the keywords of `vigil.plan_windows` (None: not given).

    Example: ``constraint_options(sigma=2.0)["sigma"] == 2.0``.
    """
    return {"min_altitude": min_altitude, "twilight": twilight, "baseline": baseline, "sigma": sigma,
            "moon_sep": moon_sep}


@dataclass(frozen=True)
class WindowOptions:
    """The constraint and listing options of a command that plans windows, as typed (None: not given)."""

    min_altitude: Optional[float] = None
    twilight: Optional[str] = None
    baseline: Optional[float] = None
    sigma: Optional[float] = None
    moon_sep: Optional[float] = None
    coverage: Optional[str] = None
    min_fraction: Optional[float] = None

    @property
    def constraints(self) -> dict:
        """The constraint options as `constraint_options` gives them."""
        return constraint_options(self.min_altitude, self.twilight, self.baseline, self.sigma, self.moon_sep)


# The typer declarations of WindowOptions' fields, in the order the commands list them.
_WINDOW_OPTIONS = {"min_altitude": MIN_ALTITUDE_OPTION, "twilight": TWILIGHT_OPTION, "baseline": BASELINE_OPTION,
                   "sigma": SIGMA_OPTION, "moon_sep": MOON_SEP_OPTION, "coverage": COVERAGE_OPTION,
                   "min_fraction": MIN_FRACTION_OPTION}


def with_window_options(command):
    """Declare the options of WindowOptions in place of the command's `window_options` parameter
    and call the command with them gathered into one WindowOptions.

    Example: ``@app.command() @with_window_options def draw(out: Path, window_options: WindowOptions): ...``
    takes ``--min-altitude ... --min-fraction`` between ``out`` and the parameters after it.
    """
    signature = inspect.signature(command, eval_str=True)
    hints = get_type_hints(WindowOptions)
    parameters = []
    for parameter in signature.parameters.values():
        if parameter.name != "window_options":
            parameters.append(parameter)
            continue
        parameters += [inspect.Parameter(name, parameter.kind, default=option, annotation=hints[name])
                       for name, option in _WINDOW_OPTIONS.items()]

    @functools.wraps(command)
    def gathered(**values):
        options = WindowOptions(**{name: values.pop(name) for name in _WINDOW_OPTIONS})
        return command(**values, window_options=options)

    gathered.__signature__ = signature.replace(parameters=parameters)
    gathered.__annotations__ = {p.name: p.annotation for p in parameters}
    return gathered
