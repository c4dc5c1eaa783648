"""Every command at the extremes of accepted input (issue 17, item 3): scheme x family
x density through ``exact``, ``run`` (64 samples) and ``series`` (order 2), with every
warning an error. A successful command prints nothing on stderr (``--json``), writes no
NaN or inf, and a null always carries its note. The default suite runs a cross-section
(``exact`` at the densities 1e-320, 1e-9, 1e6, 1e300 and -1e300 for every scheme and
family, ``series`` for SU(2), ``run`` at 1e-320 and 1e300 for U(1), U(2) and SU(3));
the full grid (nine densities, two negative ones, the couplings 1e-100 and 1e100) is
marked slow.

References for the values checked here: the Haar limit of a correlator of two copies
of a loop, ``E[chi(U)^2] / d^2 = 1 / d^2`` for a real irreducible character of
dimension d (Schur orthogonality: T. Brocker, T. tom Dieck, "Representations of
Compact Lie Groups", Springer GTM 98 (1985), Theorem II.4.10, from memory); the SU(3)
fundamental character has Haar mean 0 (the same theorem against the trivial
character); the heat kernel's approach to Haar measure by the upper bound lemma
(P. Diaconis, "Group Representations in Probability and Statistics", IMS Monograph
Series 11 (1988), ch. 3, Lemma 1, from memory). Tolerances: 4 standard errors for estimates
(common practice, no source).
"""

import json
import math
import warnings

import numpy as np
import pytest

from discretize import AreaForm, Loop
from holonomy import Field, WilsonProblem, run_block
from holonomy.cli import main
from holonomy.exact import exact_correlator
from holonomy.groups import make_group
from holonomy.groups._heat import _MIXING_TV, _mixing_time
from holonomy.groups._weights import _weight_system
from tests.conftest import BOX_AND_ELL, spec_text

FAMILIES = [("U", 1), ("U", 2), ("SU", 2), ("SU", 3), ("SO", 3), ("Sp", 1)]
SCHEMES = ["heat", "linear", "gauss", "wilson"]
DENSITIES = [1e-320, 1e-12, 1e-9, 1e-3, 1.0, 1e3, 1e6, 1e12, 1e300]
FAST = (1e-320, 1e-9, 1e6, 1e300, -1e300)
#: signed densities: formal values (exact and series; a formal run is refused beyond
#: its variance limit, see test_formal_run_beyond_its_limit_is_refused)
NEGATIVE = [-1e3, -1e300]
COMMANDS = ["exact", "run", "series"]

#: fields that are null only with a note, and the note's key
NOTES = {"exact": "exact_note", "continuum": "continuum_note", "coefficients": "note",
         "gaussian_matrix": "gaussian_matrix_note", "exact_connected": "exact_note"}


def _spec(family, n, scheme, coupling=1.0, density=1.0) -> str:
    return spec_text(BOX_AND_ELL + '''
[[loops]]
name = "eight"
moves = "R1 U1 L1 U1 R1 D1 L1 D1"
start = [0.0, 0.0]
[[correlators]]
loops = ["box", "ell"]''', name="extreme", family=family,
                     n=n, coupling=coupling, scheme=scheme, field=f"density = {density!r}",
                     samples=64, block=32, seed=5, lead="")


def _cases(densities):
    for scheme in SCHEMES:
        for family, n in FAMILIES:
            if scheme == "wilson" and (family, n) not in (("U", 1), ("SU", 2)):
                continue  # the scheme supports U(1) and SU(2) only (README.md, Schemes)
            for command in COMMANDS:
                for d in densities + ([] if command == "run" else NEGATIVE):
                    fast = d in FAST and {  # the default suite: a cheap cross-section
                        "exact": True, "series": (family, n) == ("SU", 2),
                        "run": d in (1e-320, 1e300) and (family, n) in (
                            ("U", 1), ("U", 2), ("SU", 3))}[command]
                    marks = () if fast else (pytest.mark.slow,)
                    yield pytest.param(scheme, family, n, command, {"density": d},
                                       marks=marks, id=f"{command}-{scheme}-{family}{n}-{d:g}")
                for c in (1e-100, 1e100):  # the coupling's accepted range
                    yield pytest.param(scheme, family, n, command, {"coupling": c},
                                       marks=(pytest.mark.slow,),
                                       id=f"{command}-{scheme}-{family}{n}-coupling{c:g}")


def _problems(obj: dict) -> list[str]:
    """NaN or inf anywhere, and nulls without their note."""
    bad = []
    for key in ("results", "correlators"):
        for row in obj.get(key) or []:
            name = row.get("loop") or "*".join(row.get("loops", []))
            for field, note in NOTES.items():
                if field in row and row[field] is None and not row.get(note):
                    bad.append(f"{name}: {field} null without {note}")
            for field in ("estimate", "stderr"):
                if field in row and row[field] is None:
                    bad.append(f"{name}: {field} null")

    def walk(x, path):
        if isinstance(x, float) and not math.isfinite(x):
            bad.append(f"{path} = {x}")
        elif isinstance(x, dict):
            for k, v in x.items():
                walk(v, f"{path}.{k}")
        elif isinstance(x, list):
            for i, v in enumerate(x):
                walk(v, f"{path}[{i}]")
    walk(obj, "")
    return bad


@pytest.mark.parametrize("scheme,family,n,command,field", list(_cases(DENSITIES)))
def test_commands_at_extreme_densities(scheme, family, n, command, field, tmp_path, capfd):
    path = tmp_path / "extreme.toml"
    path.write_text(_spec(family, n, scheme, **field))
    extra = {"exact": [], "series": ["--order", "2"],
             "run": ["--out", str(tmp_path / "out")]}[command]
    capfd.readouterr()
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # numpy's and scipy's warnings too
        code = main([command, str(path), "--json", *extra])
    out, err = capfd.readouterr()
    assert code == 0, err
    assert err == ""  # --json: stderr carries errors only
    assert _problems(json.loads(out)) == []


def test_product_beyond_double_precision_is_refused(tmp_path, capfd):
    """coupling 1e100 x density 1e300: every time would be inf; refused on
    field.density (exit 2, one line) by every command before any numerics."""
    path = tmp_path / "over.toml"
    path.write_text(_spec("SU", 2, "heat", coupling=1e100, density=1e300))
    for command, extra in (("exact", []), ("series", ["--order", "2"]),
                           ("run", ["--out", str(tmp_path / "o")])):
        capfd.readouterr()
        assert main([command, str(path), *extra]) == 2
        err = capfd.readouterr().err
        assert err.count("\n") == 1 and "error: field.density: " in err, err


@pytest.mark.parametrize("family,n,d", [("SO", 3, 3), ("SU", 2, 2), ("SU", 3, 3)])
@pytest.mark.parametrize("coupling", [1e14, 1e298])
def test_correlator_at_long_times_is_the_haar_value(family, n, d, coupling):
    """Two copies of one loop: E[chi(U) conj(chi(U))] / d^2 = 1 / d^2 under Haar measure
    (Schur orthogonality). The tensor route turned the rounding of its zero Casimir
    eigenvalue (about 1e-16) into exp(-1e-16 t): wrong at t = 1e14, an overflow at
    1e298."""
    group = make_group(family, n, "physics")
    square = Loop.polygon([[0, 0], [1, 0], [1, 1], [0, 1]])
    reverse = Loop.polygon([[0, 0], [0, 1], [1, 1], [1, 0]])  # conj(chi) of the same U
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        value = exact_correlator(group, "fundamental", [square, reverse],
                                 coupling=coupling).value
    assert complex(value).real == pytest.approx(1.0 / d**2, rel=1e-12)


@pytest.mark.parametrize("family,n", [("SU", 3), ("SU", 4), ("SO", 5), ("Sp", 2)])
def test_mixing_time_meets_its_bound(family, n):
    """At the cap T, S(T) = sum_{lam != 0} d_lam^2 e^{-c_lam T} <= 4 eps^2, so the heat
    kernel is within eps = 2.5e-19 of Haar in total variation (upper bound lemma);
    the sum here runs over a radius twice as large as the bound's own."""
    k = 2.0
    T = _mixing_time(family, n, k)
    W = _weight_system(family, n, k)
    # the bound lists |nu|^2 <= (10 + Q(rho)) / g_min (c t0 <= 40 at t0 = 4 / s)
    q_rho, g_min = float(W.rho_x @ W.G @ W.rho_x), float(np.linalg.eigvalsh(W.G).min())
    radius = 2 * math.sqrt((10.0 + q_rho) / g_min) + 2
    nus = W.irreducibles(radius)
    c, dim = W.casimir(nus), np.abs(W.dimension(nus))
    keep = c > 1e-9
    S = float(np.sum(dim[keep] ** 2 * np.exp(-c[keep] * T)))
    assert 0 < S <= 4 * _MIXING_TV**2


@pytest.mark.parametrize("density", [1e6, 1e300])
def test_su3_heat_at_long_cell_times_is_haar(density):
    """SU(3), cell times far beyond the mixing time (62500 and 6e298): the run used to
    draw one piece after another for ever; now the fundamental character has the Haar
    mean 0 within 4 standard errors, and the run is finite."""
    field = Field(coupling=1.0, spacing=0.25, scheme="heat", area=AreaForm(base=density))
    p = WilsonProblem(family="SU", n=3, metric="physics", field=field,
                      loops=(Loop.polygon([[0, 0], [1, 0], [1, 0.5], [0, 0.5]]),),
                      samples=2000, block=1000, seed=3)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        le = p.finish([run_block(p, b) for b in range(p.n_blocks)]).loops[0]
    assert math.isfinite(le.estimate) and le.stderr > 0
    assert abs(le.estimate) <= 4 * le.stderr and abs(le.estimate_imag) <= 4 * le.stderr_imag


def test_decompactify_plot_with_unicode_and_long_names_is_quiet(tmp_path, capfd):
    """Loop names in scripts the font lacks (hiragana, kanji, an emoji, a bidi override)
    and one of 10,000 characters: the plot shortens them, draws missing glyphs as boxes
    without a warning, and the JSON keeps them in full. (The study's plot has the same
    test in test_experiment_robust.py.)"""
    long_name = "\u3042\u6f22\U0001F600\\u202e" + "L" * 10000
    path = tmp_path / "sphere.toml"
    path.write_text(_spec("SU", 2, "heat").replace('name = "box"', f'name = "{long_name}"')
                    .split("[[loops]]\nname = \"ell\"")[0]
                    + '[surface]\nkind = "sphere"\narea = 20.0\n')
    capfd.readouterr()
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        code = main(["decompactify", str(path), "--areas", "4,8", "--order", "2",
                     "--out", str(tmp_path / "d"), "--json"])
    out, err = capfd.readouterr()
    assert code == 0 and err == "", err
    assert (tmp_path / "d" / "decompactify.png").stat().st_size > 0
    saved = json.loads((tmp_path / "d" / "decompactify.json").read_text())
    assert any(len(r["loop"]) > 10000 for r in saved["results"])


def test_formal_run_beyond_its_limit_is_refused(tmp_path, capfd):
    """density -1e300 with a Gaussian scheme: the complex rotation's exponentials
    would overflow; `run` refuses it on field.density (exit 2, one line), `exact` gives
    a null with a precision note."""
    path = tmp_path / "formal.toml"
    path.write_text(_spec("SU", 2, "gauss", density=-1e300))
    capfd.readouterr()
    assert main(["run", str(path), "--out", str(tmp_path / "o")]) == 2
    err = capfd.readouterr().err
    assert err.count("\n") == 1 and "error: field.density: " in err, err
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert main(["exact", str(path), "--json"]) == 0
    out, err = capfd.readouterr()
    row = json.loads(out)["results"][0]
    assert err == "" and row["exact"] is None and "precision limit" in row["exact_note"]


def test_exact_value_below_the_double_range_is_null_with_a_note(tmp_path, capfd):
    """SU(3), power:64 on the unit square: the hook expansion (Macdonald 1995, I.3,
    p_n as a signed sum of hook Schur functions; Rains 1997 for E[s_lambda(U_t)])
    summed in mpmath at 50 digits gives about 1.7e-280 wound once and 2e-1155 wound
    twice. The first is printed; the second used to print as an exact 0 and is now
    null with a precision-limit note, in `exact` and in `run`."""
    import sys

    import mpmath

    from holonomy.exact._unitary import _hooks, unitary_casimir, unitary_dimension

    def hook_sum(n):  # E[tr U^n] / 3 on SU(3), physics metric (k = 2), t = 1
        return sum(sign * unitary_dimension(lam, 3)
                   * mpmath.exp(-mpmath.mpf(unitary_casimir(lam, 3, k=2.0, special=True)) / 2)
                   for sign, lam in _hooks(n, 3)) / 3

    with mpmath.workdps(50):
        once, twice = hook_sum(64), hook_sum(128)
    assert sys.float_info.min < once < 1e-270 and 0 < twice < mpmath.mpf("1e-1000")
    text = _spec("SU", 3, "heat").replace("[run]", '[observable]\nrep = "power:64"\n[run]')
    text = text.replace('[[loops]]\nname = "box"\n',
                        '[[loops]]\nname = "box"\nturns = 2\n').replace(
        "[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]",
        "[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]")
    text += '[[loops]]\nname = "square"\nvertices = [[0, 0], [1, 0], [1, 1], [0, 1]]\n'
    path = tmp_path / "below.toml"
    path.write_text(text)
    for command, extra in (("exact", []), ("run", ["--out", str(tmp_path / "o")])):
        capfd.readouterr()
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            assert main([command, str(path), "--json", *extra]) == 0
        rows = {r["loop"]: r for r in json.loads(capfd.readouterr().out)["results"]}
        for key, note in (("exact", "exact_note"), ("continuum", "continuum_note")):
            assert rows["box"][key] is None and "precision limit" in rows["box"][note]
            assert rows["square"][key] == pytest.approx(float(once), rel=1e-10)
        assert _problems({"results": list(rows.values())}) == []
