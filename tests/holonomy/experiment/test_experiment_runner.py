"""The runner and the run store, with a tiny stand-in problem (so these tests check the
machinery, not the sampler) and once with the real sampler on several executors.

Reproducibility contract: README.md "Reproducibility" (block b draws from
SeedSequence(seed, spawn_key=(b,)); numbers identical for any executor and after a
resume). Streams follow numpy's SeedSequence spawning (numpy documentation,
"Parallel random number generation", from memory).
"""

import concurrent.futures as cf
import json
import sqlite3
from dataclasses import dataclass

import numpy as np
import pytest

from holonomy import BlockSums, combine_blocks
from holonomy.experiment import (Job, RunStore, SpecError, StoreMismatch, execute,
                                 parse_spec, run_spec, write_json_atomic)

from tests.conftest import TINY_SPEC


@dataclass(frozen=True)
class FakeProblem:
    """n_blocks blocks of Gaussian 'Wilson loop values' for two loops."""

    samples: int = 1000
    block: int = 96
    seed: int = 11

    @property
    def n_blocks(self):
        return -(-self.samples // self.block)

    def block_sizes(self):
        sizes = [self.block] * self.n_blocks
        sizes[-1] = self.samples - self.block * (self.n_blocks - 1)
        return sizes

    def finish(self, blocks):
        return combine_blocks(blocks, names=("a", "b"), areas=(1.0, 2.0), seed=self.seed,
                              block=self.block, scheme="fake", path="none")


def fake_block(problem, b):
    rng = np.random.default_rng(np.random.SeedSequence(problem.seed, spawn_key=(b,)))
    size = problem.block_sizes()[b]
    values = rng.normal(size=(size, 2)) + 1j * rng.normal(size=(size, 2)) * 1e-3
    return BlockSums.from_values(b, values, drift=0.0)


def failing_block(problem, b):
    if b == 5:
        raise RuntimeError("worker died")
    return fake_block(problem, b)


def _numbers(result):
    return [(lp.estimate, lp.estimate_imag, lp.stderr, lp.stderr_batch) for lp in
            result.loops], result.correlators.tobytes()


def _store(tmp_path, sha="a" * 64, resume=False, name="run.sqlite"):
    return RunStore(tmp_path / name, spec_text="text", spec_sha256=sha, resume=resume)


def test_inline_equals_pools_bitwise():
    job = Job(problem=FakeProblem(), block_fn=fake_block)
    ref, stats = execute(job)
    assert stats.computed == job.n_blocks == 11 and stats.reused == 0
    for ex in (cf.ThreadPoolExecutor(3), cf.ProcessPoolExecutor(2), cf.ProcessPoolExecutor(4)):
        with ex:
            got, _ = execute(job, executor=ex, max_pending=3)
        assert _numbers(got) == _numbers(ref)
    # and the mean is what numpy gives on all samples at once
    allv = np.concatenate([np.random.default_rng(np.random.SeedSequence(11, spawn_key=(b,)))
                           .normal(size=(n, 2)) for b, n in
                           enumerate(FakeProblem().block_sizes())])
    assert ref.loops[0].estimate == pytest.approx(allv[:, 0].mean(), rel=1e-12)


def test_store_round_trip_is_bitwise(tmp_path):
    job = Job(problem=FakeProblem(), block_fn=fake_block)
    ref, _ = execute(job)
    with _store(tmp_path) as st:
        first, s1 = execute(job, store=st)
    with _store(tmp_path, resume=True) as st:
        again, s2 = execute(job, store=st)
    assert (s1.computed, s1.reused) == (11, 0)
    assert (s2.computed, s2.reused) == (0, 11)   # nothing recomputed
    assert _numbers(first) == _numbers(again) == _numbers(ref)


def test_resume_after_a_failure_completes_identically(tmp_path):
    ref, _ = execute(Job(problem=FakeProblem(), block_fn=fake_block))
    with _store(tmp_path) as st:
        with pytest.raises(RuntimeError, match="worker died"):
            execute(Job(problem=FakeProblem(), block_fn=failing_block), store=st)
        assert st.finished() == {0, 1, 2, 3, 4}   # every finished block is on disk
    with _store(tmp_path, resume=True) as st:
        got, stats = execute(Job(problem=FakeProblem(), block_fn=fake_block), store=st)
        sessions = st.sessions()
    assert (stats.reused, stats.computed) == (5, 6)
    assert _numbers(got) == _numbers(ref)
    assert [s["resumed"] for s in sessions] == [False, True]


def test_without_resume_the_store_starts_over(tmp_path):
    with _store(tmp_path) as st:
        execute(Job(problem=FakeProblem(), block_fn=fake_block), store=st)
    with _store(tmp_path, resume=False) as st:
        assert st.finished() == set()


def test_store_refuses_another_spec(tmp_path):
    _store(tmp_path).close()
    with pytest.raises(StoreMismatch, match=r"^--out: .* holds the run store of another"):
        _store(tmp_path, sha="b" * 64, resume=True)
    assert issubclass(StoreMismatch, SpecError)


def test_store_is_plain_sqlite_with_spec_and_provenance(tmp_path):
    with _store(tmp_path) as st:
        execute(Job(problem=FakeProblem(samples=200, block=100), block_fn=fake_block),
                store=st)
    con = sqlite3.connect(tmp_path / "run.sqlite")
    meta = dict(con.execute("SELECT key, value FROM meta"))
    assert meta["spec_text"] == "text" and meta["spec_sha256"] == "a" * 64
    rows = con.execute("SELECT block, count FROM blocks ORDER BY block").fetchall()
    assert rows == [(0, 100), (1, 100)]
    versions = json.loads(con.execute("SELECT versions FROM sessions").fetchone()[0])
    assert set(versions) == {"whitegauge", "numpy", "scipy", "python"}
    con.close()


def test_json_is_written_atomically(tmp_path):
    target = tmp_path / "results.json"
    target.write_text("old")
    write_json_atomic({"x": [1.5, float("nan")]}, target)
    assert json.loads(target.read_text()) == {"x": [1.5, None]}
    assert [p.name for p in tmp_path.iterdir()] == ["results.json"]   # no temp file left


def _run_numbers(outcome):
    return json.dumps(outcome.results["results"], sort_keys=True)


def test_real_sampler_bitwise_for_1_2_4_workers(tmp_path):
    spec = parse_spec(TINY_SPEC)
    one = run_spec(spec, out=tmp_path / "w1", workers=1)
    for w in (2, 4):
        got = run_spec(spec, out=tmp_path / f"w{w}", workers=w)
        assert _run_numbers(got) == _run_numbers(one)
        assert got.results["provenance"]["workers"] == w
    files = sorted(p.name for p in (tmp_path / "w1").iterdir())
    assert {"results.json", "results.csv", "run.sqlite"} <= set(files)


def _dask_case(tmp_path, processes):
    distributed = pytest.importorskip("distributed")
    spec = parse_spec(TINY_SPEC)
    ref = run_spec(spec)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=processes,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        got = run_spec(spec, out=tmp_path / "dask", executor=client.get_executor())
    assert _run_numbers(got) == _run_numbers(ref)


def test_real_sampler_bitwise_on_dask_threads(tmp_path):
    _dask_case(tmp_path, processes=False)


@pytest.mark.slow
def test_real_sampler_bitwise_on_dask_processes(tmp_path):
    # worker processes start and import the package: about 10-40 s
    _dask_case(tmp_path, processes=True)
