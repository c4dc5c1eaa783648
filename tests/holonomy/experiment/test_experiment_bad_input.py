"""Bad input, systematically (issue 7, part 1): a table of malformed specs, files and
command lines. Each CLI case exits 2 with exactly one stderr line
``whitegauge: error: <key path>: <rule>`` and no traceback; the same spec through the
Python API (``load_spec`` then ``run_spec``) raises a ValueError with the same text.

The rules themselves are the spec contract of issue 5 (holonomy/experiment/_spec.py);
the size limits are ``holonomy.experiment.LIMITS``. No external reference applies: these
are checks of our own contract.
"""

import re

import pytest

from holonomy.cli import main
from holonomy.experiment import SpecError, load_spec, run_spec

from tests.conftest import BASE, mutate, wg

M = mutate
# (id, spec text, key path, a piece of the rule)
SPEC_CASES = [
    # missing keys and tables
    ("missing-metric", M(('metric = "physics"\n', "")), "group.metric", "missing"),
    ("missing-group", M(('[group]\nfamily = "SU"\nn = 2\nmetric = "physics"\n', "")),
     "group", "missing table"),
    ("missing-loops", BASE.split("[[loops]]")[0] + "[run]\nsamples = 4\nseed = 1\n",
     "loops", "missing"),
    ("missing-run", M(("[run]\nsamples = 64\nblock = 32\nseed = 7\n", "")), "run",
     "missing table"),
    ("missing-seed", M(("seed = 7\n", "")), "run.seed", "missing"),
    ("missing-start", M(('start = [0.0, 0.0]\n', "")), "loops[1].start", "missing"),
    ("circle-missing-center", M(("vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]",
                                 "circle = { radius = 0.5, sides = 8 }")),
     "loops[0].circle.center", "missing"),
    ("empty-file", "", "group", "missing table"),
    # types
    ("family-number", M(('family = "SU"', "family = 3")), "group.family", "got 3"),
    ("n-float", M(("n = 2", "n = 2.5")), "group.n", "an integer"),
    ("n-string", M(("n = 2", 'n = "2"')), "group.n", "got string '2'"),
    ("coupling-string", M(("coupling = 1.0", 'coupling = "1.0"')), "field.coupling",
     "got string '1.0'"),
    ("coupling-bool", M(("coupling = 1.0", "coupling = true")), "field.coupling",
     "got boolean true"),
    ("reference-string", M(("scheme = \"heat\"", 'scheme = "heat"\nreference = "low"')),
     "field.reference", "a finite number"),
    ("samples-float", M(("samples = 64", "samples = 64.0")), "run.samples", "an integer"),
    ("seed-bool", M(("seed = 7", "seed = true")), "run.seed", "got boolean true"),
    ("group-not-table", "group = 3\n" + M(('[group]\nfamily = "SU"\nn = 2\nmetric = "physics"\n',
                                          "")),
     "group", "expected a table"),
    ("loops-not-tables", BASE.split("[[loops]]")[0].replace('name = "hard"\n',
                                                          'name = "hard"\nloops = [1, 2]\n')
     + "[run]\nsamples = 4\nseed = 1\n", "loops[0]", "expected a table"),
    ("loop-name-number", M(('name = "box"', "name = 5")), "loops[0].name",
     "non-empty string"),
    ("vertex-string", M(("[1.0, 0.0], [1.0, 0.5]", '["a", 0.0], [1.0, 0.5]')),
     "loops[0].vertices[1][0]", "a finite number"),
    ("vertex-three-coords", M(("[[0.0, 0.0], [1.0", "[[0.0, 0.0, 1.0], [1.0")),
     "loops[0].vertices[0]", "a point [x, y]"),
    ("rep-number", M(('rep = "fundamental"', "rep = 2")), "observable.rep", "got 2"),
    ("name-empty", M(('name = "hard"', 'name = ""')), "name", "non-empty string"),
    # ranges
    ("n-zero", M(("n = 2", "n = 0")), "group.n", "an integer >= 2 for SU"),
    ("su-one", M(("n = 2", "n = 1")), "group.n", "an integer >= 2 for SU"),
    ("metric-negative", M(('metric = "physics"', "metric = -1.0")), "group.metric",
     "[1e-6, 1e6]"),
    ("coupling-negative", M(("coupling = 1.0", "coupling = -1.0")), "field.coupling",
     "a number > 0"),
    ("spacing-zero", M(("spacing = 0.25", "spacing = 0")), "field.spacing", "a number > 0"),
    ("density-negative-run", M(('scheme = "heat"', 'scheme = "heat"\ndensity = -1.0')),
     "field.scheme", "one of linear, gauss"),
    ("density-rect-short", M(('scheme = "heat"',
                              'scheme = "heat"\ndensity = [{rect = [0, 0, 1], value = 1}]')),
     "field.density[0].rect", "four finite numbers"),
    ("density-rect-reversed", M(('scheme = "heat"',
                                 'scheme = "heat"\ndensity = [{rect = [1, 0, 0, 1], value = 1}]')),
     "field.density[0].rect", "x1 > x0"),
    ("two-vertices", M(("[[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]",
                        "[[0.0, 0.0], [1.0, 0.0]]")), "loops[0].vertices", "at least three"),
    ("circle-sides-2", M(("vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]",
                          "circle = { center = [0.0, 0.0], radius = 0.5, sides = 2 }")),
     "loops[0].circle.sides", "an integer >= 3"),
    ("circle-radius-0", M(("vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]",
                           "circle = { center = [0.0, 0.0], radius = 0, sides = 8 }")),
     "loops[0].circle.radius", "a number > 0"),
    ("turns-zero", M(('name = "box"', 'name = "box"\nturns = 0')), "loops[0].turns",
     "an integer >= 1"),
    ("moves-open", M(('"R2 U1 L1 U1 L1 D2"', '"R2 U1 L1"')), "loops[1].moves",
     "does not close"),
    ("moves-bad-token", M(('"R2 U1 L1 U1 L1 D2"', '"R2 X1 L2"')), "loops[1].moves",
     "bad step 'X1'"),
    ("moves-zero-count", M(('"R2 U1 L1 U1 L1 D2"', '"R0 U1 D1"')), "loops[1].moves",
     "positive count"),
    ("moves-empty", M(('"R2 U1 L1 U1 L1 D2"', '"  "')), "loops[1].moves", "a string of steps"),
    ("samples-zero", M(("samples = 64", "samples = 0")), "run.samples", "an integer > 0"),
    ("block-zero", M(("block = 32", "block = 0")), "run.block", "an integer > 0"),
    ("seed-negative", M(("seed = 7", "seed = -1")), "run.seed", "an integer >= 0"),
    ("collinear-vertices", M(("[1.0, 0.0], [1.0, 0.5], [0.0, 0.5]",
                              "[1.0, 0.0], [2.0, 0.0], [3.0, 0.0]")), "loops[0]",
     "one line"),
    # unknown names
    ("family-unknown", M(('family = "SU"', 'family = "XY"')), "group.family", '"SO"'),
    ("metric-unknown", M(('metric = "physics"', 'metric = "euclid"')), "group.metric",
     '"large-n"'),
    ("gauge-unknown", M(('scheme = "heat"', 'scheme = "heat"\ngauge = "axial-z"')),
     "field.gauge", '"axial-x"'),
    ("scheme-unknown", M(('scheme = "heat"', 'scheme = "rk4"')), "field.scheme", '"wilson"'),
    ("rep-unknown", M(('rep = "fundamental"', 'rep = "spinor"')), "observable.rep",
     '"adjoint"'),
    ("rep-power-zero", M(('rep = "fundamental"', 'rep = "power:0"')), "observable.rep",
     "an integer >= 1"),
    ("top-key-unknown", M(('name = "hard"', 'name = "hard"\nruns = 3')), "runs",
     "unknown key"),
    ("field-key-misspelt", M(("coupling = 1.0", "coupling = 1.0\ncoupling_ = 2.0")),
     "field.coupling_", "unknown key"),
    ("density-key-unknown", M(('scheme = "heat"', 'scheme = "heat"\ndensity = '
                               '[{rect = [0, 0, 1, 1], value = 2, extra = 1}]')),
     "field.density[0].extra", "unknown key"),
    ("circle-key-unknown", M(("vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]",
                              "circle = { center = [0.0, 0.0], radius = 0.5, sides = 8, "
                              "r = 1 }")), "loops[0].circle.r", "unknown key"),
    # contradictory keys
    ("vertices-and-moves", M(('name = "box"', 'name = "box"\nmoves = "R1 U1 L1 D1"')),
     "loops[0]", "has vertices and moves"),
    ("no-shape", M(("vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]\n", "")),
     "loops[0]", "has none"),
    ("start-with-vertices", M(('name = "box"', 'name = "box"\nstart = [0.0, 0.0]')),
     "loops[0].start", "only applies"),
    ("spin-for-su3", M(("n = 2", "n = 3"), ('rep = "fundamental"', 'rep = "spin:3/2"')),
     "observable.rep", "need SU(2)"),
    # duplicate names, empty lists
    ("duplicate-loop-names", M(('name = "ell"', 'name = "box"')), "loops[1].name",
     "distinct names"),
    ("empty-loop-list", BASE.split("[[loops]]")[0].replace('name = "hard"\n',
                                                         'name = "hard"\nloops = []\n')
     + "[run]\nsamples = 4\nseed = 1\n", "loops", "at least one"),
    # NaN and infinities (as strings and as TOML values), huge numbers
    ("coupling-nan-string", M(("coupling = 1.0", 'coupling = "NaN"')), "field.coupling",
     "got string 'NaN'"),
    ("metric-nan-string", M(('metric = "physics"', 'metric = "nan"')), "group.metric",
     "got 'nan'"),
    ("coupling-nan", M(("coupling = 1.0", "coupling = nan")), "field.coupling", "got nan"),
    ("coupling-inf", M(("coupling = 1.0", "coupling = inf")), "field.coupling", "got inf"),
    ("coupling-1e400", M(("coupling = 1.0", "coupling = 1e400")), "field.coupling",
     "got inf"),
    ("coupling-1e-320", M(("coupling = 1.0", "coupling = 1e-320")), "field.coupling",
     "[1e-100, 1e100]"),
    ("metric-subnormal", M(('metric = "physics"', "metric = 1e-320")), "group.metric",
     "[1e-6, 1e6]"),
    ("vertex-nan", M(("[1.0, 0.0], [1.0, 0.5]", "[nan, 0.0], [1.0, 0.5]")),
     "loops[0].vertices[1][0]", "a finite number"),
    ("samples-huge", M(("samples = 64", "samples = 1000000000000000000000000000000")),
     "run.samples", "<= 1e+12"),
    ("block-huge", M(("block = 32", "block = 100000000000000")), "run.block", "<= 1e+06"),
    ("n-huge", M(("n = 2", "n = 100000")), "group.n", "at most 32"),
    ("spin-huge", M(('rep = "fundamental"', 'rep = "spin:100001/2"')), "observable.rep",
     "2j + 1 <= 64"),
    ("power-huge", M(('rep = "fundamental"', 'rep = "power:100000000000000000000"')),
     "observable.rep", "k <= 64"),
    ("moves-huge-count", M(('"R2 U1 L1 U1 L1 D2"', '"R200000000000000000000 U1 '
                            'L200000000000000000000 D1"')), "loops[1].moves",
     "at most 1000000 steps"),
    ("spacing-tiny", M(("spacing = 0.25", "spacing = 1e-300")), "field.spacing",
     "cells"),
    ("spacing-small-grid-too-big", M(("spacing = 0.25", "spacing = 1e-6")),
     "field.spacing", "at most 1e+07"),
    ("vertex-1e300", M(("[1.0, 0.0], [1.0, 0.5]", "[1e300, 0.0], [1e300, 0.5]")),
     "field.spacing", "cells"),
    ("spacing-below-resolution", M(("spacing = 0.25", "spacing = 1e-10"),
                                   ("[[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]",
                                    "[[1e6, 1e6], [1e6, 1e6], [1e6, 1e6], [1e6, 1e6]]"),
                                   ('start = [0.0, 0.0]', 'start = [1e6, 1e6]'),
                                   ('"R2 U1 L1 U1 L1 D2"', '"R1 U1 L1 D1"')),
     "field.spacing", "resolution"),
    # malformed and truncated TOML
    ("toml-unclosed-bracket", M(("spacing = 0.25", "spacing = [0.25")), "SPEC",
     "malformed TOML"),
    ("toml-truncated", BASE[: BASE.index("[1.0, 0.5]") + 4], "SPEC", "malformed TOML"),
    ("toml-duplicate-key", M(("n = 2", "n = 2\nn = 3")), "SPEC", "malformed TOML"),
]

FILE_CASES = [
    # (id, how to make SPEC in tmp_path, rule)
    ("non-utf8", lambda p: (p.write_bytes(b'name = "caf\xe9"\n' + BASE.encode()[14:]), p)[1],
     "cannot read the spec file"),
    ("truncated-utf8", lambda p: (p.write_bytes(BASE.replace('"hard"', '"h\u00e9"')
                                                .encode()[:10]), p)[1],
     "cannot read the spec file"),
    ("directory", lambda p: (p.mkdir(), p)[1], "is a directory"),
    ("missing-file", lambda p: p, "no such file"),
]

CLI_CASES = [
    # (id, args after SPEC, key, rule)
    ("workers-zero", ["--workers", "0"], "--workers", "an integer from 1 to 256"),
    ("workers-text", ["--workers", "abc"], "--workers", "an integer from 1 to 256"),
    ("out-under-a-file", ["--out", "{tmp}/afile/sub"], "--out", "expected a writable folder"),
    ("unknown-option", ["--fast"], "unrecognized arguments", "--fast"),
]


def _one_error_line(err: str, key: str, rule: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    line = lines[0]
    assert line.startswith(f"whitegauge: error: {key}"), line
    assert rule in line, line
    return line.removeprefix("whitegauge: error: ")


def _write(tmp_path, text: str):
    spec = tmp_path / "case.toml"
    spec.write_text(text)
    return spec


def test_table_is_large_enough():
    assert len(SPEC_CASES) + len(FILE_CASES) + len(CLI_CASES) >= 40
    assert len({c[0] for c in SPEC_CASES}) == len(SPEC_CASES)


@pytest.mark.parametrize("case", SPEC_CASES, ids=[c[0] for c in SPEC_CASES])
def test_spec_case_cli_and_api(case, tmp_path, capsys):
    _, text, key, rule = case
    spec = _write(tmp_path, text)
    key = str(spec) if key == "SPEC" else key
    out = tmp_path / "out"
    code = main(["run", str(spec), "--out", str(out), "--quiet"])
    cap = capsys.readouterr()
    assert code == 2, cap.err
    msg = _one_error_line(cap.err, key, rule)
    assert not (out / "run.sqlite").exists()  # refused before any work
    with pytest.raises(ValueError, match=re.escape(msg)) as info:
        run_spec(load_spec(spec), out=tmp_path / "api")
    assert isinstance(info.value, SpecError) and info.value.key == key
    assert str(info.value) == msg


@pytest.mark.parametrize("case", FILE_CASES, ids=[c[0] for c in FILE_CASES])
def test_file_case_cli_and_api(case, tmp_path, capsys):
    _, make, rule = case
    spec = make(tmp_path / "case.toml")
    code = main(["run", str(spec), "--out", str(tmp_path / "out"), "--quiet"])
    cap = capsys.readouterr()
    assert code == 2
    msg = _one_error_line(cap.err, str(spec), rule)
    with pytest.raises(ValueError, match=re.escape(msg)):
        load_spec(spec)


@pytest.mark.parametrize("case", CLI_CASES, ids=[c[0] for c in CLI_CASES])
def test_cli_flag_case(case, tmp_path, capsys):
    _, extra, key, rule = case
    spec = _write(tmp_path, BASE)
    (tmp_path / "afile").write_text("not a folder")
    extra = [a.format(tmp=tmp_path) for a in extra]
    code = main(["run", str(spec), *extra, "--quiet"])
    cap = capsys.readouterr()
    assert code == 2
    _one_error_line(cap.err, key, rule)


def test_out_folder_refused_before_work_through_the_api(tmp_path):
    (tmp_path / "afile").write_text("x")
    calls = []
    import holonomy.experiment._runner as runner

    orig = runner.execute
    try:
        runner.execute = lambda *a, **k: calls.append(1) or orig(*a, **k)
        with pytest.raises(ValueError, match=r"--out: cannot write to .*expected a "
                                             r"writable folder"):
            run_spec(load_spec(_write(tmp_path, BASE)), out=tmp_path / "afile" / "sub")
    finally:
        runner.execute = orig
    assert calls == []


# direct API calls: the engine's own validation (argument in backticks, value, rule)
def _api_cases():
    from discretize import Loop, parse_moves
    from holonomy import Field, WilsonProblem
    from holonomy.experiment import parse_spec

    sq = Loop.polygon([[0, 0], [1, 0], [1, 1], [0, 1]])
    fld = Field(coupling=1.0, spacing=0.5)
    wp = dict(family="SU", n=2, metric="physics", field=fld, loops=(sq,), samples=8,
              block=8, seed=0)
    return [
        ("field-coupling", lambda: Field(coupling=-1.0, spacing=0.5), ValueError,
         r"`coupling` must be a positive finite number, got -1.0"),
        ("field-coupling-type", lambda: Field(coupling="1", spacing=0.5), TypeError,
         r"`coupling` must be a positive number, got '1'"),
        ("field-spacing-nan", lambda: Field(coupling=1.0, spacing=float("nan")), ValueError,
         r"`spacing` must be a positive finite number, got nan"),
        ("field-gauge", lambda: Field(coupling=1.0, spacing=0.5, gauge="z"), ValueError,
         r"`gauge` must be one of"),
        ("problem-no-loops", lambda: WilsonProblem(**{**wp, "loops": ()}), ValueError,
         r"`loops` is empty"),
        ("problem-dup-names", lambda: WilsonProblem(**{**wp, "loops": (sq, sq),
                                                       "names": ("a", "a")}),
         ValueError, r"`names` must be distinct"),
        ("problem-samples", lambda: WilsonProblem(**{**wp, "samples": 0}), ValueError,
         r"`samples` must be an integer >= 1, got 0"),
        ("problem-seed", lambda: WilsonProblem(**{**wp, "seed": -3}), ValueError,
         r"`seed` must be a non-negative integer, got -3"),
        ("moves-type", lambda: parse_moves(5), TypeError, r"`moves` must be a string"),
        ("moves-token", lambda: parse_moves("R1 Q2"), ValueError,
         r"`moves` does not parse at token 2"),
        ("polygon-nan", lambda: Loop.polygon([[0, 0], [1, float("nan")], [0, 1]]),
         ValueError, r"`vertices`"),
        ("circle-radius", lambda: Loop.circle((0, 0), -1.0, 8), ValueError, r"`radius`"),
        ("circle-sides", lambda: Loop.circle((0, 0), 1.0, 2), ValueError, r"`sides`"),
        ("parse-purpose", lambda: parse_spec(BASE, purpose="fit"), ValueError,
         r"`purpose` must be one of"),
    ]


@pytest.mark.parametrize("i", range(14))
def test_api_case(i):
    name, call, exc, pattern = _api_cases()[i]
    with pytest.raises(exc, match=pattern):
        call()


def test_subprocess_cases_have_no_traceback(tmp_path):
    """A few cases through a real process: the exit code and stderr a script sees."""
    for _, text, key, rule in (SPEC_CASES[0], SPEC_CASES[-1], SPEC_CASES[60]):
        spec = _write(tmp_path, text)
        p = wg("run", spec, "--out", tmp_path / "o", "--quiet")
        assert p.returncode == 2, p.stderr
        _one_error_line(p.stderr, str(spec) if key == "SPEC" else key, rule)


@pytest.mark.slow
@pytest.mark.parametrize("case", SPEC_CASES, ids=[c[0] for c in SPEC_CASES])
def test_every_spec_case_in_a_subprocess(case, tmp_path):
    _, text, key, rule = case
    spec = _write(tmp_path, text)
    p = wg("run", spec, "--out", tmp_path / "o", "--quiet")
    assert p.returncode == 2, p.stderr
    _one_error_line(p.stderr, str(spec) if key == "SPEC" else key, rule)
