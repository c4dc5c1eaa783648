"""Benchmark of the perturbative series engine (holonomy.exp_product_series).

Prints, measured side by side in one run:

1. the transfer over edges against the literal word expansion (every non-decreasing
   word of the expanded product, each by the Wick rule) on a case both can do, as a
   ratio of times;
2. the time of order 4 for a lattice loop with 16 horizontal edges (SU(2), physics
   metric), for an axial-gauge-like covariance (edges in columns, min-type covariance
   within a column) and for a dense covariance;
3. for each order, the largest number of edges (doubling from 2) whose series takes
   less than the budget (default 10 s);
4. the README's example (examples/box_and_ring.toml) as a ``linear`` lattice series:
   order 5 by the new route (labels, batched transfer, wound loops expanded once) and
   by the previous one (per-state loop over edges, axes over the remaining edges),
   side by side, then order 6 by the new route alone (the previous one needed 208 s
   and then ran out of memory on the wound loop).

Usage: python3 benchmarks/bench_series.py [--budget SECONDS] [--max-order M] [--only-readme]
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
    ap.add_argument("--only-readme", action="store_true")
    args = ap.parse_args()
    g = make_group("SU", 2, "physics")
    if args.only_readme:
        readme_example()
        return

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
    readme_example()


def readme_example() -> None:
    import dataclasses
    import pathlib

    from holonomy import lattice_series
    from holonomy._lattice_series import lattice_covariance
    from holonomy._series import _exp_product_series_iv, _finish, _key_graph, _transfer_keys
    from holonomy.experiment import load_spec
    from holonomy.experiment._runner import build_problem

    path = pathlib.Path(__file__).resolve().parents[1] / "examples" / "box_and_ring.toml"
    spec = load_spec(path)
    problem = build_problem(dataclasses.replace(spec, scheme="linear"))

    def previous(i, order):
        C = lattice_covariance(problem, i)
        C, M, rep, B, D, exact, c_exact = _exp_product_series_iv(problem.group, C, order,
                                                                 "fundamental", False)
        states = _transfer_keys(C, np.eye(C.shape[0]), np.diagonal(C).copy(), M, False)
        return _finish(problem.group, states, M, rep, B, D, exact, c_exact)

    print("README example (box_and_ring.toml), linear lattice series, SU(2):")
    t_graph, _ = timed(_key_graph, 5)
    print(f"  order 5: pairing graph built once in {t_graph:.2f} s")
    for i, name in enumerate(spec.names):
        t_new, new = timed(lattice_series, problem, i, 5)
        t_old, old = timed(previous, i, 5)
        err = max(abs(a - b) for a, b in zip(new.coefficients, old.coefficients))
        print(f"  order 5, {name}: new {t_new:.2f} s, previous {t_old:.2f} s, ratio "
              f"{t_old / t_new:.1f}, max |diff| {err:.1e}")
    t_graph, _ = timed(_key_graph, 6)
    total = t_graph
    print(f"  order 6: pairing graph built once in {t_graph:.2f} s")
    for i, name in enumerate(spec.names):
        t_new, new = timed(lattice_series, problem, i, 6)
        total += t_new
        print(f"  order 6, {name}: {t_new:.2f} s, c_6 = {new.coefficients[6]:.6g}")
    print(f"  order 6, all loops: {total:.1f} s (target: under 60 s on 2 cores)")


if __name__ == "__main__":
    main()
