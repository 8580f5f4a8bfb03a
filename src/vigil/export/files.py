"""Atomic file output: write beside the target, then rename over it in one step."""

from __future__ import annotations

import os
import tempfile
from contextlib import contextmanager
from pathlib import Path
from typing import BinaryIO, Iterator


def write_atomic(path: str | Path, data: bytes) -> Path:
    """Write `data` to `path` so a reader sees the old file or the new one, never a torn one."""
    with atomic_stream(path) as stream:
        stream.write(data)
    return Path(path)


@contextmanager
def atomic_stream(path: str | Path) -> Iterator[BinaryIO]:
    """A binary stream whose contents replace `path` in one step when the `with` block ends
    without an error (written beside it, then renamed); after an error `path` is untouched.

    Examples
    --------
    >>> with atomic_stream("out.csv") as stream:  # doctest: +SKIP
    ...     stream.write("a,b".encode())
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(handle, "wb") as stream:
            # mkstemp makes the file private (0600); give it the mode a plain open() would.
            os.fchmod(stream.fileno(), 0o666 & ~_umask())
            yield stream
            stream.flush()
            os.fsync(stream.fileno())
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask
