"""Test hooks for fault injection (environment variables; inert unless set).

They let the hardening tests kill a run with SIGKILL inside a chosen window, or make a
block raise inside a worker, deterministically. Nothing here changes a result.

``WHITEGAUGE_TEST_PAUSE = "<point>[:<k>]"`` with ``WHITEGAUGE_TEST_PAUSE_FILE = path``
    The k-th time (default 1) the process reaches ``<point>``, it writes ``path`` and
    sleeps (up to ``WHITEGAUGE_TEST_PAUSE_SECONDS``, default 120) so a test can send
    SIGKILL while the run is inside that window. Points:

    ``store-open``     the run store is open, no block computed yet
    ``block-commit``   inside a block's store transaction, after its INSERT, before COMMIT
    ``block-stored``   a block was committed, the next not yet
    ``results-ready``  all blocks stored, results not yet written
    ``json-replace``   ``results.json`` written to its temporary file, before the rename

``WHITEGAUGE_TEST_FAIL_BLOCK = "<b>[,<b2>...]"`` (``"<b>:once"`` with
``WHITEGAUGE_TEST_FAIL_FILE = path``)
    Block ``b`` raises inside the worker: always, or only on its first attempt (the
    marker file records that the first attempt happened).
"""

from __future__ import annotations

import os
import time

__all__ = ["fault_point", "maybe_fail_block", "InjectedFault"]

_COUNTS: dict[str, int] = {}


class InjectedFault(RuntimeError):
    """The error a ``WHITEGAUGE_TEST_FAIL_BLOCK`` hook raises."""


def fault_point(point: str) -> None:
    """Pause at ``point`` if the ``WHITEGAUGE_TEST_PAUSE`` hook asks for it."""
    want = os.environ.get("WHITEGAUGE_TEST_PAUSE")
    if not want:
        return
    name, _, k = want.partition(":")
    if name != point:
        return
    _COUNTS[point] = _COUNTS.get(point, 0) + 1
    if _COUNTS[point] != int(k or 1):
        return
    marker = os.environ.get("WHITEGAUGE_TEST_PAUSE_FILE")
    if marker:
        with open(marker, "w") as fh:
            fh.write(point)
    time.sleep(float(os.environ.get("WHITEGAUGE_TEST_PAUSE_SECONDS", "120")))


def maybe_fail_block(block: int) -> None:
    """Raise :class:`InjectedFault` in block ``block`` if the hook names it."""
    want = os.environ.get("WHITEGAUGE_TEST_FAIL_BLOCK")
    if not want:
        return
    for item in want.split(","):
        b, _, mode = item.strip().partition(":")
        if not b or int(b) != block:
            continue
        if mode == "once":
            marker = os.environ.get("WHITEGAUGE_TEST_FAIL_FILE", "")
            if not marker or os.path.exists(f"{marker}.{block}"):
                return
            with open(f"{marker}.{block}", "w") as fh:
                fh.write("failed once")
        raise InjectedFault(f"injected fault in block {block} (test hook)")
