"""Wall time of every command at the largest sizes the spec accepts (issue 17).

Each case is a spec at (or near) a size limit of ``holonomy.experiment.LIMITS``: a
circle with the most sides, that circle wound the most turns, a moves loop of many
tokens, a long moves loop wound many times, a study of a many-vertex loop and of many
loops. Each command (``spec --check``, ``exact``, ``series --order 2``, ``run`` with 64
samples in blocks of 16, ``study`` with 128 samples on four spacings h, 2h, 4h, 8h and
the heat scheme, ``decompactify`` on a sphere) runs in its own
subprocess with one BLAS thread and a wall-time cap; the table prints its wall time,
its exit code and, for a refusal (exit 2), the key it names. The budget (README.md,
limits) is about a minute per loop on a 2-core machine: a case over it is marked.

Run ``python3 benchmarks/bench_limits.py [--quick] [--only NAME,...] [--cap SECONDS]``;
``--quick`` runs the one-loop cases only with ``spec --check``, ``exact`` and ``run``.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from holonomy.experiment import LIMITS  # noqa: E402

BUDGET = 60.0  # seconds per loop (README.md)

HEAD = '''name = "{name}"
[group]
family = "SU"
n = 2
metric = "physics"
[field]
coupling = 1.0
spacing = {spacing!r}
{surface}
'''
RUN = '''[run]
samples = {samples}
block = {block}
seed = 1
'''


def circle(name, sides, radius=1.0, turns=1, center=(0.0, 0.0)):
    return (f'[[loops]]\nname = "{name}"\ncircle = {{ center = [{center[0]!r}, '
            f'{center[1]!r}], radius = {radius!r}, sides = {sides} }}\nturns = {turns}\n')


def curve(name, family, sides, turns=1, **params):
    ps = ", ".join(f"{k} = {v!r}" for k, v in params.items())
    return (f'[[loops]]\nname = "{name}"\ncurve = {{ family = "{family}", {ps}, '
            f'sides = {sides} }}\nturns = {turns}\n')


def moves(name, text, turns=1):
    return f'[[loops]]\nname = "{name}"\nmoves = "{text}"\nstart = [0.0, 0.0]\nturns = {turns}\n'


def comb_moves(tokens: int, width: int = 2000) -> str:
    """A closed moves loop of about ``tokens`` tokens of count 1 and 3: rows of teeth
    (up 1, right 1, down 1, right 1) joined by steps up 3, inside a box about
    ``width`` wide, closed along a column left of the rows (a simple loop)."""
    per_row = width // 2
    out, rows = [], 0
    while len(out) + 4 * per_row + 1 < tokens - 5:
        d = "R" if rows % 2 == 0 else "L"
        out += f"U1 {d}1 D1 {d}1".split() * per_row
        out.append("U3")
        rows += 1
    if rows % 2:  # back to the left edge
        out.append(f"L{2 * per_row}")
    out.append(f"L1 D{3 * rows} R1")
    return " ".join(out)


def cases():
    """(name, spec text, commands, loops)."""
    sides = LIMITS["sides"]
    turns = LIMITS["turns"]
    all_cmds = ("check", "exact", "series", "run", "study", "decompactify")
    out = []
    # the most sides, on a coarse grid and on a fine one
    out.append(("circle-100k-h0.01", 0.01, circle("c", sides), all_cmds, 1))
    out.append(("circle-100k-h0.001", 0.001, circle("c", sides), all_cmds, 1))
    # the most turns on the most sides
    out.append(("circle-100k-turns1000", 0.01, circle("c", sides, turns=turns), all_cmds, 1))
    out.append(("circle-64-turns1000-h0.001", 0.001, circle("c", 64, turns=turns),
                all_cmds, 1))
    # moves: many tokens; a long single row wound many times
    out.append(("moves-80k-tokens", 1.0, moves("m", comb_moves(80_000)), all_cmds, 1))
    steps = LIMITS["steps per move"]
    out.append(("moves-long-turns1000", 1.0,
                moves("m", f"R{steps} U1 L{steps} D1", turns=turns), all_cmds, 1))
    # at the lattice path limit (1e6 unit steps): a wound circle, one long turn
    out.append(("circle-64-turns125-h0.001", 0.001, circle("c", 64, turns=125), all_cmds, 1))
    half = LIMITS["lattice steps per loop"] // 2 - 1
    out.append(("moves-1e6-steps", 1.0, moves("m", f"R{half} U1 L{half} D1"), all_cmds, 1))
    # curves that cross themselves, with the most sides (one wound)
    out.append(("lemniscate-100k-turns100", 0.01,
                curve("c", "lemniscate", sides, turns=100, a=1.0), all_cmds, 1))
    out.append(("rose7-100k", 0.01, curve("c", "rose", sides, a=1.0, k=7), all_cmds, 1))
    # a study of a 5000-vertex loop, and 200 loops
    out.append(("study-5000-vertices", 0.01, circle("c", 5000), ("check", "exact", "run",
                                                                 "study"), 1))
    many = "".join(circle(f"c{i}", 64, radius=0.4, center=(float(i % 20), float(i // 20)))
                   for i in range(200))
    out.append(("loops-200", 0.05, many, all_cmds, 200))
    return out


def spec_text(name, spacing, loops, command):
    surface = ""
    if command == "decompactify":
        surface = '[surface]\nkind = "sphere"\narea = 1e6\n'
    samples, block = (128, 16) if command == "study" else (64, 16)
    return (HEAD.format(name=name, spacing=spacing, surface=surface) + loops
            + RUN.format(samples=samples, block=block))


def argv(command, path, out, spacing):
    if command == "check":
        return ["spec", "--check", path]
    if command == "exact":
        return ["exact", path]
    if command == "series":
        return ["series", path, "--order", "2"]
    if command == "run":
        return ["run", path, "--out", out, "--quiet"]
    if command == "study":
        ladder = ",".join(repr(spacing * 2**k) for k in (3, 2, 1, 0))
        return ["study", path, "--spacings", ladder, "--schemes", "heat", "--out", out,
                "--quiet"]
    return ["decompactify", path, "--areas", "1e6,2e6", "--order", "2"]


def run_one(command, text, spacing, cap, tmp):
    path = os.path.join(tmp, f"{command}.toml")
    Path(path).write_text(text)
    out = os.path.join(tmp, f"out-{command}")
    env = dict(os.environ, OPENBLAS_NUM_THREADS="1", WHITEGAUGE_SERIES_BUDGET=str(int(cap)))
    code = ("import sys; from holonomy.cli import main; sys.argv[0] = 'whitegauge'; "
            "raise SystemExit(main())")
    t0 = time.perf_counter()
    try:
        p = subprocess.run([sys.executable, "-c", code, *argv(command, path, out, spacing)],
                           cwd=ROOT, env=env, capture_output=True, text=True, timeout=cap)
    except subprocess.TimeoutExpired:
        return time.perf_counter() - t0, None, f"killed at the cap ({cap:.0f} s)"
    wall = time.perf_counter() - t0
    err = [ln for ln in p.stderr.splitlines() if "error" in ln.lower()]
    return wall, p.returncode, (err[-1][:150] if err else "")


def main(argv_=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--only", default="")
    ap.add_argument("--commands", default="")
    ap.add_argument("--cap", type=float, default=300.0)
    args = ap.parse_args(argv_)
    only = set(filter(None, args.only.split(",")))
    cmds = set(filter(None, args.commands.split(",")))
    rows = []
    print(f"{'case':28s} {'command':13s} {'wall s':>8s} {'per loop':>8s}  exit  note",
          flush=True)
    for name, spacing, loops, commands, n_loops in cases():
        if only and name not in only:
            continue
        if args.quick and (n_loops > 1 or name.startswith("study")):
            continue
        for command in commands:
            if cmds and command not in cmds:
                continue
            if args.quick and command not in ("check", "exact", "run"):
                continue
            with tempfile.TemporaryDirectory() as tmp:
                wall, rc, note = run_one(command, spec_text(name, spacing, loops, command),
                                         spacing, args.cap, tmp)
            per = wall / n_loops
            flag = "*" if (rc is None or per > BUDGET) else " "
            rows.append((name, command, wall, rc, note))
            print(f"{name:28s} {command:13s} {wall:8.1f} {per:8.1f}{flag} "
                  f"{'-' if rc is None else rc:>4}  {note}", flush=True)
    print(f"(* = over the budget of {BUDGET:.0f} s per loop, or killed)")
    return rows


if __name__ == "__main__":
    main()
