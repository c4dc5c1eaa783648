"""Formal values on the command line: ``run`` estimates a signed density's formal Wilson
loop by complex rotation for the Gaussian schemes and refuses the others on
``field.scheme``; every formal value carries ``formal: true``; ``exact`` and ``run``
put the Gaussian-matrix prescription beside the exact value.

Outside references: the gauss scheme's simple-loop value prod_c f(lambda mu_c) with
f(t) = (1 - t/4) exp(-t/8) for SU(2), k = 2 (Gradshteyn and Ryzhik 2007, 3.952),
continued to negative mu_c; the Gaussian-matrix value of a simple loop of area A is
f(lambda A) and differs from exp(-3 lambda A / 8) (Levy 2003) from order lambda^2 on.
"""

from __future__ import annotations

import json
import math

import pytest

from tests.conftest import BOX, spec_text

SPEC = spec_text(f'[[loops]]\nname = "rect"\n{BOX}', name="formal", scheme="{scheme}",
                 field="reference = 0.0\ndensity = [{{ rect = [0.0, 0.0, 0.5, 0.5], "
                 "value = -3.0 }}]", samples=8000, block=2000, seed=3)


def _main(tmp_path, capsys, scheme, *args):
    from holonomy.cli import main

    spec = tmp_path / "s.toml"
    spec.write_text(SPEC.format(scheme=scheme))
    code = main([args[0], str(spec), *args[1:]])
    out = capsys.readouterr()
    return code, out.out, out.err


def _f(t):
    return (1 - t / 4) * math.exp(-t / 8)


def test_formal_run_gauss(tmp_path, capsys):
    code, out, err = _main(tmp_path, capsys, "gauss", "run", "--out",
                           str(tmp_path / "o"), "--json")
    assert code == 0, err
    row = json.loads(out)["results"][0]
    assert row["kind"] == "formal estimate" and row["formal"] is True
    # 8 cells of area 1/16: 4 with density -3, 4 with density 1
    exact = _f(-3 / 16) ** 4 * _f(1 / 16) ** 4
    assert abs(row["exact"] - exact) < 1e-12
    assert abs(row["estimate"] - exact) < 4 * row["stderr"] and abs(row["z"]) < 4
    g = row["gaussian_matrix"]
    assert abs(g["value"] - _f(-0.5)) < 1e-12 and g["first_difference"] == 2


def test_heat_and_wilson_refused(tmp_path, capsys):
    for scheme in ("heat", "wilson"):
        code, out, err = _main(tmp_path, capsys, scheme, "run", "--out",
                               str(tmp_path / scheme))
        assert code == 2 and out == ""
        line, = err.strip().splitlines()
        assert line.startswith(f"whitegauge: error: field.scheme: got '{scheme}'")
        assert "linear, gauss" in line


def test_exact_is_flagged_formal(tmp_path, capsys):
    code, out, err = _main(tmp_path, capsys, "heat", "exact", "--json")
    assert code == 0, err
    obj = json.loads(out)
    assert obj["formal"] is True and obj["results"][0]["formal"] is True
    # continuum: exp(-(3/4) lambda mu / 2) with mu = 0.25 (-3) + 0.25 = -1/2
    assert abs(obj["results"][0]["continuum"] - math.exp(3 / 16)) < 1e-12
    code, out, err = _main(tmp_path, capsys, "heat", "exact")
    assert "exact (continuum) (formal)" in out and "gaussian matrix" in out


CORRELATOR_SPEC = spec_text('''[[loops]]
name = "inner"
vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]]
[[loops]]
name = "outer"
vertices = [[0.0, 0.0], [2.0, 0.0], [2.0, 1.0], [0.0, 1.0]]
[[correlators]]
loops = ["inner", "outer"]''', name="formal-pair", family="U", n=1,
                            scheme="{scheme}", field="density = -1.0", samples=8000,
                            block=2000, seed=5)


@pytest.mark.parametrize("scheme", ["linear", "gauss"])
def test_formal_run_with_a_correlator(scheme, tmp_path, capsys):
    """A signed density with [[correlators]]: the correlator is a formal complex-rotation
    estimate (it was an internal error: the blocks carried no products). U(1) with the
    physics metric (Casimir 1/2): the formal Gaussian expectation of exp(i sum_f n_f X_f)
    with variances lambda mu_f is exp(-(1/2) sum_f n_f^2 lambda mu_f / 2) continued to
    mu_f < 0 (Isserlis 1918, summed as an exponential series); the faces here are the
    inner square (winding 2 in the product) and the rest of the outer rectangle
    (winding 1): exponent +(4 * 1 + 1 * 1) / 4."""
    from holonomy.cli import main

    spec = tmp_path / "s.toml"
    spec.write_text(CORRELATOR_SPEC.format(scheme=scheme))
    assert main(["run", str(spec), "--out", str(tmp_path / "o"), "--json"]) == 0
    out = capsys.readouterr()
    assert out.err == ""
    c = json.loads(out.out)["correlators"][0]
    assert c["formal"] is True and c["loops"] == ["inner", "outer"]
    exact = math.exp((4 * 1.0 + 1 * 1.0) / 4)
    assert c["exact"] == pytest.approx(exact, rel=1e-12)
    assert abs(c["estimate"] - exact) < 4 * c["stderr"]
    # connected part: E[W1 W2] - E[W1] E[W2] with E[W1] = e^{1/4}, E[W2] = e^{2/4}
    connected = exact - math.exp(1 / 4) * math.exp(2 / 4)
    assert c["exact_connected"] == pytest.approx(connected, rel=1e-12)
    assert abs(c["connected"] - connected) < 4 * c["connected_stderr"]
