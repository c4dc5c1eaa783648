"""Output folders: default names derived from spec names, one owner per folder, a lock.

A spec's ``name`` is data, never a path: :func:`default_out` derives the default folder
``whitegauge-<name>`` from a sanitised copy of it (letters, digits, ``.``, ``_``, ``-``
and ``+``; every other run of characters becomes one ``-``), so it is always a single
folder inside the working folder; a name with nothing usable left is refused on the key
``name``.

:func:`claim_folder` makes a command the owner of its output folder for one job:

1. the folder is created and must be writable (else a :class:`SpecError` on ``--out``);
2. a lock (``.whitegauge.lock``, a POSIX record lock held for the whole command) keeps a
   second command out while the first runs: the second is refused with the pid of the
   first. The kernel drops the lock when the process ends, even by SIGKILL, and record
   locks are not inherited by forked worker processes;
3. the owner record (``.whitegauge-owner.json``: command, job identity, name) must name
   the same command and job; a folder owned by another command or spec, or holding
   whitegauge files without an owner record, is refused unless ``fresh``, which first
   discards the whitegauge files there (and nothing else).

References
----------
.. [1] POSIX.1-2017, ``fcntl`` (record locks: released when the process ends, not
   inherited by ``fork``), https://pubs.opengroup.org/onlinepubs/9699919799/
"""

from __future__ import annotations

import contextlib
import json
import os
import re
import shutil
import unicodedata
from pathlib import Path
from typing import Iterator

from ._spec import SpecError

__all__ = ["default_out", "claim_folder", "OWNER_NAME", "LOCK_NAME", "FOLDER_FILES"]

OWNER_NAME = ".whitegauge-owner.json"
LOCK_NAME = ".whitegauge.lock"
_OWNER_FORMAT = 1
#: whitegauge's own files in an output folder (by any command); only these are ever
#: discarded by ``fresh``, and finding one without an owner record refuses the folder
FOLDER_FILES = ("run.sqlite", "study.sqlite", "results.json", "results.csv", "study.json",
                "study.csv", "convergence.png", "report.md", "series.png",
                "survey-SU2.png", "survey-U3.png", "z-scores.png", "decompactify.json",
                "decompactify.png")
_FOLDER_DIRS = {"demo": ("runs", "specs")}  # folders a command owns entirely
_SQLITE_SIDE = ("-wal", "-shm", "-journal")
_NAME_BYTES = 120  # of the sanitised name: well inside the 255-byte limit of file names


def default_out(name: str, suffix: str = "") -> str:
    """``whitegauge-<name><suffix>``, with ``name`` sanitised into one folder name.

    Raises
    ------
    SpecError
        On the key ``name`` if no letter or digit is left after sanitising.
    """
    text = unicodedata.normalize("NFKC", name)
    safe = re.sub(r"[-.]*-[-.]*", "-", "".join(c if (c.isalnum() and c.isprintable()) or c in
                                         "._+-" else "-" for c in text)).strip("-.")
    while len(safe.encode("utf-8")) > _NAME_BYTES:
        safe = safe[:-1]
    if not any(c.isalnum() for c in safe):
        raise SpecError("name", f"got {name!r}, from which no output folder name can be "
                        "derived; expected a name with letters or digits, or pass --out")
    return f"whitegauge-{safe}{suffix}"


def _refuse(out: Path, why: str) -> SpecError:
    return SpecError("--out", f"{str(out)!r} {why}; choose another folder, or pass "
                     "--fresh to discard its whitegauge files and start over")


def _discard(out: Path, owner: dict | None) -> None:
    """Remove whitegauge's files from ``out`` (``fresh``); nothing else is touched."""
    names = [f + side for f in FOLDER_FILES for side in ("", *_SQLITE_SIDE)]
    for f in names:
        p = out / f
        if p.is_dir() and not p.is_symlink():
            shutil.rmtree(p)
        elif p.exists() or p.is_symlink():
            p.unlink()
    for d in _FOLDER_DIRS.get((owner or {}).get("command"), ()):
        if (out / d).is_dir():
            shutil.rmtree(out / d)
    (out / OWNER_NAME).unlink(missing_ok=True)


def _read_owner(out: Path) -> dict | None:
    p = out / OWNER_NAME
    if not p.exists():
        return None
    try:
        owner = json.loads(p.read_text(encoding="utf-8"))
        if not isinstance(owner, dict) or not all(isinstance(owner.get(k), str) for k in
                                                  ("command", "identity")):
            raise ValueError("fields missing")
    except (OSError, ValueError) as exc:
        raise _refuse(out, f"has an unreadable owner record {OWNER_NAME} ({exc})") from None
    return owner


def _lock(out: Path):
    """Take the folder's lock (non-blocking); returns the open file that holds it."""
    import fcntl

    fd = os.open(out / LOCK_NAME, os.O_RDWR | os.O_CREAT, 0o644)
    fh = os.fdopen(fd, "r+")
    try:
        fcntl.lockf(fh, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        other = fh.read().strip() or "unknown"
        fh.close()
        raise SpecError("--out", f"{str(out)!r} is in use by another whitegauge command "
                        f"(pid {other}); wait for it to finish or choose another "
                        "folder") from None
    fh.seek(0)
    fh.truncate()
    fh.write(str(os.getpid()))
    fh.flush()
    return fh


@contextlib.contextmanager
def claim_folder(out: str | Path, *, command: str, identity: str, name: str,
                 fresh: bool = False) -> Iterator[Path]:
    """Hold ``out`` for ``command`` and the job ``identity`` while the block runs.

    Raises
    ------
    SpecError
        On the key ``--out``: the folder cannot be written, another command is using it,
        or it holds another command's or job's files (unless ``fresh``).
    """
    out = Path(out)
    try:
        out.mkdir(parents=True, exist_ok=True)
        fh = _lock(out)
    except OSError as exc:
        raise SpecError("--out", f"cannot write to {str(out)!r} "
                        f"({exc.strerror or exc}); expected a writable folder") from None
    try:
        owner = None if fresh else _read_owner(out)
        if fresh:
            with contextlib.suppress(SpecError):
                owner = _read_owner(out)
            _discard(out, owner)
        elif owner is None:
            found = [f for f in FOLDER_FILES if (out / f).exists()]
            if found:
                raise _refuse(out, f"holds whitegauge files ({', '.join(found)}) without "
                              f"an owner record ({OWNER_NAME})")
        elif owner["command"] != command:
            raise _refuse(out, f"holds the files of `whitegauge {owner['command']}`, not "
                          f"of `whitegauge {command}`")
        elif owner["identity"] != identity:
            raise _refuse(out, f"holds the files of another spec or job "
                          f"({owner.get('name', 'unknown')!r}, {owner['identity'][:12]}...)")
        if owner is None or fresh:
            record = {"format": _OWNER_FORMAT, "command": command, "identity": identity,
                      "name": name}
            tmp = out / f"{OWNER_NAME}.{os.getpid()}.tmp"
            tmp.write_text(json.dumps(record, indent=1) + "\n", encoding="utf-8")
            os.replace(tmp, out / OWNER_NAME)
        yield out
    finally:
        fh.close()
