"""Faults (issue 7, part 2): SIGKILL at five chosen points, a block that raises inside a
worker, a folder holding another spec's store, an unwritable output folder.

The kill windows are hit deterministically through the documented test hook of
``holonomy/experiment/_faults.py``: ``WHITEGAUGE_TEST_PAUSE="<point>:<k>"`` makes the
run write a marker file and sleep the k-th time it reaches ``<point>``; the test waits
for the marker and sends SIGKILL (a real kill of a real process). SQLite's atomic
commit (https://www.sqlite.org/atomiccommit.html) and POSIX rename (os.replace) are
what the checks rely on: a killed transaction leaves no trace, a renamed file is
complete.
"""

import json
import os
import signal
import sqlite3
import subprocess
import sys
import time

import pytest

from holonomy.experiment import BlockFailed, RunStore, load_spec, run_spec

from tests.conftest import mutate, numbers, read_json, wg

# 12 blocks of 40 samples: fast, and enough blocks to kill in the middle
SPEC = mutate(("samples = 64", "samples = 480"), ("block = 32", "block = 40"))
N_BLOCKS = 12


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    d = tmp_path_factory.mktemp("ref")
    (d / "spec.toml").write_text(SPEC)
    return numbers(run_spec(load_spec(d / "spec.toml")).results)


def _stored_blocks(db) -> dict:
    con = sqlite3.connect(db)
    try:
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        return dict(con.execute("SELECT block, data FROM blocks"))
    finally:
        con.close()


def _kill_at(spec, out, point, marker):
    env = dict(os.environ, WHITEGAUGE_TEST_PAUSE=point, WHITEGAUGE_TEST_PAUSE_FILE=str(marker))
    proc = subprocess.Popen([sys.executable, "-m", "holonomy.cli", "run", str(spec),
                             "--out", str(out), "--quiet"], env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    t0 = time.monotonic()
    while not marker.exists():
        assert proc.poll() is None, proc.communicate()
        assert time.monotonic() - t0 < 90, "the run never reached the kill point"
        time.sleep(0.02)
    os.kill(proc.pid, signal.SIGKILL)
    proc.communicate()
    assert proc.returncode == -signal.SIGKILL


# (hook point, blocks the store must hold after the kill)
KILLS = [
    ("store-open", 0),
    ("block-commit:4", 3),       # inside the 4th block's transaction: rolled back
    ("block-stored:7", 7),       # between two commits
    ("results-ready", N_BLOCKS),  # all blocks stored, nothing written yet
    ("json-replace", N_BLOCKS),  # results.json in its temporary file, not yet renamed
]


@pytest.mark.parametrize("point,held", [
    pytest.param(*KILLS[0], marks=pytest.mark.slow), KILLS[1],
    pytest.param(*KILLS[2], marks=pytest.mark.slow),
    pytest.param(*KILLS[3], marks=pytest.mark.slow),
    pytest.param(*KILLS[4], marks=pytest.mark.slow)],
    ids=[k[0].split(":")[0] for k in KILLS])
def test_sigkill_then_resume(point, held, tmp_path, reference):
    spec = tmp_path / "spec.toml"
    spec.write_text(SPEC)
    out = tmp_path / "out"
    _kill_at(spec, out, point, tmp_path / "marker")
    res = out / "results.json"
    assert not res.exists()  # absent (the only alternative allowed: complete and valid)
    stored = _stored_blocks(out / "run.sqlite")  # the store opens and is intact
    assert len(stored) == held
    with RunStore(out / "run.sqlite", spec_text=SPEC, spec_sha256=load_spec(spec).sha256,
                  job_key="run", resume=True, workers=1) as store:
        assert store.finished() == set(stored)
    p = wg("run", spec, "--out", out, "--resume", "--quiet")
    assert p.returncode == 0, p.stderr
    obj = read_json(res)  # complete and valid JSON
    assert numbers(obj) == reference  # bitwise the uninterrupted numbers
    assert obj["provenance"]["blocks_reused"] == held
    assert obj["provenance"]["blocks_computed"] == N_BLOCKS - held
    # the blocks kept across the kill were not recomputed
    after = _stored_blocks(out / "run.sqlite")
    assert all(after[b] == v for b, v in stored.items())


@pytest.mark.slow
def test_kill_while_replacing_an_old_results_file_keeps_the_old_one(tmp_path, reference):
    spec = tmp_path / "spec.toml"
    spec.write_text(SPEC)
    out = tmp_path / "out"
    assert wg("run", spec, "--out", out, "--quiet").returncode == 0
    before = (out / "results.json").read_bytes()
    _kill_at(spec, out, "json-replace", tmp_path / "marker")  # a second, resumed-or-not run
    assert (out / "results.json").read_bytes() == before  # the complete earlier file
    assert numbers(json.loads(before)) == reference


# --------------------------------------------------------------------- failing blocks

def test_block_raising_twice_stops_the_run_and_keeps_finished_blocks(tmp_path, monkeypatch,
                                                                    reference):
    spec = load_spec(_write(tmp_path, SPEC))
    monkeypatch.setenv("WHITEGAUGE_TEST_FAIL_BLOCK", "5")
    with pytest.raises(BlockFailed, match=r"block 5 \(seed 7, spawn_key \(5,\)\) failed "
                                          r"twice: InjectedFault"):
        run_spec(spec, out=tmp_path / "out")
    stored = _stored_blocks(tmp_path / "out" / "run.sqlite")
    assert sorted(stored) == [0, 1, 2, 3, 4]  # inline: every block before 5 is kept
    monkeypatch.delenv("WHITEGAUGE_TEST_FAIL_BLOCK")
    outcome = run_spec(spec, out=tmp_path / "out", resume=True)
    assert numbers(outcome.results) == reference
    assert outcome.stats.reused == 5


def test_block_raising_twice_in_a_process_pool(tmp_path, monkeypatch, reference):
    spec = load_spec(_write(tmp_path, SPEC))
    monkeypatch.setenv("WHITEGAUGE_TEST_FAIL_BLOCK", "2")
    with pytest.raises(BlockFailed, match=r"block 2 \(seed 7") as info:
        run_spec(spec, out=tmp_path / "out", workers=2)
    stored = _stored_blocks(tmp_path / "out" / "run.sqlite")
    assert 2 not in stored and len(stored) == info.value.kept
    assert len(stored) >= 2  # blocks 0 and 1 were submitted first and finish
    monkeypatch.delenv("WHITEGAUGE_TEST_FAIL_BLOCK")
    outcome = run_spec(spec, out=tmp_path / "out", resume=True, workers=2)
    assert numbers(outcome.results) == reference
    assert outcome.stats.reused == len(stored)


@pytest.mark.parametrize("workers", [1, 2])
def test_block_raising_once_is_retried(tmp_path, monkeypatch, reference, workers):
    spec = load_spec(_write(tmp_path, SPEC))
    monkeypatch.setenv("WHITEGAUGE_TEST_FAIL_BLOCK", "3:once,8:once")
    monkeypatch.setenv("WHITEGAUGE_TEST_FAIL_FILE", str(tmp_path / "failed"))
    outcome = run_spec(spec, out=tmp_path / "out", workers=workers)
    assert (tmp_path / "failed.3").exists() and (tmp_path / "failed.8").exists()
    assert numbers(outcome.results) == reference


def test_cli_block_failure_exit_1_names_block_and_seed(tmp_path):
    spec = _write(tmp_path, SPEC)
    p = wg("run", spec, "--out", tmp_path / "out", "--quiet", "--workers", "2",
           env={"WHITEGAUGE_TEST_FAIL_BLOCK": "6"})
    assert p.returncode == 1
    lines = p.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in p.stderr, p.stderr
    assert "block 6" in lines[0] and "seed 7" in lines[0] and "kept in the store" in lines[0]
    assert 6 not in _stored_blocks(tmp_path / "out" / "run.sqlite")
    assert not (tmp_path / "out" / "results.json").exists()


# --------------------------------------------------------------------- wrong folders

@pytest.mark.slow
def test_folder_of_another_spec_is_refused_and_left_alone(tmp_path):
    a = _write(tmp_path, SPEC, "a.toml")
    b = _write(tmp_path, SPEC.replace("seed = 7", "seed = 8"), "a2.toml")
    out = tmp_path / "out"
    assert wg("run", a, "--out", out, "--quiet").returncode == 0
    before = _stored_blocks(out / "run.sqlite")
    res = (out / "results.json").read_bytes()
    for extra in ([], ["--resume"]):
        p = wg("run", b, "--out", out, "--quiet", *extra)
        assert p.returncode == 2
        assert p.stderr.startswith("whitegauge: error: --out: ") and \
            "another spec" in p.stderr and len(p.stderr.strip().splitlines()) == 1
    assert _stored_blocks(out / "run.sqlite") == before
    assert (out / "results.json").read_bytes() == res


def test_unwritable_output_folder_reported_before_work(tmp_path):
    spec = _write(tmp_path, SPEC)
    (tmp_path / "afile").write_text("x")
    t0 = time.monotonic()
    p = wg("run", spec, "--out", tmp_path / "afile" / "out", "--quiet",
           env={"WHITEGAUGE_TEST_PAUSE": "store-open",
                "WHITEGAUGE_TEST_PAUSE_FILE": str(tmp_path / "marker")})
    assert p.returncode == 2
    assert p.stderr.startswith("whitegauge: error: --out: cannot write to")
    assert not (tmp_path / "marker").exists()  # the run never opened a store
    assert time.monotonic() - t0 < 60


def _write(tmp_path, text, name="spec.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p
