"""Perimeter-only path: time per sample grows with the perimeter, not the area.

Squares of side 8, 32 and 128 cells at the same spacing, SU(2), `heat` and `linear`
schemes. For each, the script prints the time per sample, the ratio to the 8-cell
square (perimeter ratios 4 and 16, area ratios 16 and 256), and the ratio of the run's
time to the time numpy needs to draw the same number of Gaussians in the same process.

Run: ``python3 benchmarks/bench_sampling.py [--samples N]``.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from discretize import Loop
from holonomy import Field, WilsonProblem, run_block


def _best(fn, repeat=3):
    best = np.inf
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def main(samples: int = 4000) -> list[dict]:
    h = 1.0 / 8
    rows = []
    for scheme in ("heat", "linear"):
        base = None
        for side in (8, 32, 128):
            L = side * h
            loop = Loop.polygon([[0, 0], [L, 0], [L, L], [0, L]])
            problem = WilsonProblem(family="SU", n=2, metric="physics",
                                    field=Field(1.0 / L**2, h, scheme=scheme),
                                    loops=(loop,), samples=samples, block=samples, seed=1)
            run_block(problem, 0, size=8)  # warm caches (plan, group)
            t_run = _best(lambda: run_block(problem, 0))
            draws = problem.plan.n_intervals * problem.group.dim
            t_floor = _best(lambda: np.random.default_rng(0).standard_normal((samples, draws)))
            base = base or t_run
            rows.append(dict(scheme=scheme, side=side, per_sample_us=1e6 * t_run / samples,
                             vs_side8=t_run / base, vs_gaussian_floor=t_run / t_floor))
    print(f"{'scheme':8s} {'side':>5s} {'us/sample':>10s} {'vs side 8':>10s} "
          f"{'vs floor':>9s}   (perimeter ratio 4, 16; area ratio 16, 256)")
    for r in rows:
        print(f"{r['scheme']:8s} {r['side']:5d} {r['per_sample_us']:10.2f} "
              f"{r['vs_side8']:10.2f} {r['vs_gaussian_floor']:9.1f}")
    return rows


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=4000)
    main(parser.parse_args().samples)
