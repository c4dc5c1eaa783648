"""Shared test helpers: spec texts, spec mutation and the command-line runner.

Test modules import them (``from tests.conftest import TINY_SPEC, wg``); the fixtures
below write the texts to files. Sample counts are tiny so the suite stays fast.
"""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

#: the spec of the README's tour (examples/box_and_ring.toml) with 100000 samples
ISSUE_SPEC = '''
name = "box-and-ring"
[group]
family = "SU"
n = 2
metric = "physics"
[field]
coupling = 1.0
spacing = 0.125
gauge = "axial-y"
reference = 0.0
scheme = "heat"
density = 1.0
[[loops]]
name = "box"
vertices = [[0.0, 0.0], [2.0, 0.0], [2.0, 1.0], [0.0, 1.0]]
[[loops]]
name = "ring"
circle = { center = [1.0, 3.0], radius = 0.5, sides = 64 }
turns = 2
[[loops]]
name = "ell"
moves = "R4 U2 L2 U2 L2 D4"
start = [0.0, 0.0]
[observable]
rep = "fundamental"
[run]
samples = 100000
block = 4096
seed = 20261202
'''

BOX = 'vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]'


def spec_text(loops: str, *, name: str | None, spacing: float = 0.25,
              scheme: str | None = "heat", samples: int = 600, block: int | None = 64,
              seed: int = 7, observable: bool = False, lead: str = "\n",
              family: str = "SU", n: int | str = 2, coupling: float | str = 1.0,
              field: str = "") -> str:
    """A spec, by default for SU(2) with the physics metric and coupling 1 (the tests'
    usual group): ``loops`` is the text of its ``[[loops]]`` tables (and anything after
    them, such as ``[[correlators]]``), ``field`` more lines of its ``[field]`` table;
    the other keys as given (no ``name`` line for None; a str ``coupling`` or ``n`` is
    written as it is, for templates)."""
    return ((f'{lead}name = "{name}"\n' if name is not None else lead)
            + f'[group]\nfamily = "{family}"\nn = {n}\nmetric = "physics"\n'
            f'[field]\ncoupling = {coupling if isinstance(coupling, str) else repr(coupling)}\n'
            f'spacing = {spacing!r}\n'
            + (f'scheme = "{scheme}"\n' if scheme else "")
            + (field.strip("\n") + "\n" if field else "") + loops.strip("\n") + "\n"
            + ('[observable]\nrep = "fundamental"\n' if observable else "")
            + f"[run]\nsamples = {samples}\n" + (f"block = {block}\n" if block else "")
            + f"seed = {seed}\n")


BOX_AND_ELL = f'''[[loops]]
name = "box"
{BOX}
[[loops]]
name = "ell"
moves = "R2 U1 L1 U1 L1 D2"
start = [0.0, 0.0]'''


#: a small valid spec: a box and an L-shaped moves loop, 600 samples
TINY_SPEC = spec_text(BOX_AND_ELL, name="tiny")

#: the base of the bad-input tables (one [observable] table, 64 samples)
BASE = spec_text(BOX_AND_ELL, name="hard", samples=64, block=32, observable=True, lead="")


def mutate(*pairs: tuple[str, str], text: str = BASE) -> str:
    """``text`` with each ``old`` replaced by ``new`` (each ``old`` must occur)."""
    for old, new in pairs:
        assert old in text, old
        text = text.replace(old, new, 1)
    return text


def wg(*args, cwd=None, env=None, timeout=600, check_code=None):
    """Run ``whitegauge`` in a subprocess (this interpreter, so the code under test);
    returns the CompletedProcess, after checking its exit code if ``check_code`` is
    given."""
    full = dict(os.environ, **(env or {}))
    proc = subprocess.run([sys.executable, "-m", "holonomy.cli", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd, env=full,
                          timeout=timeout)
    if check_code is not None:
        assert proc.returncode == check_code, (proc.returncode, proc.stdout, proc.stderr)
    return proc


def numbers(results: dict) -> list:
    """The numbers of a results object that must be bitwise reproducible."""
    return [(r["loop"], r["estimate"], r["estimate_imag"], r["stderr"], r["samples"])
            for r in results["results"]]


def read_json(path: Path) -> dict:
    return json.loads(Path(path).read_text())


@pytest.fixture
def tiny_spec_path(tmp_path) -> Path:
    """TINY_SPEC written to a file."""
    path = tmp_path / "tiny.toml"
    path.write_text(TINY_SPEC)
    return path
