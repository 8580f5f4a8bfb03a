"""A run's output files as one transaction: all written, or none changed.

Every file a command writes is first written in full to a hidden temporary beside its
destination (same folder, so the final rename is atomic); only when every output of the run
is complete are the temporaries renamed over their destinations, back to back. On any failure
before that (bad input, full disk, read-only folder, an interrupt) the temporaries are removed
and the previous outputs are left exactly as they were.

Rules checked before any work is done (`OutputTransaction`):
- two outputs with the same path, or an output that is one of the run's inputs, are refused
  (even with --force);
- an existing output is replaced only with --force; a symbolic link counts as existing, and
  with --force the file it points to is replaced (atomically, in that file's folder) and the
  link is kept; a dangling link gets its target created;
- an output's folder must exist, except a folder the command itself creates for its outputs
  (created only when the run commits, removed again if it fails);
- a replaced file keeps its permission bits; a new one gets those of a plain open().

A process killed with SIGKILL cannot clean up: its temporaries stay hidden beside the outputs
(`.NAME.PID.vigil-tmp*`) and are removed by the next run that writes the same output.
"""

from __future__ import annotations

import contextvars
import errno
import os
import tempfile
from contextlib import contextmanager
from pathlib import Path
from typing import BinaryIO, Iterator

from vigil.errors import InputError

_TEMP_MARK = ".vigil-tmp"
_active: contextvars.ContextVar["OutputTransaction | None"] = contextvars.ContextVar("vigil_outputs", default=None)


class OutputTransaction:
    """The outputs of one run: checked up front, staged as temporaries, renamed together.

    Parameters
    ----------
    outputs : iterable of path or None
        Files the run may write (None entries are skipped).
    inputs : iterable of path or None
        Files the run reads; none of them may be an output.
    force : bool
        Replace existing outputs (through a symbolic link: its target).
    create_folder : path, optional
        A folder the run creates for its outputs when it does not exist (e.g. campaign --out).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> with OutputTransaction([folder / "a.csv", folder / "b.ics"]).committing():
    ...     _ = write_atomic(folder / "a.csv", b"x\\n")
    ...     _ = write_atomic(folder / "b.ics", b"y\\n")
    >>> sorted(p.name for p in folder.iterdir())
    ['a.csv', 'b.ics']
    """

    def __init__(self, outputs, inputs=(), force: bool = False, create_folder: str | Path | None = None):
        self.outputs = [Path(p) for p in outputs if p is not None]
        self._folder = Path(create_folder) if create_folder is not None else None
        self._staged: dict[Path, tuple[Path, Path]] = {}  # output -> (temporary, destination)
        self._created_folder = False
        _check_outputs(self.outputs, force, self._folder)
        self.check_inputs(inputs)

    def check_inputs(self, inputs) -> None:
        """Refuse an output that is one of `inputs` (paths or None), for inputs known only later."""
        for path in self.outputs:
            source = next((Path(p) for p in inputs if p is not None and _same_file(path, Path(p))), None)
            if source is not None:
                raise InputError(f"{path}: this output is also an input of the run ({source}); choose another "
                                 "output file (--force never replaces an input)")

    @contextmanager
    def committing(self):
        """Stage every `write_atomic` call inside the block; rename all at its end, or discard all."""
        token = _active.set(self)
        try:
            yield self
            self._commit()
        except BaseException:
            self._discard()
            raise
        finally:
            _active.reset(token)

    @contextmanager
    def stream(self, path: Path) -> Iterator[BinaryIO]:
        """A stream to a temporary for output `path` (one of this transaction's outputs)."""
        if path not in self.outputs:
            raise ValueError(f"{path} is not one of this run's declared outputs")
        self._make_folder()
        destination = _destination(path)
        with _temporary_stream(path, destination) as (stream, temporary):
            yield stream
        previous = self._staged.get(path)
        self._staged[path] = (temporary, destination)
        if previous is not None:
            previous[0].unlink(missing_ok=True)

    def _make_folder(self) -> None:
        if self._folder is not None and not self._folder.exists():
            try:
                self._folder.mkdir(parents=True)
            except OSError as exc:
                raise _write_error(self._folder, exc) from None
            self._created_folder = True

    def _commit(self) -> None:
        for path, (temporary, destination) in self._staged.items():
            try:
                os.replace(temporary, destination)
            except OSError as exc:
                raise _write_error(path, exc) from None
        self._staged.clear()

    def _discard(self) -> None:
        for temporary, _ in self._staged.values():
            temporary.unlink(missing_ok=True)
        self._staged.clear()
        if self._created_folder:
            try:
                self._folder.rmdir()  # only if still empty
            except OSError:
                pass


def write_atomic(path: str | Path, data: bytes) -> Path:
    """Write `data` to `path` as part of the running `OutputTransaction`, or alone, atomically.

    A reader sees the old file or the new one, never a torn one. Outside a transaction the
    write is a transaction of its own (the rules of the module docstring, with --force, and
    the folder created when missing, as a library caller expects).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> target = pathlib.Path(tempfile.mkdtemp()) / "out.txt"
    >>> write_atomic(target, b"hello\\n").read_bytes()
    b'hello\\n'
    """
    with atomic_stream(path) as stream:
        stream.write(data)
    return Path(path)


@contextmanager
def atomic_stream(path: str | Path) -> Iterator[BinaryIO]:
    """A binary stream for output `path`, staged in the running `OutputTransaction` (or alone,
    as `write_atomic`); the file appears only when the transaction commits.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> target = pathlib.Path(tempfile.mkdtemp()) / "out.csv"
    >>> with atomic_stream(target) as stream:
    ...     _ = stream.write(b"a,b\\n")
    >>> target.read_bytes()
    b'a,b\\n'
    """
    path = Path(path)
    transaction = _active.get()
    if transaction is None:
        with OutputTransaction([path], force=True, create_folder=path.parent).committing() as alone:
            with alone.stream(path) as stream:
                yield stream
    else:
        with transaction.stream(path) as stream:
            yield stream


def _same_file(a: Path, b: Path) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return os.path.realpath(a) == os.path.realpath(b)


def _check_outputs(outputs: list[Path], force: bool, created_folder: Path | None) -> None:
    """Refuse duplicate outputs, existing outputs without force, missing folders."""
    for i, path in enumerate(outputs):
        twin = next((other for other in outputs[:i] if _same_file(path, other)), None)
        if twin is not None:
            raise InputError(f"{path}: given for two outputs (also as {twin}); expected a different file for each")
        if path.is_dir():
            raise InputError(f"{path} is a folder; expected a file name for the output")
        folder = path.parent
        if created_folder is not None and _inside(folder, created_folder):
            folder = next((p for p in (created_folder, *created_folder.parents) if p.exists()), Path("."))
        if not folder.is_dir():
            what = "is a file, not a folder" if folder.exists() else "does not exist"
            raise InputError(f"{path}: folder {folder} {what}; create the folder first")
        if (path.exists() or path.is_symlink()) and not force:
            raise InputError(f"{path} exists; pass --force to replace it")


def _inside(folder: Path, parent: Path) -> bool:
    return folder == parent or parent in folder.parents


def _destination(path: Path) -> Path:
    """The file a write to `path` replaces: `path`, or the final target of a symbolic link."""
    return Path(os.path.realpath(path)) if path.is_symlink() else path


@contextmanager
def _temporary_stream(path: Path, destination: Path) -> Iterator[tuple[BinaryIO, Path]]:
    """(stream, temporary) for `destination` in its folder, synced at the end; errors name `path`."""
    _remove_abandoned(destination)
    try:
        handle, name = tempfile.mkstemp(prefix=f".{destination.name}.{os.getpid()}.", suffix=_TEMP_MARK,
                                        dir=destination.parent)
    except OSError as exc:
        raise _write_error(path, exc) from None
    temporary = Path(name)
    try:
        with os.fdopen(handle, "wb") as stream:
            # mkstemp makes the file private (0600); keep the replaced file's mode, or a plain open()'s.
            os.fchmod(stream.fileno(), _mode_for(destination))
            yield stream, temporary
            stream.flush()
            os.fsync(stream.fileno())
    except BaseException as exc:
        temporary.unlink(missing_ok=True)
        if isinstance(exc, OSError):
            raise _write_error(path, exc) from None
        raise


def _mode_for(destination: Path) -> int:
    try:
        return destination.stat().st_mode & 0o7777
    except OSError:
        return 0o666 & ~_umask()


def _remove_abandoned(destination: Path) -> None:
    """Remove temporaries for `destination` left by a process that no longer runs (killed)."""
    for leftover in destination.parent.glob(f".{destination.name}.*{_TEMP_MARK}"):
        pid = leftover.name[len(destination.name) + 2:].split(".", 1)[0]
        if pid.isdigit() and not _running(int(pid)):
            leftover.unlink(missing_ok=True)


def _running(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _write_error(path: Path, exc: OSError) -> InputError:
    """One line naming the user's output (never the temporary) and what happened."""
    reason = {errno.ENOSPC: "the disk is full", errno.EDQUOT: "the disk quota is exceeded",
              errno.EROFS: "the file system is read-only", errno.EACCES: "permission denied (read-only folder?)",
              errno.EPERM: "permission denied"}.get(exc.errno, exc.strerror or str(exc))
    return InputError(f"cannot write {path}: {reason}; no output of this run was written, earlier files are unchanged")


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask
