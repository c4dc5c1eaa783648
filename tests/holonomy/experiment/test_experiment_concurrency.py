"""Concurrency (issue 7, part 4): two runs of different specs at the same time in
different folders do not interfere; a run with more workers than cores gives the
bitwise-identical numbers (blocks draw from SeedSequence(seed, spawn_key=(b,)) and are
added in block order: numpy's documented stream independence, numpy/random parallel.rst).
"""

import os
import subprocess
import sys

import pytest

from holonomy.experiment import load_spec, run_spec

from tests.conftest import mutate, numbers, read_json, wg

A = mutate(("samples = 64", "samples = 960"), ("block = 32", "block = 60"))
B = mutate(('name = "hard"', 'name = "other"'), ('family = "SU"', 'family = "U"'),
           ("n = 2", "n = 1"), ('metric = "physics"', 'metric = "trace"'),
           ("samples = 64", "samples = 900"), ("block = 32", "block = 50"),
           ("seed = 7", "seed = 99"))


def _popen(spec, out, workers):
    return subprocess.Popen([sys.executable, "-m", "holonomy.cli", "run", str(spec),
                             "--out", str(out), "--quiet", "--workers", str(workers)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def test_two_runs_at_once_in_different_folders(tmp_path):
    (tmp_path / "a.toml").write_text(A)
    (tmp_path / "b.toml").write_text(B)
    ref_a = numbers(run_spec(load_spec(tmp_path / "a.toml")).results)
    ref_b = numbers(run_spec(load_spec(tmp_path / "b.toml")).results)
    pa = _popen(tmp_path / "a.toml", tmp_path / "out-a", 2)
    pb = _popen(tmp_path / "b.toml", tmp_path / "out-b", 2)
    for p in (pa, pb):
        _, err = p.communicate(timeout=180)
        assert p.returncode == 0, err
    ra, rb = read_json(tmp_path / "out-a/results.json"), read_json(tmp_path / "out-b/results.json")
    assert numbers(ra) == ref_a and numbers(rb) == ref_b
    assert ra["name"] == "hard" and rb["name"] == "other"


@pytest.mark.skipif((os.cpu_count() or 1) > 2, reason="the claim is about 4 workers on "
                    "at most 2 cores")
def test_four_workers_on_two_cores_bitwise(tmp_path):
    (tmp_path / "a.toml").write_text(A)
    ref = numbers(run_spec(load_spec(tmp_path / "a.toml")).results)  # inline, 1 worker
    p = wg("run", tmp_path / "a.toml", "--out", tmp_path / "w4", "--workers", "4",
           "--quiet")
    assert p.returncode == 0, p.stderr
    res = read_json(tmp_path / "w4/results.json")
    assert numbers(res) == ref
    assert res["provenance"]["workers"] == 4


@pytest.mark.slow
def test_four_workers_pinned_to_two_cores_bitwise(tmp_path):
    """Same claim where the machine has more cores: pin the run to two with taskset."""
    if not hasattr(os, "sched_setaffinity"):
        pytest.skip("no CPU affinity on this platform")
    (tmp_path / "a.toml").write_text(A)
    ref = numbers(run_spec(load_spec(tmp_path / "a.toml")).results)
    cores = sorted(os.sched_getaffinity(0))[:2]
    code = ("import os, sys; os.sched_setaffinity(0, %r); from holonomy.cli import main; "
            "sys.exit(main(sys.argv[1:]))" % (cores,))
    p = subprocess.run([sys.executable, "-c", code, "run", str(tmp_path / "a.toml"), "--out",
                        str(tmp_path / "w4"), "--workers", "4", "--quiet"],
                       capture_output=True, text=True, timeout=180)
    assert p.returncode == 0, p.stderr
    assert numbers(read_json(tmp_path / "w4/results.json")) == ref
