"""Benchmark of the perturbative series engine (holonomy.exp_product_series).

Prints, measured side by side in one run:

1. the transfer over edges against the literal word expansion (every non-decreasing
   word of the expanded product, each by the Wick rule) on a case both can do, as a
   ratio of times;
2. the time of order 4 for a lattice loop with 16 horizontal edges (SU(2), physics
   metric), for an axial-gauge-like covariance (edges in columns, min-type covariance
   within a column) and for a dense covariance;
3. for each order, the largest number of edges (doubling from 2) whose series takes
   less than the budget (default 10 s).

Usage: python3 benchmarks/bench_series.py [--budget SECONDS] [--max-order M]
"""

from __future__ import annotations

import argparse
import itertools
import math
import time

import numpy as np

from holonomy import exp_product_series, formal_word_trace
from holonomy.groups import make_group


def column_cov(m: int, h: float = 0.1) -> np.ndarray:
    """Covariance of m horizontal edges, two per column (bottom and top of a loop):
    C_ij = s_i s_j h min(y_i, y_j) in the same column, 0 otherwise."""
    cols = np.arange(m) // 2
    y = np.where(np.arange(m) % 2 == 0, 1.0, 3.0)
    s = np.where(np.arange(m) % 2 == 0, -1.0, 1.0)
    same = cols[:, None] == cols[None, :]
    return h * same * np.outer(s, s) * np.minimum.outer(y, y)


def dense_cov(m: int, seed: int = 0) -> np.ndarray:
    rng = np.random.default_rng(seed)
    G = rng.standard_normal((m, m)) / np.sqrt(m)
    return G @ G.T


def literal(group, C, order):
    m = C.shape[0]
    coeffs = []
    for j in range(order + 1):
        total = 0.0
        for counts in itertools.product(range(2 * j + 1), repeat=m):
            if sum(counts) != 2 * j:
                continue
            word = [e for e in range(m) for _ in range(counts[e])]
            total += formal_word_trace(group, word, C) / math.prod(
                math.factorial(c) for c in counts)
        coeffs.append(total / group.N)
    return coeffs


def timed(fn, *args, **kw):
    t0 = time.perf_counter()
    out = fn(*args, **kw)
    return time.perf_counter() - t0, out


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--budget", type=float, default=10.0)
    ap.add_argument("--max-order", type=int, default=6)
    args = ap.parse_args()
    g = make_group("SU", 2, "physics")

    # 1. baseline: literal word expansion on 4 edges, order 3
    C = dense_cov(4)
    exp_product_series(g, C, 3)  # warm the transition cache
    t_lit, lit = timed(literal, g, C, 3)
    t_dp, dp = timed(exp_product_series, g, C, 3)
    err = max(abs(a - b) for a, b in zip(lit, dp.coefficients))
    print(f"literal words vs transfer (SU(2), 4 edges, order 3): {t_lit:.3f} s vs "
          f"{t_dp:.3f} s, ratio {t_lit / t_dp:.1f}, max |diff| {err:.1e}")

    # 2. order 4, 16 horizontal edges
    for name, cov in (("column", column_cov(16)), ("dense", dense_cov(16))):
        t, res = timed(exp_product_series, g, cov, 4)
        print(f"order 4, 16 edges, {name} covariance: {t:.2f} s "
              f"({res.diagrams} pairings, {res.states} states); "
              f"c_1..c_4 = {np.round(res.coefficients[1:], 6).tolist()}")
    t_ref, _ = timed(exp_product_series, g, column_cov(4), 4)
    print(f"  ratio to 4 edges at order 4: {t / t_ref:.1f}")

    # 3. what fits in the budget
    print(f"largest edge count (doubling) within {args.budget:g} s, dense covariance:")
    for order in range(1, args.max_order + 1):
        best, m = None, 2
        while m <= 128:
            t, _ = timed(exp_product_series, g, dense_cov(m), order)
            if t > args.budget:
                break
            best = (m, t)
            m *= 2
        print(f"  order {order}: " + (f"{best[0]} edges in {best[1]:.2f} s"
                                      if best else "not even 2 edges"))
        if best is None:
            break


if __name__ == "__main__":
    main()
