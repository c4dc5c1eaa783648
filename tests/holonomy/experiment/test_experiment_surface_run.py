"""`run` on a closed surface (README.md, Closed surfaces): results fields, files,
bitwise reproducibility with workers and resume, the effective-sample-size warning and
bad input.

Reference values: the SU(2) character sum (Migdal 1975, Sov. Phys. JETP 42, 413;
Rusakov 1990, Mod. Phys. Lett. A 5, 693), as in tests/holonomy/test_surface_sampling.py.
"""

import csv
import io
import json

import pytest

from holonomy.experiment import BlockFailed, SpecError, parse_spec, run_spec
from tests.conftest import BOX_AND_ELL, numbers, spec_text, wg
from tests.holonomy.test_surface_sampling import su2_sum

SPHERE = '[surface]\nkind = "sphere"\narea = 3.0\n'


def sphere_spec(table=SPHERE, samples=2000, block=400, **kw):
    return parse_spec(spec_text(BOX_AND_ELL, name="sph", samples=samples, block=block, **kw)
                      + table, purpose="run")


def test_results_on_the_sphere(tmp_path):
    out = run_spec(sphere_spec(), out=tmp_path / "o").results
    assert out["surface"] == {"kind": "sphere", "genus": 0, "area": 3.0}
    box, ell = out["results"]
    assert box["exact"] == pytest.approx(su2_sum(0.5, 2.5), abs=1e-12)
    assert ell["exact"] == pytest.approx(su2_sum(0.1875, 2.8125), abs=1e-12)
    for r in (box, ell):
        assert r["kind"] == "estimate" and "reweighted to the sphere of area 3" in \
            r["estimate_note"]
        assert abs(r["z"]) < 4 and 0 < r["ess"] <= r["samples"] == 2000
        assert abs(r["weight_mean"] - 1) < 4 * r["weight_stderr"]
        assert r["warning"] is None
    assert out["warnings"] == []
    rows = list(csv.DictReader(io.StringIO((tmp_path / "o" / "results.csv").read_text())))
    assert float(rows[0]["ess"]) == box["ess"] and rows[0]["weight_mean"]
    assert list(rows[0])[:5] == ["loop", "rep", "kind", "scheme", "estimate"]


def test_workers_and_resume_are_bitwise(tmp_path, monkeypatch):
    spec = sphere_spec()
    ref = run_spec(spec, out=tmp_path / "one", workers=1).results
    two = run_spec(spec, out=tmp_path / "two", workers=2).results
    assert numbers(two) == numbers(ref)
    assert [r["ess"] for r in two["results"]] == [r["ess"] for r in ref["results"]]
    monkeypatch.setenv("WHITEGAUGE_TEST_FAIL_BLOCK", "3")
    with pytest.raises(BlockFailed):
        run_spec(spec, out=tmp_path / "re")
    monkeypatch.delenv("WHITEGAUGE_TEST_FAIL_BLOCK")
    again = run_spec(spec, out=tmp_path / "re", resume=True)
    assert again.stats.reused == 3 and again.stats.computed == 2
    assert numbers(again.results) == numbers(ref)
    assert [(r["ess"], r["stderr_batch"]) for r in again.results["results"]] == \
        [(r["ess"], r["stderr_batch"]) for r in ref["results"]]


def test_small_outer_face_warns(tmp_path):
    """An outer face of time 0.001 against the box's 0.5 (coupling 1): the kernel is
    sharply peaked and a few samples carry the weight."""
    path = tmp_path / "s.toml"
    path.write_text(spec_text(BOX_AND_ELL, name="tight", samples=400, block=200)
                    + '[surface]\nkind = "sphere"\narea = 0.501\n')
    # the ell (measure 0.1875) is fine; the box has an outer face of 0.001
    proc = wg("run", path, "--out", tmp_path / "o", "--json", check_code=0)
    out = json.loads(proc.stdout)
    box = out["results"][0]
    assert box["ess"] < 0.01 * box["samples"]
    assert "effective sample size" in box["warning"]
    assert out["warnings"] and out["warnings"][0].startswith("box: effective sample size")
    assert "whitegauge run: warning: box: effective sample size" in proc.stderr
    assert out["results"][1]["warning"] is None


@pytest.mark.parametrize("scheme", ["gauss", "linear", "wilson"])
def test_other_schemes_are_refused(scheme):
    with pytest.raises(SpecError) as err:
        sphere_spec(scheme=scheme)
    assert err.value.key == "field.scheme" and "heat" in err.value.rule


def test_cli_bad_scheme_exits_2(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(spec_text(BOX_AND_ELL, name="sph", scheme="gauss") + SPHERE)
    proc = wg("run", path, "--out", tmp_path / "o", check_code=2)
    assert proc.stderr.count("\n") == 1 and "field.scheme" in proc.stderr
    assert "Traceback" not in proc.stderr
