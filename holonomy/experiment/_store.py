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

__all__ = ["RunStore", "StoreMismatch", "STORE_NAME", "versions"]

STORE_NAME = "run.sqlite"
_FORMAT = "1"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS sessions (
    id INTEGER PRIMARY KEY AUTOINCREMENT, started TEXT NOT NULL, workers TEXT NOT NULL,
    versions TEXT NOT NULL, resumed INTEGER NOT NULL);
CREATE TABLE IF NOT EXISTS blocks (
    block INTEGER PRIMARY KEY, count INTEGER NOT NULL, data TEXT NOT NULL,
    seconds REAL NOT NULL, session INTEGER NOT NULL, finished TEXT NOT NULL);
"""


class StoreMismatch(SpecError):
    """The output folder holds the run store of another spec or job."""


def versions() -> dict[str, str]:
    """Versions of whitegauge, numpy, scipy and Python (for provenance)."""
    return {"whitegauge": __version__, "numpy": numpy.__version__,
            "scipy": scipy.__version__, "python": platform.python_version()}


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="milliseconds")


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
    """

    def __init__(self, path: str | Path, *, spec_text: str, spec_sha256: str,
                 job_key: str = "run", resume: bool = False, workers: Any = 1):
        self.path = Path(path)
        self.path.parent.mkdir(parents=True, exist_ok=True)
        identity = f"{spec_sha256}:{job_key}"
        self._conn = sqlite3.connect(str(self.path), timeout=60.0, isolation_level=None)
        try:
            self._conn.execute("PRAGMA journal_mode=WAL")
            self._conn.execute("PRAGMA synchronous=NORMAL")
            self._conn.executescript(_SCHEMA)
            with self._transaction():
                row = self._conn.execute(
                    "SELECT value FROM meta WHERE key='identity'").fetchone()
                if row is not None and row[0] != identity:
                    other = self._conn.execute(
                        "SELECT value FROM meta WHERE key='name'").fetchone()
                    raise StoreMismatch(
                        "--out", f"{self.path.parent} holds the run store of another "
                        f"spec or job ({other[0] if other else 'unknown'}, "
                        f"{row[0][:12]}...); expected a new folder or one made by this "
                        "spec")
                if row is None:
                    self._conn.executemany(
                        "INSERT OR REPLACE INTO meta(key, value) VALUES (?, ?)",
                        [("identity", identity), ("spec_sha256", spec_sha256),
                         ("spec_text", spec_text), ("job_key", job_key),
                         ("format", _FORMAT), ("created", _now())])
                n_old = self._conn.execute("SELECT COUNT(*) FROM blocks").fetchone()[0]
                if not resume:
                    self._conn.execute("DELETE FROM blocks")
                cur = self._conn.execute(
                    "INSERT INTO sessions(started, workers, versions, resumed) "
                    "VALUES (?, ?, ?, ?)",
                    (_now(), json.dumps(workers), json.dumps(versions()),
                     int(bool(resume and n_old))))
                self.session = cur.lastrowid
        except BaseException:
            self._conn.close()
            raise

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
        with self._transaction():
            self._conn.execute("INSERT OR REPLACE INTO meta(key, value) VALUES (?, ?)",
                               (key, value))

    def meta(self, key: str) -> str | None:
        row = self._conn.execute("SELECT value FROM meta WHERE key=?", (key,)).fetchone()
        return None if row is None else row[0]

    def finished(self) -> set[int]:
        """Indices of the blocks already stored."""
        return {r[0] for r in self._conn.execute("SELECT block FROM blocks")}

    def put(self, block: int, count: int, data: str, seconds: float) -> None:
        """Store one finished block in its own transaction."""
        with self._transaction():
            self._conn.execute(
                "INSERT OR REPLACE INTO blocks(block, count, data, seconds, session, "
                "finished) VALUES (?, ?, ?, ?, ?, ?)",
                (int(block), int(count), data, float(seconds), self.session, _now()))
            fault_point("block-commit")  # test hook: a kill here is inside the transaction

    def blocks(self) -> list[tuple[int, str]]:
        """All stored blocks as ``(index, data)`` in block order."""
        return list(self._conn.execute("SELECT block, data FROM blocks ORDER BY block"))

    def block_sessions(self) -> dict[int, int]:
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
