"""What every vigil command shares: consoles, notes on stderr, one-line errors."""

from __future__ import annotations

import logging
import warnings
from contextlib import contextmanager

import typer
from rich.console import Console

from vigil.errors import ArgumentError, InputError
from vigil.notes import warning_text

# Names and every other user string are printed literally: no console markup, emoji codes or
# highlighting is read from text (a target "Tamsin-7 [b]" keeps its brackets); styles are Text objects.
err = Console(stderr=True, markup=False, emoji=False, highlight=False)
out = Console(markup=False, emoji=False, highlight=False)
log = logging.getLogger("vigil")


class _Notes(logging.Handler):
    def emit(self, record):
        level = "warning" if record.levelno >= logging.WARNING else "note"
        err.print(f"vigil: {level}: {record.getMessage()}", soft_wrap=True)


def setup_logging() -> None:
    """Notes and warnings on stderr as one `vigil: ...` line each; library warnings included."""
    if not any(isinstance(h, _Notes) for h in log.handlers):
        log.addHandler(_Notes())
    log.setLevel(logging.INFO)
    log.propagate = False
    warnings.showwarning = _library_warning


def _library_warning(message, category, filename, lineno, file=None, line=None) -> None:
    """A warning of a library (numpy, ERFA, matplotlib, astropy) as one vigil note, never its raw
    two-line form with a source path; vigil's own checks should make these rare."""
    log.info("%s", warning_text(message, category, filename))


@contextmanager
def user_errors(context: typer.Context | None = None):
    """Turn InputError into one line on stderr and exit status 2. Given the command's context, an
    error about an argument of the Python API that is also an option of the command names the
    option as typed (`--event: ...`, not `event: ...`)."""
    try:
        yield
    except ArgumentError as exc:
        flag = _option_flag(context, exc.argument)
        _error_line(exc.named(flag) if flag else str(exc))
    except InputError as exc:
        _error_line(str(exc))
    except OSError as exc:  # an output that cannot be written: a folder, a read-only place, a full disk
        _error_line(f"cannot write {exc.filename or 'an output file'}: {exc.strerror or exc}")


def _option_flag(context: typer.Context | None, argument: str) -> str | None:
    """The command's option (e.g. --min-altitude) for a Python argument name (min_altitude), by
    its parameter's name or its spelling (format is --format whatever the parameter is called)."""
    spelled = "--" + argument.replace("_", "-")
    for parameter in context.command.params if context else ():
        opts = parameter.opts or []
        if opts and opts[0].startswith("--") and (parameter.name == argument or opts[0] == spelled):
            return opts[0]
    return None


def _error_line(message: str):
    one_line = " ".join(message.splitlines())  # whatever a library put in its message
    err.print(f"vigil: error: {one_line}", soft_wrap=True)
    raise typer.Exit(2) from None


class LazyProgress:
    """A rich progress bar on stderr that appears only once work is under way (never before an
    input error), only on a terminal, and disappears when done. Use as a context manager; call `advance(done, total)`."""

    def __init__(self, label: str):
        from rich.progress import Progress

        self._progress = Progress(console=err, transient=True)
        self._label = label
        self._task = None

    def advance(self, done: int, total: int) -> None:
        if not err.is_terminal:  # in a pipe or a log a bar is noise (and leaves an empty line behind)
            return
        if self._task is None:
            self._progress.start()
            self._task = self._progress.add_task(self._label, total=total)
        self._progress.update(self._task, completed=done, total=total)

    def __enter__(self) -> "LazyProgress":
        return self

    def __exit__(self, *exc_info) -> None:
        if self._task is not None:  # a never-started bar would still print an empty line
            self._progress.stop()

