"""What every vigil command shares: consoles, notes on stderr, one-line errors, overwrite policy."""

from __future__ import annotations

import logging
from contextlib import contextmanager

import typer
from rich.console import Console

from vigil.errors import InputError

err = Console(stderr=True)
out = Console()
log = logging.getLogger("vigil")


class _Notes(logging.Handler):
    def emit(self, record):
        level = "warning" if record.levelno >= logging.WARNING else "note"
        err.print(f"vigil: {level}: {record.getMessage()}", highlight=False, soft_wrap=True, markup=False)


def setup_logging() -> None:
    if not any(isinstance(h, _Notes) for h in log.handlers):
        log.addHandler(_Notes())
    log.setLevel(logging.INFO)
    log.propagate = False


@contextmanager
def user_errors():
    """Turn InputError into one line on stderr and exit status 2."""
    try:
        yield
    except InputError as exc:
        err.print(f"vigil: error: {exc}", highlight=False, soft_wrap=True, markup=False)
        raise typer.Exit(2) from None


def refuse_overwrite(paths, force: bool) -> None:
    for path in paths:
        if path is not None and path.exists() and not force:
            raise InputError(f"{path} exists; pass --force to replace it")
