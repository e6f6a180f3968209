"""What went wrong with the store, in one sentence: a write the store as a whole cannot make (disk
full, I/O error, locked, read-only), a damaged file and what to do about it, and a store written by
a newer frostwatch (refused before anything is written to it).
"""

from __future__ import annotations

import sqlite3
from pathlib import Path

from frostwatch.errors import StoreError
from frostwatch.store.schema import SCHEMA_VERSION


def store_failure(exc: BaseException) -> str | None:
    """Why the store as a whole cannot write, in words for the health alert ("the disk is full
    ..."), or None when the error belongs to the row being written (a constraint, a value SQLite
    cannot take) and the rest of a batch may still be stored."""
    if isinstance(exc, StoreError):
        return str(exc)
    if isinstance(exc, OSError):
        return f"the file system refused a write ({exc.strerror or exc})"
    row_errors = (sqlite3.IntegrityError, sqlite3.DataError, sqlite3.InterfaceError, sqlite3.ProgrammingError)
    if not isinstance(exc, sqlite3.DatabaseError) or isinstance(exc, row_errors):
        return None  # a constraint or trigger, OverflowError, TypeError: the row's own fault
    text = str(exc).lower()
    if "full" in text:
        return "the disk is full (SQLite: database or disk is full); free space on it"
    if "disk i/o" in text or "i/o error" in text:
        return "the disk gives I/O errors (SQLite: disk I/O error); check the SD card or drive"
    if "locked" in text or "busy" in text:
        return "the store is locked by another process (SQLite: database is locked)"
    if "readonly" in text or "read-only" in text:
        return "the store is read-only (SQLite: attempt to write a readonly database); check its permissions"
    if "malformed" in text or "not a database" in text:
        return "the store file is damaged (SQLite: database disk image is malformed)"
    if "unable to open" in text:
        return "the store file cannot be opened"
    return None


def _iso_or_repr(t: object) -> str:
    try:
        return t.isoformat()  # type: ignore[attr-defined]
    except Exception:  # noqa: BLE001
        return repr(t)[:60]


def _newer_schema_message(path: Path, version: int) -> str:
    from frostwatch import __version__

    return (f"{path}: this store has schema version {version}, newer than frostwatch {__version__} "
            f"understands (schema version {SCHEMA_VERSION}), so it was written by a newer frostwatch: "
            "install that version again; the file was left as it is")


def _refuse_newer_schema(path: Path) -> None:
    """Raise StoreError if the store at `path` has a newer schema. Only reads: no pragma that could
    write (journal_mode), and closing this one connection removes the WAL files it opened."""
    conn = sqlite3.connect(str(path), timeout=10.0)
    try:
        version = conn.execute("PRAGMA user_version").fetchone()[0]
    finally:
        conn.close()
    if version > SCHEMA_VERSION:
        raise StoreError(_newer_schema_message(path, version))


def damaged_message(path: Path | str, exc: BaseException, opening: bool = False) -> str:
    """One sentence for a store file SQLite finds damaged: which file, and what to do."""
    return (f"{path}: {'cannot open the store: ' if opening else ''}the store file is damaged "
            f"(SQLite: {str(exc).splitlines()[0] if str(exc) else exc!r}); stop "
            f"frostwatch, keep a copy of the file, then restore it from a backup or recover what it holds with "
            f"`sqlite3 {path} .recover | sqlite3 {path}.recovered` and point [storage] path at the recovered file")


def is_damage(exc: BaseException) -> bool:
    """SQLite's words for a damaged file (a zeroed or corrupt page, or not a database at all)."""
    text = str(exc).lower()
    return isinstance(exc, sqlite3.DatabaseError) and ("malformed" in text or "not a database" in text)
