"""Experiment specs: parse a TOML file and validate it into a frozen :class:`Spec`.

All validation of a spec lives here, in :func:`_spec_iv`, before any numerics. An
invalid spec raises :class:`SpecError`, a ``ValueError`` that carries the *key path* of
the offending value (``loops[1].circle.radius``, ``group.metric``, ...) and the rule it
breaks; the command line prints it as ``whitegauge: error: <key path>: <rule>``.

The keys (a contract that scripts rely on)::

    name = "box-and-ring"          # optional; default: the file's stem
    [group]     family = "U" | "SU" | "SO" | "Sp";  n = int;  metric = "trace" |
                "physics" | "large-n" | a positive number        (metric is required)
    [field]     coupling > 0; spacing > 0; gauge = "axial-y" (default) | "axial-x";
                reference = number (optional; default: the lowest point of all loops);
                scheme = "heat" (default) | "linear" | "gauss" | "wilson";
                density = number, or a list of {rect = [x0, y0, x1, y1], value = v}
                over a base of 1 (optional; default 1)
    [[loops]]   name; exactly one of  vertices = [[x, y], ...]  |
                circle = {center = [x, y], radius = r, sides = m}  |
                ellipse = {center = [x, y], radii = [a, b], sides = m}  |
                curve = {family = "cardioid" | "limacon" | "lemniscate" | "rose",
                         center = [x, y] (default [0, 0]), sides = m, and the family's
                         parameters a, b, k}  |
                moves = "R4 U2 L4 D2" with start = [x, y];  turns = int (default 1)
    [observable] rep = "fundamental" (default) | "adjoint" | "spin:3/2" | "power:2"
    [run]       samples > 0; block > 0 (default 4096); seed >= 0

Unknown keys are refused (a misspelt key would otherwise be silently ignored). Sizes
that could hang the machine or exhaust its memory are refused before any numerics
(:data:`LIMITS`: matrix size <= 32, representation dimension <= 64 (spin:j and adjoint),
power <= 64, samples <= 1e12, block <= 1e6, grid cells <= 1e7, steps per moves token
<= 1e6, coupling in [1e-100, 1e100], a numeric metric in [1e-6, 1e6]); the working set
of one block, at most 2 GiB, and the lattice path of each loop, at most 1e6 unit steps
all turns included (1e7 for all loops together), are checked when the problem is built
(``holonomy.check_block_memory``, ``holonomy.lattice_steps``).
"""

from __future__ import annotations

import copy
import hashlib
import json
import math
import os
import re
import stat
import textwrap
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable

from discretize import (CURVES, MAX_LATTICE_STEPS, MAX_SIDES, MAX_TOTAL_LATTICE_STEPS, MAX_TURNS,
                        AreaForm, Loop, closed_walk)
from discretize._axial import GAUGES
from noise import ArgumentError

from .._formal_estimate import formal_schemes
from .._sampling import BLOCK_MEMORY, MAX_BLOCK, MAX_SAMPLES
from .._schemes import SCHEMES
from .._surface_weights import SURFACE_SCHEMES
from ..exact import drawn_measure
from ..groups import FAMILIES, MAX_REP_DIM, METRICS, MIN_N, check_rep_dimension, matrix_size, \
    parse_metric, parse_n, parse_rep, rep_name

__all__ = ["SpecError", "LoopSpec", "Spec", "load_spec", "parse_spec", "PURPOSES",
           "FAMILIES", "METRICS", "GAUGES", "SCHEMES", "LIMITS", "SPEC_KEYS",
           "format_spec_keys", "apply_overrides"]

# FAMILIES, METRICS (holonomy.groups), GAUGES (discretize) and SCHEMES (the scheme
# registry, holonomy._schemes) are the engine's own definitions, re-exported here
PURPOSES = ("run", "study", "exact", "series")
DEFAULT_BLOCK = 4096
# Size limits, checked before any numerics so that a typo cannot hang the machine or
# exhaust its memory (each is far above what a run on one machine can use):
MAX_MATRIX = 32          # matrix size of the group (U(32), SU(32), SO(32), Sp(16))
# MAX_REP_DIM (holonomy.groups): dimension of a spin:j (2j + 1) or adjoint representation
MAX_POWER = 64           # k of power:k
# MAX_SAMPLES, MAX_BLOCK (holonomy._sampling): samples of one run, samples per block
MAX_CELLS = 10**7        # cells of the grid that covers the loops at the spacing
MAX_STEPS = 10**6        # count of one moves token

MAX_SPEC_BYTES = 2**26   # size of a spec file (64 MiB; a 100000-vertex polygon is ~3 MB)
# MAX_SIDES, MAX_TURNS (discretize): vertices of a sampled curve, traversals of a loop


def _one_of(names) -> str:
    return ", ".join(f"`{n}`" for n in names)


def _curve_keys():
    params = {}
    for fam, f in CURVES.items():
        for p in f.params:
            params.setdefault(p, []).append(fam)
    return tuple((f"loops[i].curve.{p}", f"parameter of {_one_of(fams)} (see "
                  "`loops[i].curve.family`)", "required by those families")
                 for p, fams in params.items())


def _curve_families() -> str:
    return "; ".join(f"`{name}` ({', '.join(f.params)}): {f.equation}"
                     for name, f in CURVES.items())


#: The spec's keys as ``(key path, meaning, default)``: the one definition the parser's
#: key sets, ``whitegauge spec --keys`` and README.md's table come from.
SPEC_KEYS: tuple[tuple[str, str, str], ...] = (
    ("name", "the experiment's name (names the default output folder)", "the file's stem"),
    ("group.family", f"the group family: {_one_of(FAMILIES)}", "required"),
    ("group.n", "the group size: U(n) n >= 1, SU(n) n >= 2, SO(n) n >= 2, Sp(n) n >= 1 "
     f"(matrix size at most {MAX_MATRIX}); \"inf\" with family U and metric large-n: the "
     "master field as n -> infinity (exact and series only)", "required"),
    ("group.metric", f"{_one_of(METRICS)} (k = 1, 2, matrix size) or a number k in "
     "[1e-6, 1e6]: the inner product -k Re tr(XY)", "required"),
    ("field.coupling", "lambda, a number in [1e-100, 1e100]", "required"),
    ("field.spacing", "the lattice spacing h > 0", "required"),
    ("field.gauge", f"{_one_of(GAUGES)}", "`axial-y`"),
    ("field.reference", "the reference line (y for axial-y, x for axial-x), on a grid "
     "line", "the lowest (axial-y) or leftmost (axial-x) point of all loops"),
    ("field.scheme", f"a registered scheme: {_one_of(SCHEMES)} (README.md, Schemes; "
     "DEVELOPERS.md to add one)", "`heat`"),
    ("field.density", "a number, or a list of {rect = [x0, y0, x1, y1], value = v} over a "
     "base of 1 (negative values: exact, series, and run with linear or gauss: formal)", "1"),
    ("loops", "an array of tables [[loops]], one per loop; their lattice paths have at "
     f"most {MAX_TOTAL_LATTICE_STEPS:.0e} unit steps together", "required"),
    ("loops[i].name", "the loop's name (distinct)", "`loop<i>`"),
    ("loops[i].vertices", "a polygon [[x, y], ...], at least three points",
     "one loop kind is required"),
    ("loops[i].circle", "a regular polygon on a circle", "one loop kind is required"),
    ("loops[i].circle.center", "[x, y]", "required"),
    ("loops[i].circle.radius", "r > 0", "required"),
    ("loops[i].circle.sides", f"m, 3 <= m <= {MAX_SIDES}", "required"),
    ("loops[i].ellipse", "the axis-parallel ellipse sampled at m points (exact area "
     "pi a b)", "one loop kind is required"),
    ("loops[i].ellipse.center", "[x, y]", "required"),
    ("loops[i].ellipse.radii", "[a, b], both > 0", "required"),
    ("loops[i].ellipse.sides", f"m, 3 <= m <= {MAX_SIDES}", "required"),
    ("loops[i].curve", "a parametric curve sampled at m points, with exact face areas",
     "one loop kind is required"),
    ("loops[i].curve.family", _curve_families(), "required"),
    ("loops[i].curve.center", "[x, y], the curve's origin", "[0, 0]"),
    ("loops[i].curve.sides", f"m, 3 <= m <= {MAX_SIDES}", "required"),
    *_curve_keys(),
    ("loops[i].moves", 'lattice steps like "R4 U2 L4 D2" (a direction R, L, U or D and '
     f"a count from 1 to {MAX_STEPS:.0e}) in units of the spacing; must close",
     "one loop kind is required"),
    ("loops[i].start", "[x, y] where the moves begin (moves only)", "required with moves"),
    ("loops[i].turns", f"times the loop is traversed, an integer from 1 to {MAX_TURNS}; "
     f"the loop's lattice path (snapped edges x turns) has at most {MAX_LATTICE_STEPS:.0e} "
     "unit steps", "1"),
    ("correlators", "an array of tables [[correlators]], one per correlator E[W(a) W(b) "
     "...] to estimate with its connected part and compare with its exact value", "none"),
    ("correlators[i].loops", "names of two or more distinct loops of the spec", "required"),
    ("observable.rep", "`fundamental`, `adjoint`, `trivial`, `spin:j` (SU(2), j = 0, "
     f"1/2, 1, ...) or `power:k` (1 <= k <= {MAX_POWER}); of dimension at most "
     f"{MAX_REP_DIM} (spin:j: 2j + 1; adjoint: the group's, so U(n) and SU(n) n <= 8, "
     "SO(n) n <= 11, Sp(n) n <= 5)", "`fundamental`"),
    ("run.samples", f"number of samples, 1 to {MAX_SAMPLES:.0e}",
     "required for run and study"),
    ("run.block", f"samples per block, 1 to {MAX_BLOCK:.0e} (part of the spec: it fixes "
     "the random streams; a study lowers it to have 8 blocks)", f"{DEFAULT_BLOCK}"),
    ("run.seed", "an integer >= 0", "required for run and study"),
    ("surface.kind", "`plane`, `sphere`, `torus` or `closed` (genus g): loops are drawn in "
     "a chart of the plane; on a closed surface the unbounded face has the area T minus "
     "the loop's drawn measure and carries the g handles", "`plane`"),
    ("surface.genus", "g, an integer >= 0 (`closed` only; sphere 0, torus 1)",
     "required with `closed`"),
    ("surface.area", "T, the total area: larger than each loop's drawn measure (not with "
     "`plane`)", "required unless `plane`"),
)


def _children(prefix: str) -> tuple[str, ...]:
    """The key names directly under ``prefix`` ("" for the top level), in table order."""
    out = []
    for path, _, _ in SPEC_KEYS:
        rest = path if not prefix else path[len(prefix) + 1:] \
            if path.startswith(prefix + ".") else None
        if rest:
            name = rest.split(".")[0].split("[")[0]
            if name not in out:
                out.append(name)
    return tuple(out)


_TOP_KEYS = _children("")
_GROUP_KEYS = _children("group")
_FIELD_KEYS = _children("field")
_LOOP_KINDS = ("vertices", "circle", "ellipse", "curve", "moves")
_LOOP_KEYS = _children("loops[i]")
_CIRCLE_KEYS = _children("loops[i].circle")
_ELLIPSE_KEYS = _children("loops[i].ellipse")
_CORRELATOR_KEYS = _children("correlators[i]")
_OBS_KEYS = _children("observable")
_RUN_KEYS = _children("run")
_SURFACE_KEYS = _children("surface")
SURFACE_KINDS = ("plane", "sphere", "torus", "closed")


def format_spec_keys(*, markdown: bool = False) -> str:
    """The spec reference (``whitegauge spec --keys``): every key with its meaning and
    default, from :data:`SPEC_KEYS`; ``markdown=True`` gives README.md's table."""
    if markdown:
        rows = ["| key | meaning | default |", "| --- | --- | --- |"]
        rows += [f"| `{k}` | {m.replace('|', '/')} | {d} |" for k, m, d in SPEC_KEYS]
        return "\n".join(rows)
    width = max(len(k) for k, _, _ in SPEC_KEYS)
    lines = []
    for key, meaning, default in SPEC_KEYS:
        text = f"{meaning.replace('`', '')} [default: {default.replace('`', '')}]"
        body = textwrap.wrap(text, 88 - width - 2) or [""]
        lines.append(f"{key.ljust(width)}  {body[0]}")
        lines.extend(" " * (width + 2) + b for b in body[1:])
    return "\n".join(lines)


#: the largest coupling x density x area the engine takes: heat-kernel times and
#: Wick variances then stay finite, with room for Casimirs (at most about 1e4) and sums
MAX_TIME = 1e300
#: the largest variance of a formal run's imaginary link noise (complex rotation): its
#: exponentials reach about exp(7 sqrt(1e3)) = 1e96 at seven standard deviations
MAX_FORMAL_VARIANCE = 1e3

LIMITS = {"matrix size": MAX_MATRIX, "spin dimension": MAX_REP_DIM,
          "representation dimension": MAX_REP_DIM, "power": MAX_POWER,
          "samples": MAX_SAMPLES, "block": MAX_BLOCK, "grid cells": MAX_CELLS,
          "steps per move": MAX_STEPS, "sides": MAX_SIDES, "turns": MAX_TURNS,
          # unit steps of one loop's lattice path, all turns (snapped edges x turns),
          # checked before snapping (holonomy.lattice_steps) by every command
          "lattice steps per loop": MAX_LATTICE_STEPS,
          "lattice steps of all loops": MAX_TOTAL_LATTICE_STEPS,
          # bytes of one chunk of a block (holonomy.block_memory), checked when the
          # problem is built (holonomy.check_block_memory, the same for every command)
          "block memory": BLOCK_MEMORY,
          "coupling x density x area": MAX_TIME,
          "formal run link variance": MAX_FORMAL_VARIANCE}


class SpecError(ValueError):
    """An invalid spec: ``key`` is the key path, ``rule`` what is expected there."""

    def __init__(self, key: str, rule: str):
        self.key = key
        self.rule = rule
        super().__init__(f"{key}: {rule}")


@dataclass(frozen=True)
class LoopSpec:
    """One validated ``[[loops]]`` entry; :meth:`build` makes the ``discretize.Loop``."""

    name: str
    kind: str                 # "vertices" | "circle" | "ellipse" | "curve" | "moves"
    vertices: tuple[tuple[float, float], ...] | None = None
    center: tuple[float, float] | None = None
    radius: float | None = None
    sides: int | None = None
    moves: str | None = None
    start: tuple[float, float] | None = None
    turns: int = 1
    radii: tuple[float, float] | None = None
    family: str | None = None                   # a curve family of discretize.CURVES
    params: tuple[tuple[str, float], ...] = ()  # the curve family's parameters

    def build(self, spacing: float):
        """The ``discretize.Loop`` this entry describes (moves are in units of spacing)."""
        if self.kind == "vertices":
            return Loop.polygon(self.vertices, turns=self.turns)
        if self.kind == "circle":
            return Loop.circle(self.center, self.radius, self.sides, turns=self.turns)
        if self.kind == "ellipse":
            return Loop.ellipse(self.center, self.radii, self.sides, turns=self.turns)
        if self.kind == "curve":
            return Loop.curve(self.family, self.sides, center=self.center,
                              turns=self.turns, **dict(self.params))
        return Loop.from_moves(self.moves, self.start, spacing, turns=self.turns)


@dataclass(frozen=True)
class Spec:
    """A validated experiment spec. ``text`` and ``sha256`` identify it in the run store.

    ``density`` is a float (a constant density) or a tuple of ``(x0, y0, x1, y1, value)``
    rectangles over a base density of 1. ``metric`` is a name or a positive float.
    """

    name: str
    text: str
    sha256: str
    family: str
    n: int
    metric: str | float
    coupling: float
    spacing: float
    gauge: str
    reference: float | None
    scheme: str
    density: float | tuple[tuple[float, float, float, float, float], ...]
    loops: tuple[LoopSpec, ...]
    rep: str
    samples: int | None
    block: int
    seed: int | None
    source: str = "<string>"
    correlators: tuple[tuple[str, ...], ...] = ()  # loop names of each [[correlators]]
    surface: str = "plane"          # plane | sphere | torus | closed
    genus: int | None = None        # None on the plane
    total_area: float | None = None  # T, None on the plane
    purpose: str | None = None      # what it was validated for (PURPOSES); None: unknown

    @property
    def correlator_indices(self) -> tuple[tuple[int, ...], ...]:
        """The correlators as loop-index tuples."""
        index = {name: i for i, name in enumerate(self.names)}
        return tuple(tuple(index[n] for n in c) for c in self.correlators)

    @property
    def closed(self) -> bool:
        """True on a closed surface (sphere, torus, any genus)."""
        return self.surface != "plane"

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(loop.name for loop in self.loops)

    @property
    def large_n(self) -> bool:
        """True for ``group.n = "inf"``: the U(N) master field as N -> infinity."""
        return self.n == "inf"

    @property
    def signed(self) -> bool:
        """True if the density takes a negative value (no measure: formal route only)."""
        if isinstance(self.density, float):
            return self.density < 0
        return any(r[4] < 0 for r in self.density)

    def area_form(self):
        """The ``discretize.AreaForm`` of the density."""
        if isinstance(self.density, float):
            return AreaForm(base=self.density)
        return AreaForm(base=1.0, rects=self.density)


# --------------------------------------------------------------------------- loading

def _file_kind(mode: int) -> str:
    """What a file that is not a regular file is, for the refusal's message."""
    for test, kind in ((stat.S_ISFIFO, "named pipe"), (stat.S_ISCHR, "character device"),
                       (stat.S_ISBLK, "block device"), (stat.S_ISSOCK, "socket")):
        if test(mode):
            return kind
    return "special file"


def load_spec(path: str | Path, *, purpose: str = "run", overrides=()) -> Spec:
    """Read and validate the spec file at ``path`` for ``purpose``.

    ``purpose`` is one of ``run``, ``study``, ``exact``, ``series``: sampling purposes
    (``run``, ``study``) also need ``[run] samples`` and ``seed`` and refuse a density
    that changes sign; ``exact`` and ``series`` accept it (formal evaluation).
    ``overrides`` are ``"KEY=VALUE"`` strings (the command line's ``--set``), see
    :func:`apply_overrides`.

    Raises
    ------
    SpecError
        With the file name as key path if the file is missing, unreadable or not
        valid TOML (the message gives the line), else with the key path of the value.
    """
    if not isinstance(path, (str, os.PathLike)):
        raise TypeError(f"`path` must be the path of a spec file (str or os.PathLike); "
                        f"got {type(path).__name__}.")
    p = Path(path)
    try:
        # only a regular file (a symlink to one is followed): a FIFO without a writer
        # would block the open forever and a device may never end (POSIX stat(2))
        mode = os.stat(p).st_mode
        if stat.S_ISDIR(mode):
            raise IsADirectoryError(path)
        if not stat.S_ISREG(mode):
            raise SpecError(str(path), f"is not a regular file (a {_file_kind(mode)}); "
                            "expected a TOML spec file")
        with open(p, "rb") as fh:  # bounded: a regular file may still grow while read
            data = fh.read(MAX_SPEC_BYTES + 1)
        if len(data) > MAX_SPEC_BYTES:
            raise SpecError(str(path), f"larger than {MAX_SPEC_BYTES} bytes; expected a "
                            "TOML spec file")
        text = data.decode("utf-8-sig")  # a leading byte-order mark is not part of TOML
    except FileNotFoundError:
        raise SpecError(str(path), "no such file; expected a TOML spec file") from None
    except IsADirectoryError:
        raise SpecError(str(path), "is a directory; expected a TOML spec file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise SpecError(str(path), f"cannot read the spec file ({exc})") from None
    return parse_spec(text, name=p.stem, purpose=purpose, source=str(path),
                      overrides=overrides)


def parse_spec(text: str, *, name: str = "experiment", purpose: str = "run",
               source: str = "<string>", overrides=()) -> Spec:
    """Validate spec ``text`` (TOML); ``name`` is the default for the ``name`` key.

    With ``overrides`` (``"KEY=VALUE"`` strings), the values are set first and the spec
    is validated as if the file held them; its ``text`` (and so ``sha256``) is then the
    resulting TOML, headed by a comment naming the source and the overrides.
    """
    if not isinstance(text, str):
        raise TypeError(f"`text` must be the TOML text of a spec (str); got "
                        f"{type(text).__name__} (load_spec reads a spec file).")
    for key, value in (("name", name), ("source", source)):
        if not isinstance(value, str):
            raise TypeError(f"`{key}` must be a str; got {type(value).__name__}.")
    if not isinstance(purpose, str) or purpose not in PURPOSES:
        raise ValueError(f"`purpose` must be one of {PURPOSES}; got {purpose!r}.")
    overrides = _overrides_iv(overrides)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = re.search(r"\(at line (\d+), column (\d+)\)", msg)
        where = f"line {m.group(1)}" if m else "end of file"
        msg = re.sub(r"\s*\(at (line \d+, column \d+|end of document)\)", "", msg)
        raise SpecError(source, f"{where}: malformed TOML: {msg}") from None
    except RecursionError:  # tomllib recurses once per level of nested arrays or tables
        raise SpecError(source, "malformed TOML: arrays or tables nested too deep for the "
                        "parser; expected a spec (nested at most a few levels)") from None
    if overrides:
        data = apply_overrides(data, overrides)
        header = [f"# {source} with " + " ".join(f"--set {o}" for o in overrides)]
        text = "\n".join(header) + "\n" + _toml_text(data)
    return _spec_iv(data, text=text, default_name=name, purpose=purpose, source=source)


def _overrides_iv(overrides: Any) -> tuple[str, ...]:
    """``overrides``: a sequence of ``"KEY=VALUE"`` strings (None: none)."""
    rule = 'a sequence of "KEY=VALUE" strings (like ["run.samples=1000"]) or None'
    if overrides is None:
        return ()
    if isinstance(overrides, (str, bytes)) or not isinstance(overrides, Iterable):
        raise TypeError(f"`overrides` must be {rule}; got {overrides!r}.")
    out = tuple(overrides)
    if not all(isinstance(o, str) for o in out):
        raise TypeError(f"`overrides` must be {rule}; got {overrides!r}.")
    return out


def spec_arg(spec: Any, purpose: str) -> "Spec":
    """The ``spec`` argument of an entry point: a :class:`Spec`, or the path of a spec
    file (read with :func:`load_spec` for ``purpose``); a TypeError otherwise."""
    if isinstance(spec, Spec):
        if spec.purpose != purpose:
            # validated for another purpose (exact and series need no [run] and take a
            # signed density or the master field): the same validator, for this one
            parse_spec(spec.text, name=spec.name, purpose=purpose, source=spec.source)
        return spec
    if isinstance(spec, (str, os.PathLike)):
        return load_spec(spec, purpose=purpose)
    raise TypeError(f"`spec` must be a Spec (from load_spec or parse_spec) or the path "
                    f"of a spec file; got {type(spec).__name__}.")


# --------------------------------------------------------------------------- --set

_SEGMENT = re.compile(r"^([A-Za-z_][A-Za-z0-9_-]*)(?:\[(\d+)\])?$")
_BARE = re.compile(r"^[A-Za-z0-9_.:/+-]+$")


def _override_value(key: str, text: str) -> Any:
    """The value of ``KEY=VALUE``: a TOML value (numbers, true/false, "strings",
    [arrays], {inline tables}); a bare word that is not TOML is taken as a string
    (``field.scheme=gauss``)."""
    try:
        return tomllib.loads(f"v = {text}")["v"]
    except RecursionError:
        raise SpecError(f"--set {key}", "the value is nested too deep for the parser; "
                        "expected a TOML value such as 100000, 0.5, \"text\" or [1, 2]") from None
    except tomllib.TOMLDecodeError:
        if _BARE.match(text):
            return text
        raise SpecError(f"--set {key}", f"cannot read the value {text!r}; expected a TOML "
                        'value such as 100000, 0.5, "text", [1, 2] or a bare word') from None


def apply_overrides(data: dict, overrides) -> dict:
    """A copy of the spec ``data`` with each ``"KEY=VALUE"`` of ``overrides`` set.

    KEY is a spec key path as in the error messages and ``whitegauge spec --keys``:
    ``run.samples``, ``field.scheme``, ``loops[0].circle.radius``. Missing tables are
    created; an index must name an existing ``[[loops]]`` entry. The value is then
    validated with the rest of the spec, so a bad one is refused exactly as in a file.
    """
    data = copy.deepcopy(data)
    for item in overrides:
        key, sep, raw = str(item).partition("=")
        key = key.strip()
        if not sep or not key:
            raise SpecError(f"--set {item}", "expected KEY=VALUE with a spec key path "
                            "such as run.samples=100000 (see whitegauge spec --keys)")
        value = _override_value(key, raw.strip())
        node, where = data, ""
        parts = key.split(".")
        for depth, part in enumerate(parts):
            m = _SEGMENT.match(part)
            if m is None:
                raise SpecError(f"--set {key}", f"{part!r} is not a key name or name[index]")
            name, index = m.group(1), m.group(2)
            where = f"{where}.{name}" if where else name
            last = depth == len(parts) - 1
            if index is None:
                if last:
                    node[name] = value
                    break
                node = node.setdefault(name, {})
                if not isinstance(node, dict):
                    raise SpecError(where, f"is {_describe(node)}, not a table: cannot set "
                                    f"{key}")
                continue
            items = node.get(name)
            i = int(index)
            if not isinstance(items, list) or not 0 <= i < len(items):
                count = len(items) if isinstance(items, list) else 0
                raise SpecError(f"{where}[{i}]", f"there are {count} entries; expected an "
                                f"index from 0 to {count - 1}" if count else "no such entries")
            where = f"{where}[{i}]"
            if last:
                items[i] = value
                break
            node = items[i]
            if not isinstance(node, dict):
                raise SpecError(where, f"is {_describe(node)}, not a table: cannot set {key}")
    return data


def _toml_value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_toml_key(k)} = {_toml_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(f"cannot write {type(v).__name__} as TOML")


def _toml_key(k: str) -> str:
    return k if re.fullmatch(r"[A-Za-z0-9_-]+", k) else json.dumps(k)


def _toml_text(data: dict) -> str:
    """TOML text for spec ``data`` (scalars first, then tables and arrays of tables)."""
    head, tables = [], []
    for k, v in data.items():
        if isinstance(v, dict):
            tables.append(f"\n[{_toml_key(k)}]")
            tables.extend(f"{_toml_key(a)} = {_toml_value(b)}" for a, b in v.items())
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            for item in v:
                tables.append(f"\n[[{_toml_key(k)}]]")
                tables.extend(f"{_toml_key(a)} = {_toml_value(b)}" for a, b in item.items())
        else:
            head.append(f"{_toml_key(k)} = {_toml_value(v)}")
    return "\n".join(head + tables) + "\n"


# --------------------------------------------------------------------------- helpers

def _describe(value: Any) -> str:
    if isinstance(value, int) and not isinstance(value, bool) and abs(value) > 10**30:
        return f"an integer of {len(str(abs(value)))} digits"
    if isinstance(value, bool):
        return f"boolean {str(value).lower()}"
    if isinstance(value, str):
        return f"string {value!r}"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list):
        return "an array"
    return repr(value)


def _table(data: dict, key: str, path: str, allowed: tuple[str, ...], *,
           required: bool = True) -> dict:
    value = data.get(key)
    if value is None:
        if required:
            raise SpecError(path, f"missing table; expected [{path}] with keys "
                            f"{', '.join(allowed)}")
        return {}
    if not isinstance(value, dict):
        raise SpecError(path, f"got {_describe(value)}; expected a table")
    _no_unknown(value, path, allowed)
    return value


def _no_unknown(table: dict, path: str, allowed: tuple[str, ...]) -> None:
    for key in table:
        if key not in allowed:
            where = f"{path}.{key}" if path else key
            raise SpecError(where, f"unknown key; accepted keys here: {', '.join(allowed)}")


def _finite(value: Any) -> bool:
    """True for an int or float (not a bool) that is a finite double: TOML integers
    are unbounded, and one beyond double range is refused like inf, not an overflow."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return False
    try:
        return math.isfinite(value)
    except OverflowError:
        return False


def _number(table: dict, key: str, path: str, *, rule: str = "a number",
            check=None, required: bool = True, default=None) -> float | None:
    if key not in table:
        if required:
            raise SpecError(path, f"missing; expected {rule}")
        return default
    value = table[key]
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise SpecError(path, f"got {_describe(value)}; expected {rule}")
    if not _finite(value):
        raise SpecError(path, f"got {_describe(value)}; expected {rule}")
    value = float(value)
    if check is not None and not check(value):
        raise SpecError(path, f"got {value!r}; expected {rule}")
    return value


def _integer(table: dict, key: str, path: str, *, rule: str = "an integer",
             check=None, required: bool = True, default=None) -> int | None:
    if key not in table:
        if required:
            raise SpecError(path, f"missing; expected {rule}")
        return default
    value = table[key]
    if isinstance(value, bool) or not isinstance(value, int):
        raise SpecError(path, f"got {_describe(value)}; expected {rule}")
    if check is not None and not check(value):
        raise SpecError(path, f"got {_describe(value)}; expected {rule}")
    return value


def _choice(table: dict, key: str, path: str, choices: tuple[str, ...], *,
            default: str | None = None) -> str:
    rule = "one of " + ", ".join(f'"{c}"' for c in choices)
    if key not in table:
        if default is None:
            raise SpecError(path, f"missing; expected {rule}")
        return default
    value = table[key]
    if not isinstance(value, str):
        raise SpecError(path, f"got {_describe(value)}; expected {rule}")
    if value not in choices:
        raise SpecError(path, f"got {value!r}; expected {rule}")
    return value


def _point(value: Any, path: str) -> tuple[float, float]:
    rule = "a point [x, y] of two finite numbers"
    if not isinstance(value, list) or len(value) != 2:
        raise SpecError(path, f"got {_describe(value)}; expected {rule}")
    out = []
    for i, v in enumerate(value):
        if not _finite(v):
            raise SpecError(f"{path}[{i}]", f"got {_describe(v)}; expected a finite number")
        out.append(float(v))
    return (out[0], out[1])


# --------------------------------------------------------------------------- sections

def _group_iv(data: dict, purpose: str = "run") -> tuple[str, int | str, str | float]:
    g = _table(data, "group", "group", _GROUP_KEYS)
    family = _choice(g, "family", "group.family", FAMILIES)
    if g.get("n") == "inf":
        # the U(N) master field, N -> infinity (holonomy.exact.exact_master_field)
        if family != "U" or g.get("metric") != "large-n":
            raise SpecError("group.n", f'got "inf" with family {family!r} and metric '
                            f'{g.get("metric")!r}; expected "inf" only with family "U" '
                            'and metric "large-n" (the master field)')
        if purpose in ("run", "study"):
            raise SpecError("group.n", 'got "inf"; the master field (N -> infinity) has '
                            "no samples: use the exact or series command")
        return family, "inf", "large-n"
    low = MIN_N[family]
    n = _integer(g, "n", "group.n", rule=f"an integer >= {low} for {family}")
    high = MAX_MATRIX // 2 if family == "Sp" else MAX_MATRIX
    if matrix_size(family, n) > MAX_MATRIX:
        raise SpecError("group.n", f"got {n}; expected at most {high} for {family} "
                        f"(matrix size limit {MAX_MATRIX})")
    try:
        n = parse_n(family, n)
    except ArgumentError as exc:
        raise SpecError("group.n", exc.rule) from None
    rule = ", ".join(f'"{m}"' for m in METRICS)
    rule = f"one of {rule} or a number in [1e-6, 1e6]"
    if "metric" not in g:
        raise SpecError("group.metric", f"missing; expected {rule}")
    metric = g["metric"]
    if isinstance(metric, str):
        try:
            metric = parse_metric(metric, matrix_size(family, n))[0]
        except ArgumentError:
            raise SpecError("group.metric", f"got {metric!r}; expected {rule}") from None
    else:
        metric = _number(g, "metric", "group.metric", rule=rule,
                         check=lambda v: 1e-6 <= v <= 1e6)
    return family, n, metric


def _density_iv(f: dict, purpose: str):
    if "density" not in f:
        return 1.0
    value = f["density"]
    sampling = purpose in ("run", "study")
    if isinstance(value, list):
        rects = []
        for i, item in enumerate(value):
            path = f"field.density[{i}]"
            if not isinstance(item, dict):
                raise SpecError(path, f"got {_describe(item)}; expected a table "
                                "{rect = [x0, y0, x1, y1], value = v}")
            _no_unknown(item, path, ("rect", "value"))
            rect = item.get("rect")
            if not isinstance(rect, list) or len(rect) != 4 or not all(map(_finite, rect)):
                raise SpecError(f"{path}.rect", f"got {_describe(rect)}; expected "
                                "[x0, y0, x1, y1], four finite numbers")
            x0, y0, x1, y1 = (float(v) for v in rect)
            if not (x1 > x0 and y1 > y0):
                raise SpecError(f"{path}.rect", f"got {rect!r}; expected x1 > x0 and "
                                "y1 > y0")
            v = _number(item, "value", f"{path}.value", rule="a finite number")
            if sampling and v < 0:
                raise SpecError(f"{path}.value", f"got {v!r}; expected a value >= 0 for "
                                f"`{purpose}`: a density that changes sign has no "
                                "probability measure (use `whitegauge exact` or "
                                "`whitegauge series`, the formal route)")
            rects.append((x0, y0, x1, y1, v))
        return tuple(rects)
    v = _number(f, "density", "field.density",
                rule="a number or a list of {rect = [x0, y0, x1, y1], value = v}")
    if sampling and v < 0:
        raise SpecError("field.density", f"got {v!r}; expected a density >= 0 for "
                        f"`{purpose}`: a negative density has no probability measure "
                        "(use `whitegauge exact` or `whitegauge series`, the formal route)")
    return v


def _loop_iv(item: Any, i: int, spacing: float) -> LoopSpec:
    path = f"loops[{i}]"
    if not isinstance(item, dict):
        raise SpecError(path, f"got {_describe(item)}; expected a table")
    _no_unknown(item, path, _LOOP_KEYS)
    name = item.get("name", f"loop{i}")
    if not isinstance(name, str) or not name.strip() or "\0" in name:
        raise SpecError(f"{path}.name", f"got {_describe(name)}; expected a non-empty "
                        "string without NUL characters")
    kinds = [k for k in _LOOP_KINDS if k in item]
    if len(kinds) != 1:
        got = "none" if not kinds else " and ".join(kinds)
        raise SpecError(path, f"has {got}; expected exactly one of "
                        f"{', '.join(_LOOP_KINDS)}")
    kind = kinds[0]
    turns = _integer(item, "turns", f"{path}.turns",
                     rule=f"an integer >= 1 and <= {MAX_TURNS}",
                     check=lambda v: 1 <= v <= MAX_TURNS, required=False, default=1)
    if "start" in item and kind != "moves":
        raise SpecError(f"{path}.start", "only applies to a loop given by moves")
    if kind == "vertices":
        verts = item["vertices"]
        if not isinstance(verts, list):
            raise SpecError(f"{path}.vertices", f"got {_describe(verts)}; expected a "
                            "list of at least three points [x, y]")
        if len(verts) < 3:
            raise SpecError(f"{path}.vertices", f"got {len(verts)} vertices; expected "
                            "at least three points [x, y]")
        pts = tuple(_point(v, f"{path}.vertices[{j}]") for j, v in enumerate(verts))
        return LoopSpec(name=name, kind=kind, vertices=pts, turns=turns)
    if kind == "circle":
        c = item["circle"]
        cpath = f"{path}.circle"
        if not isinstance(c, dict):
            raise SpecError(cpath, f"got {_describe(c)}; expected a table "
                            "{center = [x, y], radius = r, sides = m}")
        _no_unknown(c, cpath, _CIRCLE_KEYS)
        if "center" not in c:
            raise SpecError(f"{cpath}.center", "missing; expected a point [x, y]")
        center = _point(c["center"], f"{cpath}.center")
        radius = _number(c, "radius", f"{cpath}.radius", rule="a number > 0",
                         check=lambda v: v > 0)
        sides = _sides(c, cpath)
        return LoopSpec(name=name, kind=kind, center=center, radius=radius, sides=sides,
                        turns=turns)
    if kind in ("ellipse", "curve"):
        return _curve_iv(item[kind], kind, f"{path}.{kind}", name, turns)
    moves = item["moves"]
    mpath = f"{path}.moves"
    if not isinstance(moves, str) or not moves.split():
        raise SpecError(mpath, f"got {_describe(moves)}; expected a string of steps "
                        'like "R4 U2 L4 D2"')
    try:
        closed_walk(moves, max_count=MAX_STEPS)
    except ArgumentError as exc:
        raise SpecError(mpath, exc.rule) from None
    if "start" not in item:
        raise SpecError(f"{path}.start", "missing; expected a point [x, y] where the "
                        "moves begin")
    start = _point(item["start"], f"{path}.start")
    return LoopSpec(name=name, kind=kind, moves=" ".join(moves.split()), start=start,
                    turns=turns)


def _sides(c: dict, path: str) -> int:
    return _integer(c, "sides", f"{path}.sides", rule=f"an integer >= 3 and <= {MAX_SIDES}",
                    check=lambda v: 3 <= v <= MAX_SIDES)


def _curve_iv(c: Any, kind: str, path: str, name: str, turns: int) -> LoopSpec:
    """``loops[i].ellipse`` and ``loops[i].curve`` (the families of discretize.CURVES)."""
    if kind == "ellipse":
        if not isinstance(c, dict):
            raise SpecError(path, f"got {_describe(c)}; expected a table "
                            "{center = [x, y], radii = [a, b], sides = m}")
        _no_unknown(c, path, _ELLIPSE_KEYS)
        if "center" not in c:
            raise SpecError(f"{path}.center", "missing; expected a point [x, y]")
        center = _point(c["center"], f"{path}.center")
        if "radii" not in c:
            raise SpecError(f"{path}.radii", "missing; expected [a, b], two numbers > 0")
        radii = _point(c["radii"], f"{path}.radii")
        for j, r in enumerate(radii):
            if not r > 0:
                raise SpecError(f"{path}.radii[{j}]", f"got {r!r}; expected a number > 0")
        return LoopSpec(name=name, kind=kind, center=center, radii=radii,
                        sides=_sides(c, path), turns=turns)
    if not isinstance(c, dict):
        raise SpecError(path, f"got {_describe(c)}; expected a table {{family = ..., "
                        "sides = m, ...}")
    family = _choice(c, "family", f"{path}.family", tuple(CURVES))
    fam = CURVES[family]
    _no_unknown(c, path, ("family", "center", "sides") + fam.params)
    center = _point(c["center"], f"{path}.center") if "center" in c else (0.0, 0.0)
    params = []
    for key in fam.params:
        if key == "k":
            v = _integer(c, key, f"{path}.{key}", rule=f"an integer >= 1 ({fam.equation})",
                         check=lambda v: 1 <= v <= 1000)
        else:
            v = _number(c, key, f"{path}.{key}", rule=f"a number > 0 ({fam.equation})",
                        check=lambda v: v > 0)
        params.append((key, v))
    return LoopSpec(name=name, kind=kind, center=center, sides=_sides(c, path),
                    family=family, params=tuple(params), turns=turns)


def _loop_bbox(loop: LoopSpec, spacing: float) -> tuple[float, float, float, float]:
    if loop.kind == "vertices":
        xs, ys = zip(*loop.vertices)
        return min(xs), min(ys), max(xs), max(ys)
    if loop.kind == "circle":
        (cx, cy), r = loop.center, loop.radius
        return cx - r, cy - r, cx + r, cy + r
    if loop.kind in ("ellipse", "curve"):
        return loop.build(spacing).bbox
    walk = closed_walk(loop.moves)
    (lx, ly), (hx, hy) = walk.min(axis=0).tolist(), walk.max(axis=0).tolist()
    sx, sy = loop.start
    return (sx + lx * spacing, sy + ly * spacing, sx + hx * spacing, sy + hy * spacing)


def _extent_iv(loops: tuple[LoopSpec, ...], spacing: float, reference: float | None,
               gauge: str) -> None:
    """Refuse a grid too large to allocate (huge coordinates or a tiny spacing)."""
    boxes = []
    for i, lp in enumerate(loops):
        try:
            boxes.append(_loop_bbox(lp, spacing))
        except (ValueError, TypeError) as exc:  # a sampled curve the engine refuses
            raise SpecError(f"loops[{i}]", str(exc)) from None
    x0, y0 = min(b[0] for b in boxes), min(b[1] for b in boxes)
    x1, y1 = max(b[2] for b in boxes), max(b[3] for b in boxes)
    loops_only = ((x1 - x0) / spacing + 3) * ((y1 - y0) / spacing + 3)
    if reference is not None:
        if gauge == "axial-y":
            y0, y1 = min(y0, reference), max(y1, reference)
        else:
            x0, x1 = min(x0, reference), max(x1, reference)
    with_margin = ((x1 - x0) / spacing + 3) * ((y1 - y0) / spacing + 3)
    if math.isfinite(loops_only) and loops_only <= MAX_CELLS and not (
            math.isfinite(with_margin) and with_margin <= MAX_CELLS):
        # the loops fit; the reference line's distance makes the grid too large
        raise SpecError("field.reference", f"got {reference!r}: the grid reaching from the "
                        f"loops to the reference line ({x1 - x0:.6g} x {y1 - y0:.6g}) would "
                        f"have about {with_margin:.3g} cells at spacing {spacing!r}; "
                        f"expected at most {MAX_CELLS:.0e} (a reference line nearer the "
                        "loops, or the default: the loops' lowest point)")
    if not math.isfinite(with_margin) or with_margin > MAX_CELLS:
        raise SpecError("field.spacing", f"got {spacing!r}: the grid covering the loops "
                        f"({x1 - x0:.6g} x {y1 - y0:.6g}) would have about "
                        f"{with_margin:.3g} cells; expected at most {MAX_CELLS:.0e} "
                        "(a larger spacing or smaller loops)")
    biggest = max(1.0, abs(x0), abs(x1), abs(y0), abs(y1))
    if spacing <= 1e-9 * biggest:
        raise SpecError("field.spacing", f"got {spacing!r}: below the resolution of the "
                        f"loops' coordinates (up to {biggest:.3g}); expected a spacing "
                        "> 1e-9 times the largest coordinate")


def _time_iv(coupling: float, density, loops: tuple[LoopSpec, ...], spacing: float, *,
             formal_run: bool = False) -> None:
    """Refuse a coupling and density whose product with the loops' area (their bounding
    boxes', times the turns) passes `MAX_TIME`, near the end of double precision, where
    exact times and variances would be inf: on ``field.density``."""
    values = [density] if isinstance(density, float) else [1.0] + [r[4] for r in density]
    peak = max(abs(v) for v in values)
    boxes = [_loop_bbox(lp, spacing) for lp in loops]
    area = max((b[2] - b[0]) * (b[3] - b[1]) for b in boxes)
    turns = max(lp.turns for lp in loops)
    time = coupling * peak * area * turns
    if not time <= MAX_TIME:
        raise SpecError("field.density", f"got a largest |density| of {peak!r} with "
                        f"coupling {coupling!r}: coupling x density x the loops' area "
                        f"(x turns) is {time:.3g}; expected at most {MAX_TIME:.0e}, "
                        "within double precision")
    if formal_run:
        # complex rotation: a link of the negative part is exp of an imaginary noise of
        # this variance at most (a column across the loops), and its cosh overflows
        # double precision near exp(710)
        neg = max(-v for v in values if v < 0)
        extent = max(max(b[2] - b[0], b[3] - b[1]) for b in boxes) + 2 * spacing
        variance = coupling * neg * spacing * extent
        if not variance <= MAX_FORMAL_VARIANCE:
            raise SpecError("field.density", f"got a most negative density of {-neg!r} "
                            f"with coupling {coupling!r}: the formal run's links would have "
                            f"imaginary noise of variance up to {variance:.3g}; expected at "
                            f"most {MAX_FORMAL_VARIANCE:g} for `run` (their exponentials "
                            "leave double precision; `whitegauge exact` and `whitegauge "
                            "series` take it)")


def _rep_iv(obs: dict, family: str, n: int) -> str:
    """The representation, by the group engine's grammar (:func:`holonomy.groups.parse_rep`),
    within the spec's size limits; returned in its canonical spelling."""
    if "rep" not in obs:
        return "fundamental"
    rep = obs["rep"]
    if not isinstance(rep, str):
        raise SpecError("observable.rep", f"got {_describe(rep)}; expected a string like "
                        '"fundamental", "adjoint", "spin:1/2" or "power:2"')
    try:
        kind, arg = parse_rep(rep, family, matrix_size(family, n))
    except ArgumentError as exc:
        raise SpecError("observable.rep", exc.rule) from None
    if n != "inf":  # the master field has its own rule (fundamental or power:p)
        try:
            check_rep_dimension(rep, kind, arg, family, n)
        except ArgumentError as exc:
            raise SpecError("observable.rep", exc.rule) from None
    if kind == "power" and arg > MAX_POWER:
        raise SpecError("observable.rep", f"got {rep!r}; expected power:k with "
                        f"k <= {MAX_POWER}")
    return rep_name(kind, arg)


def _surface_iv(data: dict, loops, spacing: float, density, purpose: str, scheme: str):
    """``(kind, genus, T)`` of the ``[surface]`` table (README.md, Closed surfaces)."""
    t = _table(data, "surface", "surface", _SURFACE_KEYS, required=False)
    kind = _choice(t, "kind", "surface.kind", SURFACE_KINDS, default="plane")
    if kind == "plane":
        for key in ("genus", "area"):
            if key in t:
                raise SpecError(f"surface.{key}", f"got {_describe(t[key])} on the plane; "
                                'expected no surface.' + key + ' unless kind is "sphere", '
                                '"torus" or "closed"')
        return "plane", None, None
    if data.get("correlators"):
        raise SpecError("correlators", f"got correlators with surface kind {kind!r}; "
                        "expected none: correlators on closed surfaces are not available "
                        "in this version")
    fixed = {"sphere": 0, "torus": 1}.get(kind)
    genus = _integer(t, "genus", "surface.genus", rule="an integer >= 0",
                     check=lambda v: v >= 0, required=fixed is None, default=fixed)
    if fixed is not None and genus != fixed:
        raise SpecError("surface.genus", f"got {genus!r} with kind {kind!r}; expected "
                        f"{fixed} (or kind \"closed\")")
    T = _number(t, "area", "surface.area", rule="a number > 0, the total area T",
                check=lambda v: 0 < v <= 1e100)
    if purpose == "study":
        raise SpecError("surface.kind", f"got {kind!r}; expected \"plane\" for `{purpose}`: "
                        "studies on closed surfaces are not available in this "
                        "version (use `whitegauge exact` for exact surface values)")
    if purpose == "run" and scheme not in SURFACE_SCHEMES:
        raise SpecError("field.scheme", f"got {scheme!r} with surface kind {kind!r}; expected "
                        f"{' or '.join(map(repr, SURFACE_SCHEMES))}: a closed surface is "
                        "sampled by weighting the plane's heat-kernel lattice measure, which "
                        "only the heat scheme samples")
    if (density < 0) if isinstance(density, float) else any(r[4] < 0 for r in density):
        raise SpecError("surface.kind", f"got {kind!r} with a density that changes sign; "
                        "expected a non-negative density on a closed surface")
    area = AreaForm(base=density) if isinstance(density, float) else \
        AreaForm(base=1.0, rects=density)
    for i, loop in enumerate(loops):
        try:
            drawn = drawn_measure(loop.build(spacing), area)
        except ValueError as exc:  # the loop's arrangement refused (size or geometry)
            raise SpecError(f"loops[{i}]", str(exc)) from None
        if not T > drawn:
            raise SpecError("surface.area", f"got {T!r}; expected a total area larger than "
                            f"the drawn measure {drawn:.6g} of loops[{i}] ({loop.name!r})")
    return kind, genus, T


def _spec_iv(data: dict, *, text: str, default_name: str, purpose: str,
             source: str) -> Spec:
    """Validate the parsed TOML ``data``; the one place where spec rules live."""
    _no_unknown(data, "", _TOP_KEYS)
    name = data.get("name", default_name)
    if not isinstance(name, str) or not name.strip() or "\0" in name:
        raise SpecError("name", f"got {_describe(name)}; expected a non-empty string "
                        "without NUL characters")
    family, n, metric = _group_iv(data, purpose)

    f = _table(data, "field", "field", _FIELD_KEYS)
    coupling = _number(f, "coupling", "field.coupling",
                       rule="a number > 0 in [1e-100, 1e100]",
                       check=lambda v: 1e-100 <= v <= 1e100)
    spacing = _number(f, "spacing", "field.spacing", rule="a number > 0",
                      check=lambda v: v > 0)
    gauge = _choice(f, "gauge", "field.gauge", GAUGES, default="axial-y")
    scheme = _choice(f, "scheme", "field.scheme", tuple(SCHEMES), default="heat")
    reference = _number(f, "reference", "field.reference", rule="a finite number",
                        required=False)
    # `run` samples a signed density formally (complex rotation) for the Gaussian
    # schemes; the others have no formal sampler: refused on field.scheme
    density = _density_iv(f, "run (formal)" if purpose == "run" else purpose)
    signed = (density < 0) if isinstance(density, float) else any(r[4] < 0 for r in density)
    if purpose == "run" and signed and scheme not in formal_schemes():
        raise SpecError("field.scheme", f"got {scheme!r} with a density that changes sign; "
                        f"expected one of {', '.join(formal_schemes())}: `run` estimates a "
                        "formal Wilson loop (no measure exists) only for the Gaussian "
                        "schemes, by complex rotation (`whitegauge exact` and `whitegauge "
                        "series` evaluate every scheme formally)")

    loops_raw = data.get("loops")
    if loops_raw is None:
        raise SpecError("loops", "missing; expected at least one [[loops]] table")
    if not isinstance(loops_raw, list) or not loops_raw:
        raise SpecError("loops", f"got {_describe(loops_raw)}; expected at least one "
                        "[[loops]] table")
    loops = tuple(_loop_iv(item, i, spacing) for i, item in enumerate(loops_raw))
    seen: dict[str, int] = {}
    for i, loop in enumerate(loops):
        if loop.name in seen:
            raise SpecError(f"loops[{i}].name", f"{loop.name!r} is already the name of "
                            f"loops[{seen[loop.name]}]; expected distinct names")
        seen[loop.name] = i

    _extent_iv(loops, spacing, reference, gauge)
    _time_iv(coupling, density, loops, spacing, formal_run=purpose == "run" and signed)

    correlators = _correlators_iv(data, tuple(loop.name for loop in loops))

    obs = _table(data, "observable", "observable", _OBS_KEYS, required=False)
    rep = _rep_iv(obs, family, n)

    sampling = purpose in ("run", "study")
    r = _table(data, "run", "run", _RUN_KEYS, required=sampling)
    samples = _integer(r, "samples", "run.samples",
                       rule=f"an integer > 0 and <= {MAX_SAMPLES:.0e}",
                       check=lambda v: 0 < v <= MAX_SAMPLES, required=sampling)
    block = _integer(r, "block", "run.block", rule=f"an integer > 0 and <= {MAX_BLOCK:.0e}",
                     check=lambda v: 0 < v <= MAX_BLOCK, required=False,
                     default=DEFAULT_BLOCK)
    seed = _integer(r, "seed", "run.seed", rule="an integer >= 0",
                    check=lambda v: v >= 0, required=sampling)

    surface, genus, total_area = _surface_iv(data, loops, spacing, density, purpose, scheme)

    return Spec(
        surface=surface, genus=genus, total_area=total_area,
        name=name, text=text, sha256=hashlib.sha256(text.encode("utf-8")).hexdigest(),
        family=family, n=n, metric=metric, coupling=coupling, spacing=spacing,
        gauge=gauge, reference=reference, scheme=scheme, density=density, loops=loops,
        rep=rep, samples=samples, block=block, seed=seed, source=source,
        correlators=correlators, purpose=purpose,
    )


def _correlators_iv(data: dict, names: tuple[str, ...]) -> tuple[tuple[str, ...], ...]:
    """``[[correlators]]`` tables: ``loops`` = two or more distinct names of loops."""
    raw = data.get("correlators")
    if raw is None:
        return ()
    if not isinstance(raw, list):
        raise SpecError("correlators", f"got {_describe(raw)}; expected [[correlators]] "
                        "tables with loops = [\"a\", \"b\", ...]")
    out = []
    for i, item in enumerate(raw):
        path = f"correlators[{i}]"
        if not isinstance(item, dict):
            raise SpecError(path, f"got {_describe(item)}; expected a table with loops = "
                            "[names]")
        _no_unknown(item, path, _CORRELATOR_KEYS)
        loops = item.get("loops")
        rule = (f"a list of two or more distinct names of the spec's loops "
                f"({', '.join(repr(n) for n in names)})")
        if isinstance(loops, list) and len(loops) < 2:
            raise SpecError(f"{path}.loops", f"got {len(loops)} name(s); expected {rule}")
        if not isinstance(loops, list) or not all(isinstance(x, str) for x in loops):
            raise SpecError(f"{path}.loops", f"got {_describe(loops)}; expected {rule}")
        unknown = [x for x in loops if x not in names]
        if unknown:
            raise SpecError(f"{path}.loops", f"got the unknown loop name {unknown[0]!r}; "
                            f"expected {rule}")
        if len(set(loops)) != len(loops):
            raise SpecError(f"{path}.loops", f"got a repeated name in {loops!r}; expected "
                            f"{rule}")
        out.append(tuple(loops))
    return tuple(out)
