"""[[correlators]] in specs: validation, run results (estimate, connected part, exact
values, z), the CSV, the table and the exact command; the wilson scheme's exact values
for spin j and non-simple loops."""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

from holonomy.experiment import format_table, parse_spec, run_spec
from holonomy.experiment._commands import exact_results
from holonomy.experiment._spec import SpecError

BASE = """
name = "pairs"
[group]
family = "{family}"
n = {n}
metric = "{metric}"
[field]
coupling = {coupling}
spacing = 0.25
scheme = "{scheme}"
[[loops]]
name = "a"
vertices = [[0, 0], [1, 0], [1, 1], [0, 1]]
[[loops]]
name = "inner"
vertices = [[0.25, 0.25], [0.75, 0.25], [0.75, 0.75], [0.25, 0.75]]
[[loops]]
name = "cross"
vertices = [[0.5, 0.5], [1.5, 0.5], [1.5, 1.5], [0.5, 1.5]]
[[loops]]
name = "far"
vertices = [[2, 0], [2.5, 0], [2.5, 0.5], [2, 0.5]]
[[correlators]]
loops = ["a", "inner"]
[[correlators]]
loops = ["a", "cross"]
[[correlators]]
loops = ["a", "far"]
[observable]
rep = "{rep}"
[run]
samples = 12000
block = 4000
seed = 9
"""


def spec_text(family="SU", n=2, metric="physics", coupling=1.0, scheme="heat",
              rep="fundamental"):
    return BASE.format(family=family, n=n, metric=metric, coupling=coupling,
                       scheme=scheme, rep=rep)


class TestSpec:
    def test_parsed(self):
        spec = parse_spec(spec_text())
        assert spec.correlators == (("a", "inner"), ("a", "cross"), ("a", "far"))
        assert spec.correlator_indices == ((0, 1), (0, 2), (0, 3))

    @pytest.mark.parametrize("entry, match", [
        ('loops = ["a", "nope"]', r"correlators\[3\]\.loops: got the unknown loop name 'nope'"),
        ('loops = ["a"]', r"correlators\[3\]\.loops: got 1 name\(s\)"),
        ('loops = ["a", "a"]', r"correlators\[3\]\.loops: got a repeated name"),
        ('loops = "a"', r"correlators\[3\]\.loops: got"),
        ('loops = ["a", "far"]\nweight = 2', r"correlators\[3\]\.weight: unknown key"),
    ])
    def test_bad(self, entry, match):
        text = spec_text().replace("[observable]", f"[[correlators]]\n{entry}\n[observable]")
        with pytest.raises(SpecError, match=match):
            parse_spec(text)

    def test_cli_exit_2(self, tmp_path):
        path = tmp_path / "bad.toml"
        path.write_text(spec_text().replace('loops = ["a", "far"]', 'loops = ["a", "b"]'))
        proc = subprocess.run([sys.executable, "-m", "holonomy.cli", "run", str(path),
                               "--out", str(tmp_path / "out")], capture_output=True,
                              text=True, timeout=120)
        assert proc.returncode == 2
        assert "correlators[2].loops" in proc.stderr and "Traceback" not in proc.stderr


@pytest.mark.parametrize("family, n, metric, coupling", [("U", 1, "trace", 0.8),
                                                        ("SU", 2, "physics", 1.0)])
def test_run_correlators_against_exact(family, n, metric, coupling, tmp_path):
    # heat is exact in law for lattice loops (Levy 2003): z within 4 standard errors; the
    # disjoint pair's connected part is 0 exactly and in the estimate within 4 se
    spec = parse_spec(spec_text(family, n, metric, coupling))
    out = run_spec(spec, out=tmp_path / "run")
    entries = out.results["correlators"]
    assert [e["loops"] for e in entries] == [["a", "inner"], ["a", "cross"], ["a", "far"]]
    for e in entries:
        for key in ("estimate", "stderr", "connected", "connected_stderr", "exact",
                    "exact_connected", "z"):
            assert e[key] is not None, (key, e)
        assert abs(e["z"]) < 4, e
        assert abs(e["z_connected"]) < 4, e
    far = entries[2]
    assert far["exact_connected"] == pytest.approx(0.0, abs=1e-12)
    assert abs(far["connected"]) < 4 * far["connected_stderr"]
    # the files and the table show them
    saved = json.loads((tmp_path / "run" / "results.json").read_text())
    assert saved["correlators"][0]["loops"] == ["a", "inner"]
    csv_text = (tmp_path / "run" / "results.csv").read_text()
    assert "a*inner,,correlator" in csv_text and "connected_stderr" in csv_text.splitlines()[0]
    table = format_table(out.results)
    assert "a*cross" in table and "connected estimate" in table


def test_exact_command_shows_correlators():
    obj = exact_results(parse_spec(spec_text(), purpose="exact"))
    inner = obj["correlators"][0]
    # nested SU(2) pair: (3 e^{-t_in} + 1) / 4 e^{-3 t_out / 8} (Schur's lemma and
    # chi_{1/2}^2 = chi_1 + chi_0), t_in = 0.25, t_out = 0.75
    ref = np.exp(-3 * 0.75 / 8) * (3 * np.exp(-0.25) + 1) / 4
    assert inner["exact"] == pytest.approx(ref, abs=1e-12)
    single_a, single_in = np.exp(-3 / 8), np.exp(-3 * 0.25 / 8)
    assert inner["exact_connected"] == pytest.approx(ref - single_a * single_in, abs=1e-12)


@pytest.mark.parametrize("rep", ["spin:1", "spin:3/2"])
def test_wilson_scheme_exact_any_rep(rep, tmp_path):
    # the wilson scheme's exact value for spin j and for a loop wound twice (Bessel face
    # laws): Monte Carlo within 4 standard errors
    text = spec_text(scheme="wilson", rep=rep, coupling=2.0).replace(
        'name = "far"\nvertices = [[2, 0], [2.5, 0], [2.5, 0.5], [2, 0.5]]',
        'name = "far"\nvertices = [[2, 0], [2.5, 0], [2.5, 0.5], [2, 0.5]]\nturns = 2')
    out = run_spec(parse_spec(text), out=tmp_path / "w")
    for r in out.results["results"]:
        assert r["exact"] is not None, r
        assert abs(r["z"]) < 4, r
    for e in out.results["correlators"]:
        assert e["exact"] is not None and abs(e["z"]) < 4, e
