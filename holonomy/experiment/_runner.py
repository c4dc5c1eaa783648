"""The runner: blocks of a problem on any ``concurrent.futures.Executor``, stored as they
finish, resumable.

A *job* is a picklable problem plus a module-level function ``block_fn(problem, b)``
that computes block ``b`` (pure: block ``b`` draws from ``SeedSequence(seed,
spawn_key=(b,))``). The runner submits the blocks that the store does not hold yet, at
most ``max_pending`` at a time (memory stays bounded by the block size, not by the
number of samples), writes each finished block to the store in its own transaction as
soon as it arrives, and finally hands all blocks, sorted by index, to
``problem.finish``. The numbers therefore do not depend on the executor, the number of
workers, the completion order, or whether the run was interrupted and resumed.

``executor=None`` runs the blocks inline. A ``ProcessPoolExecutor`` runs them on local
cores; a Dask ``distributed.Client(...).get_executor()`` runs them on a cluster.
"""

from __future__ import annotations

import concurrent.futures as cf
import contextlib
import json
import numbers
import os
import signal
import sys
import threading
import time
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Callable

from holonomy import formal_block, run_block
from holonomy._estimate import BlockSums
from holonomy._kernels import kernel_path
from holonomy.groups import heat_kernel_law
from noise import ArgumentError

from ._faults import fault_point, maybe_fail_block
from ._problems import build_lattice, build_problem
from ._progress import Progress
from ._folder import claim_folder
from ._report import build_results, write_results
from ._spec import Spec, spec_arg
from ._store import STORE_NAME, RunStore, versions

__all__ = ["Job", "ExecutionStats", "BlockFailed", "execute", "build_problem", "build_lattice",
           "wilson_job", "make_executor", "worker_pool", "MAX_WORKERS", "RunOutcome",
           "run_spec"]


def _encode_sums(sums) -> str:
    return json.dumps(sums.to_dict())


def _decode_sums(text: str):
    return BlockSums.from_dict(json.loads(text))


def _count_sums(sums) -> int:
    return int(sums.count)


@dataclass(frozen=True)
class Job:
    """What the runner needs: a picklable ``problem`` with ``n_blocks`` and ``finish``,
    the block function, and how a block result is stored (``encode``/``decode``)."""

    problem: Any
    block_fn: Callable[[Any, int], Any]
    encode: Callable[[Any], str] = _encode_sums
    decode: Callable[[str], Any] = _decode_sums
    count: Callable[[Any], int] = _count_sums
    finish: Callable[[list], Any] | None = None
    key: str = "run"

    @property
    def n_blocks(self) -> int:
        return int(self.problem.n_blocks)


@dataclass
class ExecutionStats:
    """How a run went: blocks computed now, blocks reused from the store, seconds."""

    n_blocks: int
    computed: int = 0
    reused: int = 0
    seconds: float = 0.0
    block_seconds: float = 0.0


def _timed(block_fn, problem, b: int):
    """Run one block in a worker; module level so process pools can pickle it."""
    maybe_fail_block(b)  # test hook, inert unless WHITEGAUGE_TEST_FAIL_BLOCK is set
    t0 = time.perf_counter()
    out = block_fn(problem, b)
    return b, out, time.perf_counter() - t0


class BlockFailed(RuntimeError):
    """A block raised twice (first attempt and one retry); the run stops.

    ``block`` and ``seed`` identify it (it draws from ``SeedSequence(seed,
    spawn_key=(block,))``); the blocks finished before are in the store.
    """

    def __init__(self, block: int, seed, cause: BaseException, kept: int):
        self.block, self.seed, self.cause, self.kept = block, seed, cause, kept
        msg = " ".join(str(cause).split())
        super().__init__(
            f"block {block} (seed {seed}, spawn_key ({block},)) failed twice: "
            f"{type(cause).__name__}: {msg}; {kept} finished blocks are kept in the "
            "store (rerun with --resume)")


def execute(job: Job, *, store: RunStore | None = None, executor: cf.Executor | None = None,
            progress: bool | Progress = False, max_pending: int | None = None,
            retries: int = 1, name: str | None = None):
    """Run every block of ``job`` not yet in ``store`` and return ``(result, stats)``.

    ``progress`` is a :class:`Progress` shared by the command (the blocks are added to
    its bar under ``name``), or True for a bar of this job alone.

    ``result`` is ``job.problem.finish(blocks)`` with the blocks in index order. A block
    that raises is resubmitted up to ``retries`` times (a block is pure, so a retry
    computes the same numbers); if it still fails, the blocks already running are
    awaited and stored, and :class:`BlockFailed` names the block and the seed.
    """
    t0 = time.perf_counter()
    n = job.n_blocks
    stats = ExecutionStats(n_blocks=n)
    done: dict[int, Any] = {}
    if store is not None:
        for row in store.blocks():  # each row checked before it is used
            b, value = store.check_row(row, n, job.decode, job.count)
            done[b] = value
        store.start()
        stats.reused = len(done)
    todo = [b for b in range(n) if b not in done]
    seed = getattr(job.problem, "seed", None)
    attempts: dict[int, int] = {}
    bar = own_bar = None
    if isinstance(progress, Progress):
        bar = progress
    elif progress:
        bar = own_bar = Progress()
    if bar is not None:
        bar.stage(name or job.key, n, done=len(done))

    def _finish_block(b, out, seconds):
        if store is not None:
            # one transaction per block, right away: a kill loses at most running blocks
            store.put(b, job.count(out), job.encode(out), seconds)
            out = job.decode(job.encode(out))  # what a resume would read back
            fault_point("block-stored")
        done[b] = out
        stats.computed += 1
        stats.block_seconds += seconds
        if bar is not None:
            bar.update(1)

    def _failed(b, exc) -> bool:
        """Count a failure of block b; True if it may be retried."""
        attempts[b] = attempts.get(b, 0) + 1
        return attempts[b] <= retries

    try:
        if executor is None:
            for b in todo:
                while True:
                    try:
                        res = _timed(job.block_fn, job.problem, b)
                    except Exception as exc:  # noqa: BLE001  (retried, then reported)
                        if _failed(b, exc):
                            continue
                        raise BlockFailed(b, seed, exc, len(done)) from exc
                    _finish_block(*res)
                    break
        else:
            if max_pending is None:
                max_pending = 4 * (os.cpu_count() or 1)
            pending: dict[cf.Future, int] = {}
            it = iter(todo)
            exhausted = False
            failure: BlockFailed | None = None
            while True:
                while failure is None and not exhausted and len(pending) < max_pending:
                    b = next(it, None)
                    if b is None:
                        exhausted = True
                        break
                    pending[executor.submit(_timed, job.block_fn, job.problem, b)] = b
                if not pending:
                    break
                finished, _ = cf.wait(set(pending), return_when=cf.FIRST_COMPLETED)
                for fut in finished:
                    b = pending.pop(fut)
                    try:
                        res = fut.result()
                    except Exception as exc:  # noqa: BLE001  (retried, then reported)
                        if failure is None and _failed(b, exc):
                            try:
                                pending[executor.submit(_timed, job.block_fn,
                                                        job.problem, b)] = b
                                continue
                            except Exception:  # noqa: BLE001  (a broken pool)
                                pass
                        if failure is None:
                            failure = BlockFailed(b, seed, exc, 0)
                            for other in pending:  # not started yet: drop
                                other.cancel()
                        continue
                    _finish_block(*res)
                pending = {f: b for f, b in pending.items() if not f.cancelled()}
            if failure is not None:
                raise BlockFailed(failure.block, seed, failure.cause, len(done)) \
                    from failure.cause
    except BaseException:
        if executor is not None:  # an interrupt: queued blocks are not started
            for fut in locals().get("pending", {}):
                fut.cancel()
        raise
    finally:
        if own_bar is not None:
            own_bar.close()
    blocks = [done[b] for b in range(n)]
    result = (job.finish or job.problem.finish)(blocks)
    stats.seconds = time.perf_counter() - t0
    return result, stats


def wilson_job(problem) -> Job:
    return Job(problem=problem, block_fn=run_block)


#: most worker processes a command starts (far above the useful number of local cores)
MAX_WORKERS = 256


def _watch_parent(parent: int, interval: float = 0.1) -> None:
    while os.getppid() == parent:
        time.sleep(interval)
    os._exit(3)  # the main process is gone (even by SIGKILL): do not linger


def worker_init(parent: int) -> None:
    """Initializer of every worker process the package starts.

    Ctrl-C (SIGINT goes to the whole process group) and SIGTERM are the main process's
    business: it stops the workers itself. A daemon thread polls ``os.getppid()`` and
    ends the worker within ~0.1 s once the main process is gone, even after SIGKILL.
    """
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    threading.Thread(target=_watch_parent, args=(parent,), daemon=True).start()


def make_executor(workers: int):
    """``None`` (inline) for one worker, else a process pool of ``workers`` whose
    processes end with the main process (see :func:`worker_init`)."""
    if workers <= 1:
        return None
    return cf.ProcessPoolExecutor(max_workers=workers, initializer=worker_init,
                                  initargs=(os.getpid(),))


@contextlib.contextmanager
def worker_pool(workers: int | None, executor: cf.Executor | None = None):
    """The executor to use: ``executor`` if given (left running: it is the caller's),
    else an own pool of ``workers`` (or ``None``: inline), shut down on exit. On an
    exception (an interrupt, a failure) the own pool's processes are terminated at once:
    no block keeps running, and nothing of theirs is stored."""
    if executor is not None:
        yield executor
        return
    own = make_executor(workers or 1)
    try:
        yield own
    except BaseException:
        if own is not None:
            for proc in list((getattr(own, "_processes", None) or {}).values()):
                proc.terminate()
            own.shutdown(wait=True, cancel_futures=True)
        raise
    if own is not None:
        own.shutdown(wait=True, cancel_futures=True)


def _probe() -> None:
    """The task :func:`executor_iv` submits: nothing."""


def executor_iv(executor: cf.Executor) -> None:
    """Refuse an executor that takes no work (shut down, or a broken process pool)
    before any work, with :class:`noise.ArgumentError` on ``executor``.

    No public attribute says whether an Executor is shut down, so one empty task is
    submitted: ``Executor.submit`` raises RuntimeError after ``shutdown`` (Python's
    concurrent.futures documentation) and BrokenExecutor, a RuntimeError, on a broken
    pool; the task's result is not awaited.
    """
    try:
        executor.submit(_probe)
    except RuntimeError as exc:
        name = type(executor).__name__
        raise ArgumentError(
            "executor", f"got a {name} that takes no work ({exc}); expected a running "
            "concurrent.futures.Executor",
            f"`executor` must be a running concurrent.futures.Executor; the {name} given "
            f"takes no work ({exc}).") from None


def workers_iv(workers: Any, *, allow_none: bool = True) -> int | None:
    """``workers`` checked: an integer from 1 to :data:`MAX_WORKERS` (or None)."""
    if workers is None and allow_none:
        return None
    rule = f"an integer from 1 to {MAX_WORKERS}" + (" or None" if allow_none else "")
    if isinstance(workers, bool) or not isinstance(workers, numbers.Integral):
        raise TypeError(f"`workers` must be {rule}; got {workers!r}.")
    if not 1 <= workers <= MAX_WORKERS:
        raise ValueError(f"`workers` must be {rule}; got {workers!r}.")
    return int(workers)


def run_iv(*, out: Any, executor: Any, workers: Any, flags: dict[str, Any],
           progress: Any = False):
    """Shared argument checks of the entry points that run blocks (``_iv`` pattern)."""
    if not isinstance(progress, (bool, Progress)):
        raise TypeError("`progress` must be True, False or a Progress; got "
                        f"{type(progress).__name__}.")
    if out is not None and not isinstance(out, (str, os.PathLike)):
        raise TypeError(f"`out` must be a folder path (str or os.PathLike) or None; got "
                        f"{type(out).__name__}.")
    if executor is not None and not isinstance(executor, cf.Executor):
        raise TypeError("`executor` must be a concurrent.futures.Executor or None; got "
                        f"{type(executor).__name__}.")
    if executor is not None:
        executor_iv(executor)
    workers = workers_iv(workers)
    for key, value in flags.items():
        if not isinstance(value, bool):
            raise TypeError(f"`{key}` must be True or False; got {value!r}.")
    if flags.get("resume") and flags.get("fresh"):
        raise ValueError("`resume` and `fresh` exclude each other: resume keeps the "
                         "stored blocks, fresh discards them.")
    return (None if out is None else Path(out)), executor, workers


@dataclass
class RunOutcome:
    """A finished run: the results object (as written to ``results.json``), the engine's
    :class:`~holonomy.EstimateResult`, execution statistics and the files written."""

    results: dict
    estimate: Any
    stats: ExecutionStats
    files: dict[str, str] = field(default_factory=dict)


def run_spec(spec: Spec | str | os.PathLike, *, out: str | Path | None = None,
             executor: cf.Executor | None = None, workers: int | None = None,
             resume: bool = False, fresh: bool = False,
             progress: bool | Progress = False, write: bool = True) -> RunOutcome:
    """Run ``spec`` and (with ``out``) write ``run.sqlite``, ``results.json``, ``results.csv``.

    ``spec`` is a :class:`Spec` or the path of a spec file. ``executor`` wins over
    ``workers``; with neither, the blocks run inline. The run store lives in ``out``;
    without ``out`` nothing is stored (no resume). ``out`` belongs to one command and
    one spec (see :func:`~holonomy.experiment._folder.claim_folder`): a folder of
    another spec or command is refused unless ``fresh``, which discards its files. The
    finished blocks of the same spec in ``out`` are reused, with or without ``resume``
    (they are bitwise what a new computation would give); ``fresh`` discards them.
    ``progress`` is True for a progress bar on stderr, or the :class:`Progress` of the
    command.

    Raises
    ------
    TypeError, ValueError
        An argument of the wrong type or value (the message names it).
    SpecError
        An invalid spec, or ``out`` unusable (key ``--out``).
    """
    spec = spec_arg(spec, "run")
    out, executor, workers = run_iv(out=out, executor=executor, workers=workers,
                                    flags={"resume": resume, "fresh": fresh,
                                           "write": write}, progress=progress)
    start = datetime.now(timezone.utc)
    t0 = time.perf_counter()
    # a signed density: the formal estimate by complex rotation (Gaussian schemes; the
    # spec refuses the others), with the sampler's blocks, seeds and store
    problem = build_problem(spec, formal=spec.signed)
    job = Job(problem=problem, block_fn=formal_block) if spec.signed else wilson_job(problem)
    worker_label = workers if workers is not None else (
        1 if executor is None else type(executor).__name__)
    bar = Progress() if progress is True else (progress or None)
    with contextlib.ExitStack() as stack:
        if progress is True:
            stack.callback(bar.close)
        store = None
        if out is not None:
            stack.enter_context(claim_folder(out, command="run", identity=f"{spec.sha256}:run",
                                             name=spec.name, fresh=fresh))
            store = stack.enter_context(RunStore(
                out / STORE_NAME, spec_text=spec.text, spec_sha256=spec.sha256,
                # blocks are pure functions of the spec and their index: a rerun of the
                # same spec reuses the stored ones, bitwise (`fresh` discarded them above)
                job_key="run", resume=True, workers=worker_label, name=spec.name))
            fault_point("store-open")
        with worker_pool(workers, executor) as pool:
            estimate, stats = execute(job, store=store, executor=pool,
                                      progress=bar or False, name=spec.name)
            executor_name = "inline" if pool is None else type(pool).__name__
        if store is not None:
            store.close()
        provenance = dict(versions())
        provenance.update({
            "start": start.isoformat(timespec="seconds"),
            "wall_seconds": time.perf_counter() - t0,
            "workers": worker_label,
            "blocks": stats.n_blocks, "blocks_computed": stats.computed,
            "blocks_reused": stats.reused, "resumed": bool(stats.reused),
            "block_seconds": stats.block_seconds,
            "executor": executor_name,
            "platform": sys.platform,
            # which sampler kernels ran: "numpy" (the reference) or "numba" (the `fast`
            # extra); the two agree to rounding, not bit for bit
            "kernel": kernel_path(),
        })
        if spec.scheme == "heat":  # the kernel's route and law error bound per draw
            provenance["heat_kernel"] = heat_kernel_law(problem.group)
        if bar is not None:
            bar.step(f"{spec.name}: exact values")
        results = build_results(spec, problem, estimate, provenance)
        if progress is True and bar is not None:
            bar.close()
        fault_point("results-ready")
        files = write_results(results, out) if (out is not None and write) else {}
    return RunOutcome(results=results, estimate=estimate, stats=stats, files=files)
