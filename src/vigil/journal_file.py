"""The journal's SQLite file: opening, schema version, migration, damage checks, one-line errors.

The file identifies itself with `PRAGMA application_id` (JOURNAL_APPLICATION_ID) and records its
schema version in `PRAGMA user_version`:
  1  the visit table (vigil 0.1); no application id
  2  as 1, with the application id set (so a foreign SQLite file is recognised)
On open:
- a missing file is created (empty journal, schema 2) only by a command that writes; a read
  never creates a file;
- a newer schema, another program's database or a visit table lacking columns is refused;
- an older schema is migrated by a command that writes, in one transaction, after a backup
  copy of the file (`NAME.schema1-backup`); reads take it as it is;
- `PRAGMA quick_check` runs on every open, so a damaged file is refused before anything is
  read from it or written to it.
Every SQLite error becomes one `InputError` line naming the file and what to do.
"""

from __future__ import annotations

import logging
import sqlite3
from contextlib import contextmanager
from pathlib import Path

from vigil.errors import InputError

log = logging.getLogger("vigil")

SCHEMA_VERSION = 2
JOURNAL_APPLICATION_ID = 0x7669676C  # the bytes of "vigl"
_MIGRATIONS = {1: ["PRAGMA application_id = %d" % JOURNAL_APPLICATION_ID]}  # from version: statements


def connect(path: Path, schema_sql: str, columns, write: bool) -> sqlite3.Connection:
    """An open, checked connection to the journal at `path` (module docstring); InputError otherwise.

    Parameters
    ----------
    path : Path
        The journal file.
    schema_sql : str
        CREATE TABLE statement of the visit table (for a new journal).
    columns : sequence of str
        The columns the visit table must have.
    write : bool
        Whether the command writes: only then is a missing file created and an older one migrated.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "j.db"
    >>> db = connect(path, "CREATE TABLE visit (target TEXT)", ["target"], write=True)
    >>> db.execute("PRAGMA user_version").fetchone()[0]
    2
    """
    created = not path.exists()
    if created and not write:
        raise InputError(f"{path}: no journal here (a read never creates one); check the name, or start one with "
                         "`vigil journal add` or `vigil journal import`")
    try:
        with sqlite_errors(path):
            db = _open(path, write)
    except InputError:
        _remove_if_new(path, created)
        raise
    try:
        with sqlite_errors(path):
            _check_integrity(db, path)
            _prepare(db, path, schema_sql, list(columns), write)
    except BaseException:
        db.close()
        _remove_if_new(path, created)
        raise
    return db


def _open(path: Path, write: bool) -> sqlite3.Connection:
    if not path.parent.is_dir():
        raise InputError(f"{path}: folder {path.parent} does not exist; create it first")
    target = path.resolve().as_uri() + ("" if write else "?mode=ro")
    return sqlite3.connect(target, uri=True, isolation_level=None)  # transactions are begun explicitly


def _remove_if_new(path: Path, created: bool) -> None:
    if created:
        remove_new(path)


def remove_new(path: Path) -> None:
    """Remove a journal (and SQLite's rollback file) that was created by a command that then failed.

    Examples
    --------
    >>> remove_new(Path("no-such-journal.db"))
    """
    for leftover in (path, path.with_name(path.name + "-journal")):
        leftover.unlink(missing_ok=True)


def _check_integrity(db: sqlite3.Connection, path: Path) -> None:
    problems = [row[0] for row in db.execute("PRAGMA quick_check(1)")]
    if problems != ["ok"]:
        raise InputError(_damaged(path, " ".join(" ".join(problems).split())))


def _prepare(db: sqlite3.Connection, path: Path, schema_sql: str, columns: list[str], write: bool) -> None:
    """Create, check and (when writing) migrate the schema."""
    version = db.execute("PRAGMA user_version").fetchone()[0]
    app_id = db.execute("PRAGMA application_id").fetchone()[0]
    tables = {row[0] for row in db.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
    if version == 0 and app_id == 0 and not tables:
        if write:
            with transaction(db):
                db.execute(schema_sql)
                db.execute(f"PRAGMA application_id = {JOURNAL_APPLICATION_ID}")
                db.execute(f"PRAGMA user_version = {SCHEMA_VERSION}")
        return
    if app_id not in (0, JOURNAL_APPLICATION_ID) or version == 0 or "visit" not in tables:
        raise InputError(f"{path}: not a vigil journal (an SQLite file of another program: application id {app_id}, "
                         f"schema version {version}, tables {', '.join(sorted(tables)) or 'none'}); check the file name")
    if version > SCHEMA_VERSION:
        raise InputError(f"{path}: journal of schema version {version}, newer than this vigil reads (up to "
                         f"{SCHEMA_VERSION}); use the newer vigil that wrote it (the file was not changed)")
    present = [row[1] for row in db.execute("PRAGMA table_info(visit)")]
    missing = [c for c in columns if c not in present]
    if missing:
        raise InputError(f"{path}: the journal's visit table lacks column(s) {', '.join(missing)}, so it is damaged "
                         f"or not vigil's (schema version {version}); restore your backup copy")
    if write:
        if version < SCHEMA_VERSION:
            _migrate(db, path, version)
        db.execute("BEGIN IMMEDIATE")  # a read-only file or folder is found here, before any work
        db.execute("ROLLBACK")


def _migrate(db: sqlite3.Connection, path: Path, version: int) -> None:
    """Back the file up, then bring it to SCHEMA_VERSION in one transaction."""
    backup = _backup_path(path, version)
    copy = sqlite3.connect(backup)
    try:
        db.backup(copy)
    finally:
        copy.close()
    with transaction(db):
        for old in range(version, SCHEMA_VERSION):
            for statement in _MIGRATIONS[old]:
                db.execute(statement)
        db.execute(f"PRAGMA user_version = {SCHEMA_VERSION}")
    log.info("%s: journal migrated from schema version %d to %d; the file as it was is kept as %s",
             path, version, SCHEMA_VERSION, backup)


def _backup_path(path: Path, version: int) -> Path:
    candidate = path.with_name(f"{path.name}.schema{version}-backup")
    number = 1
    while candidate.exists():
        number += 1
        candidate = path.with_name(f"{path.name}.schema{version}-backup{number}")
    return candidate


@contextmanager
def transaction(db: sqlite3.Connection):
    """One write transaction: committed at the end of the block, rolled back on any error."""
    db.execute("BEGIN IMMEDIATE")
    try:
        yield
    except BaseException:
        if db.in_transaction:
            db.execute("ROLLBACK")
        raise
    db.execute("COMMIT")


@contextmanager
def sqlite_errors(path: Path):
    """Turn any sqlite3.Error inside the block into one InputError line naming `path` and what to do."""
    try:
        yield
    except sqlite3.Error as exc:
        raise InputError(describe_error(path, exc)) from None


def describe_error(path: Path, exc: sqlite3.Error) -> str:
    """One line for an SQLite error on the journal `path`: what happened and what to do.

    Examples
    --------
    >>> describe_error(Path("j.db"), sqlite3.DatabaseError("database disk image is malformed"))[:34]
    'j.db: the journal file is damaged '
    """
    name = getattr(exc, "sqlite_errorname", "") or ""
    text = str(exc)
    if name.startswith("SQLITE_READONLY") or "readonly" in text:
        return (f"{path}: cannot write the journal: the file or its folder is read-only; copy it to a writable "
                "place to add to it (list and export only read); nothing was changed")
    if name.startswith("SQLITE_FULL") or "full" in text:
        return f"{path}: cannot write the journal: the disk is full; free some space and run again; nothing was changed"
    if name.startswith(("SQLITE_BUSY", "SQLITE_LOCKED")):
        return f"{path}: the journal is in use by another program ({text}); try again when it has finished"
    if name.startswith("SQLITE_NOTADB") or "not a database" in text:
        return f"{path}: not a vigil journal (not an SQLite database file); check the file name"
    if name.startswith(("SQLITE_CORRUPT", "SQLITE_IOERR")) or "malformed" in text:
        return _damaged(path, text)
    if name.startswith("SQLITE_CANTOPEN"):
        return f"{path}: cannot open the journal ({text}); check the file name and its folder's permissions"
    return f"{path}: journal error ({text}); nothing was changed; if it persists, restore your backup copy"


def _damaged(path: Path, detail: str) -> str:
    return (f"{path}: the journal file is damaged ({detail}); nothing was read or changed: restore your backup copy, "
            f"or salvage what can be read with `sqlite3 {path} .recover`")
