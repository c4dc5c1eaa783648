"""The ``whitegauge`` command in a subprocess: every subcommand, its files and JSON
fields (the contract of issue 5), exit codes, and a run killed with SIGKILL halfway and
resumed to bitwise identical numbers.

Exact values are checked against the closed form for a simple loop,
E[W] = exp(-c lambda A / 2) with c = 3/4 for SU(2) with k = 2 (Levy 2003, "Yang-Mills
measure on compact surfaces", Mem. AMS 166(790); the Casimir value: Georgi 1999, Lie
Algebras in Particle Physics, ch. 3, j(j+1) with j = 1/2 and k = 2, from memory).
"""

import json
import math
import os
import signal
import sqlite3
import subprocess
import sys
import time

import pytest

from tests.conftest import spec_text, wg as run_cli

SPEC = spec_text("""
[[loops]]
name = "box"
vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]
[[loops]]
name = "ring"
circle = { center = [0.5, 0.25], radius = 0.5, sides = 16 }
turns = 2
""", name="cli-box", scheme=None, samples=2000, block=250, seed=5)

RESULT_FIELDS = {"loop", "rep", "estimate", "estimate_imag", "stderr", "exact",
                 "exact_method", "z", "continuum", "area", "samples"}
PROVENANCE_FIELDS = {"whitegauge", "numpy", "scipy", "python", "start", "wall_seconds",
                     "workers"}


def wg(*args, cwd=None, check_code=0):
    return run_cli(*args, cwd=cwd, check_code=check_code)


@pytest.fixture
def spec_file(tmp_path):
    path = tmp_path / "box.toml"
    path.write_text(SPEC)
    return path


def test_version(capsys):
    from holonomy.cli import main

    assert main(["--version"]) == 0
    assert capsys.readouterr().out.startswith("whitegauge ")


def test_run_writes_files_and_json(spec_file, tmp_path):
    out = tmp_path / "out"
    proc = wg("run", spec_file, "--out", out, "--json", "--workers", "2")
    obj = json.loads(proc.stdout)
    assert proc.stderr == ""   # not a terminal: no progress bar
    for key in ("name", "spec_sha256", "seed", "samples", "block", "results", "provenance"):
        assert key in obj
    assert (obj["name"], obj["seed"], obj["samples"], obj["block"]) == ("cli-box", 5, 2000, 250)
    assert obj["spec_sha256"] == __import__("hashlib").sha256(SPEC.encode()).hexdigest()
    assert PROVENANCE_FIELDS <= set(obj["provenance"])
    assert obj["provenance"]["workers"] == 2
    box, ring = obj["results"]
    assert RESULT_FIELDS <= set(box) and RESULT_FIELDS <= set(ring)
    assert box["loop"] == "box" and box["rep"] == "fundamental" and box["samples"] == 2000
    # simple loop: exp(-3/8 * lambda * A), A = 0.5 (Levy 2003; Casimir 3/4 at k = 2)
    assert box["exact"] == pytest.approx(math.exp(-3 / 8 * 0.5), rel=1e-12)
    assert box["continuum"] == pytest.approx(math.exp(-3 / 8 * 0.5), rel=1e-12)
    assert abs(box["estimate"] - box["exact"]) < 4 * box["stderr"]
    assert box["z"] == pytest.approx((box["estimate"] - box["exact"]) / box["stderr"])
    assert box["area"] == pytest.approx(0.5)
    # the files: the same object on disk, a CSV row per loop, the run store
    assert json.loads((out / "results.json").read_text())["results"] == obj["results"]
    csv_lines = (out / "results.csv").read_text().splitlines()
    assert csv_lines[0].startswith("loop,rep,kind,scheme,estimate") and len(csv_lines) == 3
    con = sqlite3.connect(out / "run.sqlite")
    assert con.execute("SELECT COUNT(*) FROM blocks").fetchone()[0] == 8
    con.close()


def test_run_refuses_a_folder_of_another_spec(spec_file, tmp_path, capsys):
    from holonomy.cli import main   # in process: the subprocess cases are above

    out = tmp_path / "out"
    assert main(["run", str(spec_file), "--out", str(out)]) == 0
    text = capsys.readouterr().out
    # the table: every number with its error, saying what it is
    assert "estimate" in text and "exact" in text and "±" in text
    other = tmp_path / "other.toml"
    other.write_text(SPEC.replace("seed = 5", "seed = 6"))
    assert main(["run", str(other), "--out", str(out), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("whitegauge: error: --out: ")
    assert err.count("\n") == 1 and "Traceback" not in err


def test_bad_input_in_subprocess_has_no_traceback(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(SPEC.replace("radius = 0.5", "radius = -0.5"))
    proc = wg("run", bad, "--out", tmp_path / "o", check_code=2)
    assert proc.stderr == ("whitegauge: error: loops[1].circle.radius: got -0.5; "
                           "expected a number > 0\n")


def test_exact_json(spec_file):
    obj = json.loads(wg("exact", spec_file, "--json").stdout)
    box, ring = obj["results"]
    assert box["kind"] == "exact" and box["exact_method"]
    assert box["exact"] == pytest.approx(math.exp(-3 / 8 * 0.5), rel=1e-12)
    # null or a number, never missing; a null carries the reason
    assert "exact" in ring and (ring["exact"] is not None or ring["exact_note"])


def test_series_json(spec_file):
    proc = wg("series", spec_file, "--order", "2", "--json")
    obj = json.loads(proc.stdout)
    assert obj["order"] == 2 and len(obj["results"]) == 2
    for row in obj["results"]:
        assert row["kind"] == "series"
        if row["coefficients"] is None:
            assert "not available for this loop" in row["note"]
        else:
            assert len(row["coefficients"]) == 3
            # c_0 = 1 (the holonomy of zero noise is the identity) and c_1 = -c A / 2
            assert row["coefficients"][0] == pytest.approx(1.0)
    box = obj["results"][0]
    if box["coefficients"] is not None:
        assert box["coefficients"][1] == pytest.approx(-3 / 8 * 0.5, rel=1e-9)


def test_study_files(spec_file, tmp_path):
    out = tmp_path / "study"
    wg("study", spec_file, "--spacings", "0.5,0.25", "--schemes", "heat,gauss",
       "--out", out)
    obj = json.loads((out / "study.json").read_text())
    assert obj["spacings"] == [0.5, 0.25] and obj["schemes"] == ["heat", "gauss"]
    assert len(obj["results"]) == 2 * 2 * 2
    assert {r["scheme"] for r in obj["rates"]} == {"heat", "gauss"}
    assert (out / "convergence.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_demo_finishes_and_writes_its_report(tmp_path):
    proc = wg("demo", cwd=tmp_path)
    out = tmp_path / "whitegauge-demo"
    assert "estimate" in proc.stdout and "exact" in proc.stdout
    obj = json.loads((out / "results.json").read_text())
    assert {r["group"] for r in obj["results"]} == {"SU(2)", "U(3)"}
    assert {r["loop"] for r in obj["results"]} == {"rectangle", "circle-x2", "figure-eight"}
    for r in obj["results"]:
        if r["z"] is not None:
            assert abs(r["z"]) < 4, r   # each estimate against the exact value it samples
    assert (out / "report.md").read_text().startswith("# whitegauge demo")
    pngs = sorted(p.name for p in out.glob("*.png"))
    assert {"survey-SU2.png", "survey-U3.png", "z-scores.png"} <= set(pngs)
    assert obj["provenance"]["wall_seconds"] < 600


KILL_SPEC = SPEC.replace('spacing = 0.25', 'spacing = 0.0625\nscheme = "gauss"').replace(
    "samples = 2000", "samples = 15360").replace("block = 250", "block = 256")


def _stored(db):
    if not db.exists():
        return 0
    try:
        con = sqlite3.connect(f"file:{db}?mode=ro", uri=True, timeout=5)
        try:
            return con.execute("SELECT COUNT(*) FROM blocks").fetchone()[0]
        finally:
            con.close()
    except sqlite3.OperationalError:
        return 0


def test_sigkill_halfway_then_resume_is_bitwise_identical(tmp_path):
    from holonomy.experiment import parse_spec, run_spec

    spec_path = tmp_path / "kill.toml"
    spec_path.write_text(KILL_SPEC)
    out = tmp_path / "out"
    n_blocks = 60
    proc = subprocess.Popen([sys.executable, "-m", "holonomy.cli", "run", str(spec_path),
                             "--out", str(out), "--quiet"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    db = out / "run.sqlite"
    deadline = time.monotonic() + 300
    while _stored(db) < 8 and proc.poll() is None and time.monotonic() < deadline:
        time.sleep(0.02)
    assert proc.poll() is None, "the run ended before it could be killed"
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait()
    assert proc.returncode == -signal.SIGKILL
    at_kill = _stored(db)
    assert 8 <= at_kill < n_blocks
    assert not (out / "results.json").exists()

    resumed = json.loads(wg("run", spec_path, "--out", out, "--resume", "--json").stdout)
    prov = resumed["provenance"]
    assert prov["blocks_reused"] == at_kill            # finished blocks not recomputed
    assert prov["blocks_computed"] == n_blocks - at_kill
    reference = run_spec(parse_spec(KILL_SPEC, name="kill"))   # uninterrupted, in process
    assert json.dumps(resumed["results"]) == json.dumps(reference.results["results"])
