"""Shared spec texts and helpers for the hardening tests (tiny runs: the suite stays fast)."""

import json
import os
import subprocess
import sys
from pathlib import Path

BASE = '''name = "hard"
[group]
family = "SU"
n = 2
metric = "physics"
[field]
coupling = 1.0
spacing = 0.25
scheme = "heat"
[[loops]]
name = "box"
vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]
[[loops]]
name = "ell"
moves = "R2 U1 L1 U1 L1 D2"
start = [0.0, 0.0]
[observable]
rep = "fundamental"
[run]
samples = 64
block = 32
seed = 7
'''


def mutate(*pairs: tuple[str, str], text: str = BASE) -> str:
    """``text`` with each ``old`` replaced by ``new`` (each ``old`` must occur)."""
    for old, new in pairs:
        assert old in text, old
        text = text.replace(old, new, 1)
    return text


def wg(*args, cwd=None, env=None, timeout=120):
    """Run ``whitegauge`` in a subprocess; returns the CompletedProcess."""
    full = dict(os.environ, **(env or {}))
    return subprocess.run([sys.executable, "-m", "holonomy.cli", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd, env=full,
                          timeout=timeout)


def numbers(results: dict) -> list:
    """The numbers of a results object that must be bitwise reproducible."""
    return [(r["loop"], r["estimate"], r["estimate_imag"], r["stderr"], r["samples"])
            for r in results["results"]]


def read_json(path: Path) -> dict:
    return json.loads(Path(path).read_text())
