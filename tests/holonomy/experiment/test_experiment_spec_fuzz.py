"""Property-based fuzzing (issue 7, part 1): the spec parser, the moves parser and the
polygon constructors raise only their documented errors (ValueError, TypeError; the spec
parser only SpecError, a ValueError) on any input. Hypothesis generates the inputs
(MacIver et al. 2019, "Hypothesis: a new approach to property-based testing", JOSS 4(43)).

Default suite: a few dozen examples each; slow suite: 2,000 each.
"""

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from discretize import Loop, parse_moves
from holonomy.experiment import SpecError, parse_spec
from holonomy.experiment._runner import build_problem

from tests.conftest import BASE

FAST = settings(max_examples=40, deadline=None, derandomize=True,
                suppress_health_check=[HealthCheck.too_slow])
SLOW = settings(max_examples=2000, deadline=None, derandomize=True,
                suppress_health_check=[HealthCheck.too_slow])

# --------------------------------------------------------------------- spec parser

_floats = st.floats(allow_nan=True, allow_infinity=True, width=64)


def _toml_float(x: float) -> str:
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return repr(x)


_scalar = st.one_of(
    st.integers(min_value=-10**25, max_value=10**25).map(str),
    _floats.map(_toml_float),
    st.sampled_from(["true", "false", '"NaN"', '"inf"', '"1.0"', '""', '"SU"', '"U"',
                     '"heat"', '"wilson"', '"axial-x"', '"spin:1/2"', '"power:-2"',
                     '"R1 U1 L1 D1"', '"R2 U1 L1 U1 L1 D2"', "0", "1", "2", "3", "-1",
                     "0.5", "1e-12", "1e12", "[]", "{}"]),
    st.text(alphabet="abcRULD0123456789 :/.-\\\"'", max_size=12).map(
        lambda s: '"' + s.replace("\\", "\\\\").replace('"', '\\"') + '"'),
)
_value = st.recursive(
    _scalar,
    lambda inner: st.one_of(
        st.lists(inner, max_size=5).map(lambda xs: "[" + ", ".join(xs) + "]"),
        st.dictionaries(st.sampled_from(["center", "radius", "sides", "rect", "value",
                                         "x"]), inner, max_size=4).map(
            lambda d: "{" + ", ".join(f"{k} = {v}" for k, v in d.items()) + "}")),
    max_leaves=8,
)
_LINES = [i for i, line in enumerate(BASE.splitlines()) if " = " in line]


@st.composite
def _mutated_spec(draw):
    lines = BASE.splitlines()
    for _ in range(draw(st.integers(1, 4))):
        i = draw(st.sampled_from(_LINES))
        key = lines[i].split(" = ")[0]
        action = draw(st.sampled_from(["replace", "replace", "drop", "rename"]))
        if action == "replace":
            lines[i] = f"{key} = {draw(_value)}"
        elif action == "drop":
            lines[i] = ""
        else:
            lines[i] = f"{draw(st.sampled_from(['turns', 'circle', 'start', 'density', 'gauge', 'reference', 'block', 'zz']))} = {draw(_value)}"
    return "\n".join(lines) + "\n"


def _check_spec_text(text: str, build: bool) -> None:
    try:
        spec = parse_spec(text, name="fuzz")
    except SpecError as exc:
        assert exc.key and exc.rule and "\n" not in str(exc)
        return
    if build:  # a spec that validates must also build, or fail with a key path
        try:
            build_problem(spec)
        except SpecError as exc:
            assert exc.key and "\n" not in str(exc)


@FAST
@given(_mutated_spec())
def test_fuzz_spec_values(text):
    _check_spec_text(text, build=True)


@FAST
@given(st.text(max_size=300))
def test_fuzz_spec_any_text(text):
    _check_spec_text(text, build=False)


@FAST
@given(st.integers(0, len(BASE)))
def test_fuzz_spec_truncated(cut):
    _check_spec_text(BASE[:cut], build=True)


@pytest.mark.slow
@SLOW
@given(_mutated_spec())
def test_fuzz_spec_values_slow(text):
    _check_spec_text(text, build=True)


@pytest.mark.slow
@SLOW
@given(st.one_of(st.text(max_size=400), st.integers(0, len(BASE)).map(lambda c: BASE[:c])))
def test_fuzz_spec_text_slow(text):
    _check_spec_text(text, build=True)


# --------------------------------------------------------------------- moves parser

_moves_text = st.one_of(
    st.text(alphabet="RULDrx0123456789 \t\n-+.", max_size=40),
    st.lists(st.tuples(st.sampled_from("RULD"), st.integers(0, 10**8)), max_size=8).map(
        lambda ts: " ".join(f"{d}{k}" for d, k in ts)),
    st.text(max_size=20),
)
_anything = st.one_of(st.none(), st.integers(-5, 5), _floats, st.text(max_size=3),
                      st.lists(_floats, max_size=3), st.booleans())


def _moves_case(moves, start, spacing, turns):
    try:
        d = parse_moves(moves)
    except (ValueError, TypeError) as exc:
        assert "`moves`" in str(exc)
    else:
        assert d.ndim == 2 and d.shape[1] == 2
    try:
        loop = Loop.from_moves(moves, start, spacing, turns=turns)
    except (ValueError, TypeError) as exc:
        assert "`" in str(exc)  # names its argument
    else:
        assert np.isfinite(np.asarray(loop.vertices, float)).all()


_start = st.one_of(st.tuples(_floats, _floats), _anything)
_spacing = st.one_of(st.floats(1e-3, 10.0), _anything)
_turns = st.one_of(st.integers(-3, 3), _anything)


@FAST
@given(_moves_text, _start, _spacing, _turns)
def test_fuzz_moves(moves, start, spacing, turns):
    _moves_case(moves, start, spacing, turns)


@pytest.mark.slow
@SLOW
@given(_moves_text, _start, _spacing, _turns)
def test_fuzz_moves_slow(moves, start, spacing, turns):
    _moves_case(moves, start, spacing, turns)


# --------------------------------------------------------------------- polygons

_coord = st.one_of(st.floats(-1e6, 1e6), _floats, st.integers(-10, 10), st.none(),
                   st.text(max_size=2))
_vertices = st.one_of(
    st.lists(st.tuples(st.floats(-100, 100), st.floats(-100, 100)), max_size=8),
    st.lists(st.lists(_coord, min_size=0, max_size=3), max_size=6),
    _anything,
)


def _polygon_case(vertices, turns, center, radius, sides):
    try:
        loop = Loop.polygon(vertices, turns=turns)
    except (ValueError, TypeError) as exc:
        assert "`" in str(exc)
    else:
        assert np.isfinite(np.asarray(loop.vertices, float)).all()
    try:
        loop = Loop.circle(center, radius, sides, turns=turns)
    except (ValueError, TypeError) as exc:
        assert "`" in str(exc)
    else:
        assert np.isfinite(np.asarray(loop.vertices, float)).all()


_center = st.one_of(st.tuples(st.floats(-10, 10), st.floats(-10, 10)), _start)
_radius = st.one_of(st.floats(1e-3, 10.0), _anything)
_sides = st.one_of(st.integers(-2, 200), _anything)


@FAST
@given(_vertices, _turns, _center, _radius, _sides)
def test_fuzz_polygon_and_circle(vertices, turns, center, radius, sides):
    _polygon_case(vertices, turns, center, radius, sides)


@pytest.mark.slow
@SLOW
@given(_vertices, _turns, _center, _radius, _sides)
def test_fuzz_polygon_and_circle_slow(vertices, turns, center, radius, sides):
    _polygon_case(vertices, turns, center, radius, sides)
