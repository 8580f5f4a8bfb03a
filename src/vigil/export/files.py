"""Atomic file output: write beside the target, then rename over it in one step."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def write_atomic(path: str | Path, data: bytes) -> Path:
    """Write `data` to `path` so a reader sees the old file or the new one, never a torn one."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(handle, "wb") as stream:
            # mkstemp makes the file private (0600); give it the mode a plain open() would.
            os.fchmod(stream.fileno(), 0o666 & ~_umask())
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
    return path


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask
