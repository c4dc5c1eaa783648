"""``whitegauge series`` expands the quantity the spec's scheme names, says which, and
puts the continuum series of the loop as specified beside it.

Outside references (sympy.series of closed forms):
- heat: the simple loop exp(-c lambda A / 2) (Levy 2003, Mem. AMS 166) with the
  issue's SO(4) rectangle (metric trace, c = (N - 1)/2 = 3/2, area 1/2: c_2 = 9/128);
- linear: a rectangle standing on the reference line is f(lambda h H)^W with
  f(t) = (1 - t/4) exp(-t/8) for SU(2), k = 2 (Gaussian integral of cos(r/2),
  Gradshteyn and Ryzhik 2007, 3.952);
- a signed density: the formal continuum series and the linear lattice series,
  both flagged formal.
"""

from __future__ import annotations

import json

import sympy

SO4 = '''
name = "so4"
[group]
family = "SO"
n = 4
metric = "trace"
[field]
coupling = 1.0
spacing = 0.25
reference = 0.0
scheme = "{scheme}"
{density}
[[loops]]
name = "rect"
vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]
'''

SU2 = SO4.replace('family = "SO"\nn = 4\nmetric = "trace"',
                  'family = "SU"\nn = 2\nmetric = "physics"')
lam = sympy.Symbol("lam")


class _Proc:
    def __init__(self, returncode, stdout, stderr):
        self.returncode, self.stdout, self.stderr = returncode, stdout, stderr


def _series(tmp_path, capsys, text, order, *extra):
    """``whitegauge series`` in this process (the command's own entry point)."""
    from holonomy.cli import main

    spec = tmp_path / "s.toml"
    spec.write_text(text)
    code = main(["series", str(spec), "--order", str(order), *extra])
    out = capsys.readouterr()
    return _Proc(code, out.out, out.err)


def _taylor(expr, order):
    s = sympy.series(expr, lam, 0, order + 1).removeO()
    return [s.coeff(lam, j) for j in range(order + 1)]


def test_heat_expands_the_continuum_value(tmp_path, capsys):
    proc = _series(tmp_path, capsys, SO4.format(scheme="heat", density=""), 4, "--json")
    assert proc.returncode == 0, proc.stderr
    row = json.loads(proc.stdout)["results"][0]
    assert row["expands"] == "heat (continuum, as snapped)"
    ref = _taylor(sympy.exp(-sympy.Rational(3, 2) * lam / 4), 4)
    assert [sympy.Rational(q) for q in row["rationals"]] == ref
    assert row["rationals"][2] == "9/128" and row["continuum_rationals"] == row["rationals"]
    assert all(abs(c - float(r)) < 1e-10 for c, r in zip(row["coefficients"], ref))
    assert row["formal"] is False


def test_linear_expands_its_lattice_series(tmp_path, capsys):
    proc = _series(tmp_path, capsys, SU2.format(scheme="linear", density=""), 4, "--json")
    assert proc.returncode == 0, proc.stderr
    row = json.loads(proc.stdout)["results"][0]
    assert row["expands"] == "linear lattice, spacing 0.25"
    t = lam * sympy.Rational(1, 4) * sympy.Rational(1, 2)
    ref = _taylor(((1 - t / 4) * sympy.exp(-t / 8)) ** 4, 4)
    assert [sympy.Rational(q) for q in row["rationals"]] == ref
    # the continuum beside it: exp(-3 lambda / 16), which differs at order 2
    assert row["continuum_rationals"][:3] == ["1", "-3/16", "9/512"]
    assert row["rationals"][2] != row["continuum_rationals"][2]


def test_signed_density_is_formal_and_table_says_so(tmp_path, capsys):
    density = 'density = [{ rect = [0.0, 0.0, 0.5, 0.5], value = -3.0 }]'
    proc = _series(tmp_path, capsys, SU2.format(scheme="linear", density=density), 3,
                   "--json")
    obj = json.loads(proc.stdout)
    row = obj["results"][0]
    assert obj["formal"] is True and row["formal"] is True
    # continuum: exp(-(3/4) lambda mu / 2), mu = 0.25 * (-3) + 0.25 = -1/2 (formal)
    assert [sympy.Rational(q) for q in row["continuum_rationals"]] == \
        _taylor(sympy.exp(sympy.Rational(3, 16) * lam), 3)
    assert row["coefficients"] is not None
    table = _series(tmp_path, capsys, SU2.format(scheme="linear", density=density), 3).stdout
    assert "formal" in table and "series: linear lattice, spacing 0.25 (formal)" in table


def test_budget_warning_and_exit_1(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("WHITEGAUGE_SERIES_BUDGET", "1")
    proc = _series(tmp_path, capsys, SU2.format(scheme="linear", density=""), 9)
    assert proc.returncode == 1
    assert "warning: no coefficients for rect" in proc.stderr
