"""The run store: one SQLite file per output folder (``run.sqlite``).

It keeps the spec text and its sha256, the identity of the job (``job_key``: the spec
hash plus what else decides the numbers, such as the study ladder), every finished
block's partial sums, and one provenance row per session (start, versions, workers).
Each block is written in its own transaction as soon as it finishes, so a run killed at
any moment (even with SIGKILL) leaves only whole blocks behind; a resumed run reads them
back bit for bit (floats are stored as JSON, whose ``repr`` round-trips exactly) and
computes only the missing ones.

A folder that holds the store of another job is refused with :class:`StoreMismatch`
(a :class:`~holonomy.experiment.SpecError` on the key ``--out``), never overwritten.

References
----------
.. [1] SQLite documentation, "Atomic Commit In SQLite" and "Write-Ahead Logging",
   https://www.sqlite.org/atomiccommit.html, https://www.sqlite.org/wal.html
"""

from __future__ import annotations

import contextlib
import json
import platform
import sqlite3
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

import numpy
import scipy

from holonomy import __version__

from ._faults import fault_point
from ._spec import SpecError

__all__ = ["RunStore", "StoreMismatch", "StoreUnusable", "STORE_NAME", "versions",
           "discard_store"]

STORE_NAME = "run.sqlite"
_FORMAT = "1"

_SCHEMA = """
CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE sessions (
    id INTEGER PRIMARY KEY AUTOINCREMENT, started TEXT NOT NULL, workers TEXT NOT NULL,
    versions TEXT NOT NULL, resumed INTEGER NOT NULL);
CREATE TABLE blocks (
    block INTEGER PRIMARY KEY, count INTEGER NOT NULL, data TEXT NOT NULL,
    seconds REAL NOT NULL, session INTEGER NOT NULL, finished TEXT NOT NULL);
"""
_BLOCK_COLUMNS = ["block", "count", "data", "seconds", "session", "finished"]


class StoreMismatch(SpecError):
    """The output folder holds the run store of another spec or job."""


class StoreUnusable(SpecError):
    """The run store cannot be trusted: not a store, corrupt, no identity, another format.

    It is refused (never adopted or repaired); the message names the file and the remedy.
    """


def versions() -> dict[str, str]:
    """Versions of whitegauge, numpy, scipy and Python (for provenance)."""
    return {"whitegauge": __version__, "numpy": numpy.__version__,
            "scipy": scipy.__version__, "python": platform.python_version()}


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="milliseconds")


_REMEDY = ("; pass --fresh to discard it and start over, or choose another --out")


def unusable(path: Path, why: str) -> StoreUnusable:
    """The refusal of the store at ``path`` because ``why`` (key ``--out``)."""
    return StoreUnusable("--out", f"run store {str(path)!r} {why}{_REMEDY}")


def discard_store(path: str | Path) -> None:
    """Delete the store file at ``path`` and its SQLite side files (``--fresh``)."""
    path = Path(path)
    for p in (path, *(path.with_name(path.name + s) for s in ("-wal", "-shm", "-journal"))):
        p.unlink(missing_ok=True)


class RunStore:
    """A transactional store of finished blocks for one job.

    Parameters
    ----------
    path : path of the SQLite file (created with its folder if missing).
    spec_text, spec_sha256 : the spec that defines the run.
    job_key : a string that, with the spec hash, decides the numbers (``"run"`` for a
        plain run, the ladder for a study). A store made for another
        ``(spec_sha256, job_key)`` raises :class:`StoreMismatch`.
    resume : keep the finished blocks of an earlier session (else they are cleared and
        the run starts over, in the same transaction that records the new session).
    fresh : delete an existing store file first, whatever it holds.
    name : the spec's name, recorded for messages.

    Raises
    ------
    StoreMismatch
        The store belongs to another spec or job.
    StoreUnusable
        The path is not a whitegauge store of this format with an identity (a directory,
        a corrupt or truncated file, another schema, format or program), or SQLite
        reports an error reading it. An existing store is checked before any block in it
        is used; it is never adopted or repaired.
    """

    def __init__(self, path: str | Path, *, spec_text: str, spec_sha256: str,
                 job_key: str = "run", resume: bool = False, workers: Any = 1,
                 fresh: bool = False, name: str | None = None):
        self.path = Path(path)
        self.path.parent.mkdir(parents=True, exist_ok=True)
        if fresh:
            discard_store(self.path)
        if self.path.is_dir() or (self.path.exists() and not self.path.is_file()):
            raise unusable(self.path, "is not a file")
        identity = f"{spec_sha256}:{job_key}"
        try:
            self._conn = sqlite3.connect(str(self.path), timeout=60.0,
                                         isolation_level=None)
        except sqlite3.Error as exc:
            raise unusable(self.path, f"cannot be opened ({exc})") from None
        try:
            with self.guard():
                tables = self._tables()  # reads the header: garbage fails here
                if tables:
                    self._check(tables, identity)
                self._conn.execute("PRAGMA journal_mode=WAL")
                self._conn.execute("PRAGMA synchronous=NORMAL")
                if not tables:
                    with self._transaction():
                        # schema and identity in one transaction: a store on disk
                        # always has its identity
                        for stmt in _SCHEMA.split(";"):
                            if stmt.strip():
                                self._conn.execute(stmt)
                        self._conn.executemany(
                            "INSERT INTO meta(key, value) VALUES (?, ?)",
                            [("identity", identity), ("spec_sha256", spec_sha256),
                             ("spec_text", spec_text), ("job_key", job_key),
                             ("format", _FORMAT), ("created", _now())])
        except BaseException:
            self._conn.close()
            raise
        self.resume, self.session = resume, None
        self._session_info = (workers, name)

    def start(self) -> None:
        """Open this session (once; :meth:`put` does it too): without ``resume`` the old
        blocks are cleared, in the same transaction that records the session. The
        runner calls it after checking the stored rows, so a refused store is left
        exactly as it was."""
        if self.session is not None:
            return
        workers, name = self._session_info
        with self.guard(), self._transaction():
            n_old = self._conn.execute("SELECT COUNT(*) FROM blocks").fetchone()[0]
            if not self.resume:
                self._conn.execute("DELETE FROM blocks")
            if name is not None:
                self._conn.execute("INSERT OR REPLACE INTO meta(key, value) VALUES "
                                   "('name', ?)", (name,))
            cur = self._conn.execute(
                "INSERT INTO sessions(started, workers, versions, resumed) "
                "VALUES (?, ?, ?, ?)",
                (_now(), json.dumps(workers), json.dumps(versions()),
                 int(bool(self.resume and n_old))))
            self.session = cur.lastrowid

    @contextlib.contextmanager
    def guard(self):
        """Report any SQLite error inside as :class:`StoreUnusable` naming the file."""
        try:
            yield
        except sqlite3.DatabaseError as exc:
            raise unusable(self.path, f"cannot be read or written ({exc})") from None

    def _tables(self) -> set[str]:
        return {r[0] for r in self._conn.execute(
            "SELECT name FROM sqlite_master WHERE type='table'")}

    def _check(self, tables: set[str], identity: str) -> None:
        """Refuse a store that is not exactly a store of this format and job."""
        if not {"meta", "blocks", "sessions"} <= tables:
            raise unusable(self.path, "is not a whitegauge run store (its tables are "
                           f"{', '.join(sorted(tables))})")
        if self._conn.execute("PRAGMA quick_check").fetchone()[0] != "ok":
            raise unusable(self.path, "is corrupt (SQLite quick_check failed)")
        meta = dict(self._conn.execute("SELECT key, value FROM meta"))
        fmt = meta.get("format")
        if fmt != _FORMAT:
            raise unusable(self.path, f"has store format {fmt!r}; this version of "
                           f"whitegauge reads format {_FORMAT!r} only")
        cols = [r[1] for r in self._conn.execute("PRAGMA table_info(blocks)")]
        if cols != _BLOCK_COLUMNS:
            raise unusable(self.path, f"has block columns {cols}; format {_FORMAT!r} has "
                           f"{_BLOCK_COLUMNS}")
        row = meta.get("identity")
        if row is None:
            raise unusable(self.path, "has no identity record (spec hash and job); its "
                           "blocks cannot be matched to a spec")
        if row != identity:
            raise StoreMismatch(
                "--out", f"{str(self.path.parent)!r} holds the run store of another spec "
                f"or job ({meta.get('name', 'unknown')!r}, {row[:12]}...); expected a new "
                "folder or one made by this spec (or pass --fresh to discard it)")

    def _transaction(self):
        conn = self._conn

        class _Tx:
            def __enter__(self):
                conn.execute("BEGIN IMMEDIATE")

            def __exit__(self, exc_type, exc, tb):
                conn.execute("COMMIT" if exc_type is None else "ROLLBACK")
                return False

        return _Tx()

    def set_meta(self, key: str, value: str) -> None:
        with self.guard(), self._transaction():
            self._conn.execute("INSERT OR REPLACE INTO meta(key, value) VALUES (?, ?)",
                               (key, value))

    def meta(self, key: str) -> str | None:
        with self.guard():
            row = self._conn.execute("SELECT value FROM meta WHERE key=?",
                                     (key,)).fetchone()
        return None if row is None else row[0]

    def finished(self) -> set[int]:
        """Indices of the blocks this session may use (none before :meth:`start`
        without ``resume``)."""
        return {r[0] for r in self.blocks()}

    def put(self, block: int, count: int, data: str, seconds: float) -> None:
        """Store one finished block in its own transaction."""
        self.start()
        with self.guard(), self._transaction():
            self._conn.execute(
                "INSERT OR REPLACE INTO blocks(block, count, data, seconds, session, "
                "finished) VALUES (?, ?, ?, ?, ?, ?)",
                (int(block), int(count), data, float(seconds), self.session, _now()))
            fault_point("block-commit")  # test hook: a kill here is inside the transaction

    def blocks(self) -> list[tuple[int, int, str]]:
        """All stored blocks as ``(index, count, data)`` in block order (unchecked: the
        runner validates each row against its job, see :func:`check_row`)."""
        if self.session is None and not self.resume:
            return []  # they are cleared when the session starts
        with self.guard():
            return list(self._conn.execute(
                "SELECT block, count, data FROM blocks ORDER BY block"))

    def check_row(self, row: tuple, n_blocks: int, decode, count) -> tuple[int, Any]:
        """``(index, decoded block)`` of a stored row, or :class:`StoreUnusable`.

        A row is used only if its index is a block of the job, its data decodes and its
        sample count is the one recorded beside it.
        """
        b, n, text = row
        try:
            if type(b) is not int or not 0 <= b < n_blocks:
                raise ValueError(f"index {b!r} is not a block of this job (0..{n_blocks - 1})")
            if not isinstance(text, str):
                raise ValueError(f"data of type {type(text).__name__}, expected JSON text")
            value = decode(text)
            if type(n) is not int or count(value) != n:
                raise ValueError(f"count {n!r} does not match its data")
        except Exception as exc:  # noqa: BLE001  (any defect: the store is refused)
            msg = " ".join(str(exc).split())[:200]
            raise unusable(self.path, f"has an unreadable block row {b!r} "
                           f"({type(exc).__name__}: {msg})") from None
        return b, value

    def block_sessions(self) -> dict[int, int]:
        with self.guard():
            return dict(self._conn.execute("SELECT block, session FROM blocks"))

    def sessions(self) -> list[dict]:
        rows = self._conn.execute(
            "SELECT id, started, workers, versions, resumed FROM sessions ORDER BY id")
        return [{"id": r[0], "started": r[1], "workers": json.loads(r[2]),
                 "versions": json.loads(r[3]), "resumed": bool(r[4])} for r in rows]

    def close(self) -> None:
        self._conn.close()

    def __enter__(self) -> "RunStore":
        return self

    def __exit__(self, *exc) -> None:
        self.close()
