"""Spec parsing and validation: the issue's example, and every bad input the issue
lists, each exiting 2 with one line that names the key path.

The rules themselves come from the issue (the spec keys are a contract) and from
TOML v1.0.0 (tomllib, Python standard library) for the syntax.
"""

import hashlib
import re

import pytest

from discretize import Loop
from holonomy.cli import main
from holonomy.groups import make_group
from noise import ArgumentError
from holonomy.experiment import SpecError, load_spec, parse_spec

from tests.conftest import ISSUE_SPEC, TINY_SPEC


def test_issue_example_parses():
    spec = parse_spec(ISSUE_SPEC, name="file-stem")
    assert spec.name == "box-and-ring"
    assert (spec.family, spec.n, spec.metric) == ("SU", 2, "physics")
    assert (spec.coupling, spec.spacing, spec.gauge, spec.scheme) == (1.0, 0.125, "axial-y",
                                                                      "heat")
    assert spec.reference == 0.0 and spec.density == 1.0
    assert spec.names == ("box", "ring", "ell")
    assert spec.loops[0].vertices[2] == (2.0, 1.0)
    ring = spec.loops[1]
    assert (ring.kind, ring.center, ring.radius, ring.sides, ring.turns) == (
        "circle", (1.0, 3.0), 0.5, 64, 2)
    assert spec.loops[2].moves == "R4 U2 L2 U2 L2 D4"
    assert (spec.rep, spec.samples, spec.block, spec.seed) == ("fundamental", 100000, 4096,
                                                               20261202)
    assert spec.sha256 == hashlib.sha256(ISSUE_SPEC.encode()).hexdigest()


def test_defaults_and_name_from_file(tmp_path):
    text = TINY_SPEC.replace('name = "tiny"\n', "").replace("block = 64\n", "")
    path = tmp_path / "my-stem.toml"
    path.write_text(text)
    spec = load_spec(path)
    assert spec.name == "my-stem"
    assert (spec.gauge, spec.scheme, spec.reference, spec.rep, spec.block) == (
        "axial-y", "heat", None, "fundamental", 4096)
    assert spec.loops[0].turns == 1


def test_block_larger_than_samples_is_fine():
    spec = parse_spec(TINY_SPEC.replace("block = 64", "block = 100000"))
    assert spec.block == 100000 and spec.samples == 600


def test_number_metric_and_density_rects():
    text = TINY_SPEC.replace('metric = "physics"', "metric = 3.5").replace(
        'scheme = "heat"', 'scheme = "heat"\ndensity = [{rect = [0, 0, 1, 1], value = 2.0}]')
    spec = parse_spec(text)
    assert spec.metric == 3.5
    assert spec.density == ((0.0, 0.0, 1.0, 1.0, 2.0),)


def test_negative_density_allowed_for_formal_purposes():
    text = TINY_SPEC.replace('scheme = "heat"', 'scheme = "heat"\ndensity = -1.0')
    assert parse_spec(text, purpose="exact").signed
    assert parse_spec(text, purpose="series").signed
    with pytest.raises(SpecError, match=r"^field\.density: .*formal route"):
        parse_spec(text, purpose="study")
    # `run` estimates it formally for the Gaussian schemes, and names field.scheme else
    with pytest.raises(SpecError, match=r"^field\.scheme: got 'heat'.*linear, gauss"):
        parse_spec(text, purpose="run")
    assert parse_spec(text.replace('scheme = "heat"', 'scheme = "gauss"'),
                      purpose="run").signed


def _sub(old, new, text=TINY_SPEC):
    assert old in text, old
    return text.replace(old, new, 1)


# (case id, spec text, expected key path): the issue's list, then a few more
BAD = [
    ("missing metric", _sub('metric = "physics"\n', ""), "group.metric"),
    ("unknown family", _sub('family = "SU"', 'family = "XU"'), "group.family"),
    ("n = 0", _sub("n = 2", "n = 0", _sub('family = "SU"', 'family = "U"')), "group.n"),
    ("SU(1)", _sub("n = 2", "n = 1"), "group.n"),
    ("string for a number", _sub("coupling = 1.0", 'coupling = "one"'), "field.coupling"),
    ("negative coupling", _sub("coupling = 1.0", "coupling = -1.0"), "field.coupling"),
    ("zero spacing", _sub("spacing = 0.25", "spacing = 0"), "field.spacing"),
    ("unknown scheme", _sub('scheme = "heat"', 'scheme = "cubic"'), "field.scheme"),
    ("unknown gauge", _sub('scheme = "heat"', 'scheme = "heat"\ngauge = "coulomb"'),
     "field.gauge"),
    ("two of vertices/circle/moves",
     _sub('name = "box"', 'name = "box"\nmoves = "R1 U1 L1 D1"'), "loops[0]"),
    ("none of vertices/circle/moves",
     _sub('moves = "R2 U1 L1 U1 L1 D2"\nstart = [0.0, 0.0]\n', ""), "loops[1]"),
    ("fewer than three vertices",
     _sub("vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]",
          "vertices = [[0.0, 0.0], [1.0, 0.0]]"), "loops[0].vertices"),
    ("moves that do not close", _sub('"R2 U1 L1 U1 L1 D2"', '"R2 U1 L1 U1 L1 D1"'),
     "loops[1].moves"),
    ("circle with sides < 3",
     _sub("vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]",
          "circle = { center = [0.0, 0.0], radius = 0.5, sides = 2 }"),
     "loops[0].circle.sides"),
    ("circle with negative radius",
     _sub("vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]",
          "circle = { center = [0.0, 0.0], radius = -0.5, sides = 8 }"),
     "loops[0].circle.radius"),
    ("turns = 0", _sub('name = "ell"', 'name = "ell"\nturns = 0'), "loops[1].turns"),
    ("unknown rep", _sub("[run]", '[observable]\nrep = "antisymmetric"\n[run]'),
     "observable.rep"),
    ("spin for SU(3)", _sub("n = 2", "n = 3", _sub("[run]", '[observable]\nrep = "spin:3/2"\n[run]')),
     "observable.rep"),
    ("samples = 0", _sub("samples = 600", "samples = 0"), "run.samples"),
    ("block = 0", _sub("block = 64", "block = 0"), "run.block"),
    # a signed density: `run` has a formal estimate for linear and gauss only
    ("negative density with run", _sub('scheme = "heat"', 'scheme = "heat"\ndensity = -0.5'),
     "field.scheme"),
    ("negative density rect with run",
     _sub('scheme = "heat"', 'scheme = "heat"\ndensity = [{rect = [0, 0, 1, 1], value = -2}]'),
     "field.scheme"),
    ("float for an integer", _sub("samples = 600", "samples = 600.0"), "run.samples"),
    ("negative seed", _sub("seed = 7", "seed = -7"), "run.seed"),
    ("unknown key", _sub("[run]", "[run]\nsamples_per_block = 3"), "run.samples_per_block"),
    ("duplicate loop names", _sub('name = "ell"', 'name = "box"'), "loops[1].name"),
    ("negative metric", _sub('metric = "physics"', "metric = -2"), "group.metric"),
    ("boolean for a number", _sub("spacing = 0.25", "spacing = true"), "field.spacing"),
]


@pytest.mark.parametrize("case, text, key", BAD, ids=[b[0] for b in BAD])
def test_bad_spec_raises_with_key_path(case, text, key):
    with pytest.raises(SpecError, match="^" + re.escape(key) + ": ") as info:
        parse_spec(text, purpose="run")
    assert info.value.key == key


@pytest.mark.parametrize("case, text, key", BAD, ids=[b[0] for b in BAD])
def test_bad_spec_cli_exit_2_one_line(case, text, key, tmp_path, capsys):
    path = tmp_path / "bad.toml"
    path.write_text(text)
    code = main(["run", str(path), "--out", str(tmp_path / "out"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2
    assert err.startswith(f"whitegauge: error: {key}: ")
    assert err.count("\n") == 1 and "Traceback" not in err
    assert not (tmp_path / "out" / "results.json").exists()


def test_malformed_toml_names_the_line(tmp_path, capsys):
    path = tmp_path / "broken.toml"
    path.write_text(_sub("coupling = 1.0", "coupling = = 1.0"))
    line = 1 + _sub("coupling = 1.0", "coupling = = 1.0").splitlines().index("coupling = = 1.0")
    assert main(["exact", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"whitegauge: error: {path}: line {line}: malformed TOML")
    assert err.count("\n") == 1


def test_missing_file(tmp_path, capsys):
    path = tmp_path / "nope.toml"
    assert main(["run", str(path)]) == 2
    assert capsys.readouterr().err == f"whitegauge: error: {path}: no such file; expected a TOML spec file\n"


def test_unwritable_output_folder(tmp_path, capsys):
    path = tmp_path / "tiny.toml"
    path.write_text(TINY_SPEC)
    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder")
    assert main(["run", str(path), "--out", str(blocker / "sub"), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("whitegauge: error: --out: cannot write to")
    assert err.count("\n") == 1


@pytest.mark.parametrize("argv, key", [
    (["run", "SPEC", "--workers", "0"], "--workers"),
    (["series", "SPEC", "--order", "-1"], "--order"),
    (["study", "SPEC", "--spacings", "0.5,-0.25"], "--spacings"),
    (["study", "SPEC", "--spacings", "0.5,0.25", "--schemes", "heat,cubic"], "--schemes"),
])
def test_bad_options_exit_2(argv, key, tmp_path, capsys):
    path = tmp_path / "tiny.toml"
    path.write_text(TINY_SPEC)
    argv = [str(path) if a == "SPEC" else a for a in argv]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"whitegauge: error: {key}: got ")
    assert err.count("\n") == 1


def test_spin_for_su2_and_power_accepted():
    spec = parse_spec(_sub("[run]", '[observable]\nrep = "spin:3/2"\n[run]'))
    assert spec.rep == "spin:3/2"
    spec = parse_spec(_sub("[run]", '[observable]\nrep = "spin:1.5"\n[run]'))
    assert spec.rep == "spin:3/2"      # the engine's canonical spelling
    spec = parse_spec(_sub("[run]", '[observable]\nrep = "power:2"\n[run]'))
    assert spec.rep == "power:2"


# Values the spec once passed and the engine then refused under another key: the spec
# now calls the engine's own grammar (holonomy.groups.parse_rep, parse_metric;
# discretize.parse_moves), so each is refused once, at the spec, on its own key, and the
# engine refuses exactly the same values.
@pytest.mark.parametrize("old,new,key,rule", [
    ('rep = "fundamental"', 'rep = "power:-2"', "observable.rep",
     "got 'power:-2'; expected power:k with k an integer >= 1"),
    ('"R2 U1 L1 U1 L1 D2"', '"R U L D"', "loops[1].moves",
     "bad step 'R'; expected R, U, L or D followed by a positive count"),
    ('metric = "physics"', 'metric = "Large_N"', "group.metric", "got 'Large_N'; expected"),
])
def test_refused_once_at_the_spec_with_its_key(old, new, key, rule):
    text = _sub(old, new, TINY_SPEC.replace("[run]", '[observable]\nrep = "fundamental"\n[run]'))
    with pytest.raises(SpecError) as info:
        parse_spec(text)
    assert info.value.key == key
    assert info.value.rule.startswith(rule)
    # the engine agrees: the same value is refused there (same argument, same rule)
    engine = {"observable.rep": lambda: make_group("SU", 2).rep("power:-2"),
              "loops[1].moves": lambda: Loop.from_moves("R U L D"),
              "group.metric": lambda: make_group("SU", 2, "Large_N")}[key]
    with pytest.raises(ArgumentError) as info:
        engine()
    assert info.value.argument == key.split(".")[-1].replace("rep", "rep")
    assert info.value.rule.startswith(rule[:20])
