"""Memory per block: peak memory of one block on the dense path, whole grid vs slabs.

Each case (group, scheme, grid cells, block) runs one block in a fresh process twice:
``before``, the whole-grid route (every cell of the chunk in memory: the route of
every block before the slabs, forced by raising ``holonomy.BLOCK_MEMORY``; for schemes
that do not read the cell noise its draw is also held, as it was), and ``after``, the
engine as it is (slab by slab above the budget, the unread noise drawn and dropped).
The script prints the peak resident memory each added to the process (the high-water
mark ``VmHWM`` reset before the block with ``/proc/self/clear_refs``, minus the resident
memory then; ``getrusage`` max RSS where that is not available), the engine's estimate
(``holonomy.block_memory``), the block's wall time and the ratio after / before, all
measured in the same run. ``before`` is skipped where its estimate is above
``--cap`` GiB (the machine may not hold it). Targets: ``after`` within
``holonomy.BLOCK_MEMORY`` (2 GiB) for every accepted case; ``before`` is what the
case needed.

``--quick`` runs the small cases with the budget lowered to 256 MiB (slabs of 32 MiB)
so that they too go slab by slab.

Run: ``python3 benchmarks/bench_memory.py [--quick] [--kernel numpy|fast] [--cap GIB]
[--budget MIB]``.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys

_CHILD = r"""
import json, resource, sys, time
from discretize import Loop
from holonomy import Field, WilsonProblem, block_memory, run_block
from holonomy import _sampling, _schemes
fam, n, scheme, cells, block, gauge, mode, budget = json.loads(sys.argv[1])
if budget:
    _sampling.BLOCK_MEMORY, _sampling.SLAB_BYTES = budget, budget // 8
if mode == "before":
    _sampling.BLOCK_MEMORY = float("inf")
    for cls in (_schemes.WilsonScheme, _schemes.HeatScheme):
        cls.reads_noise = lambda self, group: True   # the noise drawn and held, as before
h = 2.0 / (cells ** 0.5 - 2)
p = WilsonProblem(family=fam, n=n, metric="physics",
                  field=Field(0.5, h, scheme=scheme, gauge=gauge),
                  loops=(Loop.circle((0, 0), 1.0, 64),), samples=block, block=block, seed=3,
                  path="dense")
_ = (p.plan, p.kernel, p.group.basis)
est = block_memory(p, block, "dense")


def _status(key):  # KiB, from /proc/self/status (Linux)
    for line in open("/proc/self/status"):
        if line.startswith(key + ":"):
            return int(line.split()[1])


try:  # reset the high-water mark to the current RSS (Linux: clear_refs 5)
    with open("/proc/self/clear_refs", "w") as f:
        f.write("5")
    base = _status("VmRSS")
except OSError:
    base = None
if base is None:
    base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
t = time.perf_counter()
b = run_block(p, 0)
t = time.perf_counter() - t
peak = _status("VmHWM") or resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
print(json.dumps({"mib": (peak - base) / 1024, "est": est / 2**20, "s": t,
                  "cells": p.grid.nx * p.grid.ny, "sum": float(b.sum_re.sum())}))
"""

CASES = [  # (family, n, scheme, cells, block, gauge)
    ("U", 1, "gauss", 1e6, 8, "axial-y"),
    ("SU", 2, "gauss", 1e6, 8, "axial-y"),
    ("SU", 2, "gauss", 1e6, 8, "axial-x"),
    ("SU", 3, "gauss", 1e6, 8, "axial-y"),
    ("U", 4, "gauss", 1e5, 8, "axial-y"),
    ("U", 4, "gauss", 1e6, 8, "axial-y"),
    ("SU", 2, "linear", 1e6, 8, "axial-y"),
    ("SU", 3, "linear", 1e6, 8, "axial-x"),
    ("U", 4, "linear", 1e6, 8, "axial-y"),
    ("U", 1, "heat", 1e6, 8, "axial-y"),
    ("SU", 2, "heat", 1e5, 8, "axial-y"),
    ("U", 1, "wilson", 1e6, 8, "axial-y"),
    ("SU", 2, "wilson", 1e6, 8, "axial-y"),
    ("SU", 2, "gauss", 1e7, 8, "axial-y"),
    ("U", 4, "gauss", 1e7, 1, "axial-y"),
]
QUICK = [c for c in CASES if c[3] <= 1e5] + [("SU", 2, "gauss", 3e5, 8, "axial-y"),
                                              ("SU", 3, "linear", 3e5, 8, "axial-x")]


def _run(case, mode: str, kernel: str, budget: int | None) -> dict:
    env = dict(os.environ, WHITEGAUGE_KERNEL=kernel)
    out = subprocess.run([sys.executable, "-c", _CHILD,
                          json.dumps(list(case) + [mode, budget])],
                         capture_output=True, text=True, env=env, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def _estimate_before(case) -> float:
    """GiB of the whole-grid route (the engine's estimate of it), without running it."""
    from discretize import Loop
    from holonomy import Field, WilsonProblem, _sampling

    fam, n, scheme, cells, block, gauge = case
    saved = _sampling.BLOCK_MEMORY
    _sampling.BLOCK_MEMORY = float("inf")
    try:
        p = WilsonProblem(family=fam, n=n, metric="physics",
                          field=Field(0.5, 2.0 / (cells ** 0.5 - 2), scheme=scheme,
                                      gauge=gauge),
                          loops=(Loop.circle((0, 0), 1.0, 64),), samples=block, block=block,
                          seed=3, path="dense")
        return _sampling.block_memory(p, block, "dense") / 2**30
    finally:
        _sampling.BLOCK_MEMORY = saved


def main(quick: bool = False, kernel: str = "numpy", cap: float = 8.0,
         budget_mib: float | None = None) -> list[dict]:
    budget = int(budget_mib * 2**20) if budget_mib else (256 << 20 if quick else None)
    if budget:
        print(f"budget lowered to {budget / 2**20:g} MiB per block (slabs of 1/8 of it)")
    rows = []
    print(f"{'case':34s} {'cells':>9s} {'before MiB':>11s} {'after MiB':>10s} "
          f"{'est. MiB':>9s} {'before s':>9s} {'after s':>8s} {'time after/before':>18s}")
    for case in (QUICK if quick else CASES):
        fam, n, scheme, cells, block, gauge = case
        name = f"{fam}({n}) {scheme} {gauge} block {block}"
        after = _run(case, "after", kernel, budget)
        before = None
        if _estimate_before(case) <= cap:
            before = _run(case, "before", kernel, budget)
        row = dict(case=name, cells=after["cells"], after_mib=after["mib"],
                   estimate_mib=after["est"], after_s=after["s"],
                   before_mib=before and before["mib"], before_s=before and before["s"])
        rows.append(row)
        b_mib = f"{before['mib']:11.0f}" if before else f"{'(over cap)':>11s}"
        b_s = f"{before['s']:9.2f}" if before else f"{'-':>9s}"
        ratio = f"{after['s'] / before['s']:18.2f}" if before else f"{'-':>18s}"
        print(f"{name:34s} {after['cells']:9d} {b_mib} {after['mib']:10.0f} "
              f"{after['est']:9.0f} {b_s} {after['s']:8.2f} {ratio}", flush=True)
    return rows


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    parser.add_argument("--kernel", choices=("numpy", "fast"), default="numpy")
    parser.add_argument("--cap", type=float, default=8.0,
                        help="skip `before` where its estimate is above this many GiB")
    parser.add_argument("--budget", type=float, default=None,
                        help="lower the block budget to this many MiB (--quick: 256), so "
                        "that small grids go slab by slab")
    args = parser.parse_args()
    main(args.quick, args.kernel, args.cap, args.budget)
