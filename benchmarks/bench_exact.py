"""Exact evaluation of polygonal loops: time per loop, and where the method stops.

For SU(2) loops with 0 to 7 crossings (square, figure eight, a six-crossing lattice
loop, star polygons {5/2}, {7/2}), the script times ``evaluate_polygon`` cold (moment
tensors not cached) and warm, and prints the ratio of the cold time to the 1-second
target and to a baseline measured in the same run: one ``scipy.linalg.expm`` of a
64 x 64 matrix (a unit of machine speed). It then shows where the route stops being
practical: a loop wound n times through the tensor route (SO(3): no closed form, the
moment matrix is N^n x N^n), the same loops for SU(2) and U(3) through the Adams
closed form, U(N) on a loop with a nested lobe for N = 2 .. 32 (the reduced word X^2 has
a closed form, so N = 32 should cost about what N = 2 costs), and the exact (sympy) route.

Run ``python3 benchmarks/bench_exact.py``; ``main()`` returns the table (list of dicts).
On a loaded machine, set ``OPENBLAS_NUM_THREADS=1``: the eigen-decompositions are small
and oversubscribed BLAS threads can slow them down by a factor of 50.
"""

from __future__ import annotations

import time

import numpy as np
import scipy.linalg

from holonomy.exact import evaluate_polygon
from holonomy.exact._tensor import _eigh_cached, _spectral_cached
from holonomy.groups import make_group


def star(p, q):
    th = 2 * np.pi * q * np.arange(p) / p + 0.1
    return np.c_[np.cos(th), np.sin(th)]


LOOPS = {
    "square": [(0, 0), (1, 0), (1, 1), (0, 1)],
    "figure-eight": [(0, 0), (2, 2), (2, 0), (0, 2)],
    "lattice-6x": [(3, 0), (2, 0), (2, 4), (1, 4), (1, 1), (4, 1), (4, 3), (0, 3), (0, 2), (3, 2)],
    "star-5/2": star(5, 2),
    "star-7/2": star(7, 2),
}


def _time(fn, repeat=3):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def _cold(fn):
    _eigh_cached.cache_clear()
    _spectral_cached.cache_clear()
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def main():
    rng = np.random.default_rng(0)
    A = rng.standard_normal((64, 64)) / 8
    base, _ = _time(lambda: scipy.linalg.expm(A), repeat=5)
    print(f"baseline: scipy.linalg.expm 64x64 = {base * 1e3:.3f} ms")
    rows = []
    G = make_group("SU", 2, "physics")
    print(f"{'SU(2) loop':<14}{'cross':>6}{'faces':>6}{'word':>6}{'reduced':>8}"
          f"{'cold s':>9}{'warm s':>9}{'cold/1s':>9}{'cold/base':>10}")
    for name, v in LOOPS.items():
        tc, r = _cold(lambda: evaluate_polygon(G, v, coupling=0.5))
        tw, _ = _time(lambda: evaluate_polygon(G, v, coupling=0.5))
        arr = r.faces
        row = dict(group="SU(2)", loop=name, crossings=arr.n_crossings, faces=arr.n_faces,
                   word=len(r.word), reduced=len(r.reduced.word), cold=tc, warm=tw,
                   ratio_target=tc / 1.0, ratio_base=tc / base)
        rows.append(row)
        print(f"{name:<14}{arr.n_crossings:>6}{arr.n_faces:>6}{len(r.word):>6}"
              f"{len(r.reduced.word):>8}{tc:>9.4f}{tw:>9.4f}{tc:>9.4f}{tc / base:>10.1f}")
    print("\nwound loops (reduced word X^n), cold: SO(3) tensor route (N^n x N^n), "
          "SU(2) and U(3) Adams closed form:")
    sq = LOOPS["square"]
    for fam, n_, metric, turns in (("SO", 3, "trace", (3, 5, 6)),
                                   ("SU", 2, "physics", (4, 8, 10, 11)),
                                   ("U", 3, "large-n", (3, 5, 6, 7))):
        G = make_group(fam, n_, metric)
        for n in turns:
            tc, r = _cold(lambda: evaluate_polygon(G, sq, n, coupling=0.5))
            D = G.N**n
            rows.append(dict(group=f"{fam}({n_})", loop=f"square x{n}", dim=D, cold=tc,
                             ratio_base=tc / base))
            print(f"  {fam}({n_}) n={n:<3} N^n={D:<6} cold {tc:8.3f} s  ({tc / base:9.1f} x base)")
    print("\nU(N) on a loop with one nested lobe (reduced word X^2), cold (the group and "
          "its representation built beforehand):")
    nested = [(2, 0), (4, 0), (4, 4), (0, 4), (0, 1), (3, 1), (3, 3), (2, 3)]
    t2 = None
    for N in (2, 8, 16, 32):
        G = make_group("U", N, "large-n")
        G.rep("fundamental")
        tc, r = _cold(lambda: evaluate_polygon(G, nested, coupling=0.5))
        t2 = tc if t2 is None else t2
        rows.append(dict(group=f"U({N})", loop="nested", cold=tc, ratio_n2=tc / t2))
        print(f"  U({N:<2}) {tc:8.4f} s  ({tc / t2:6.2f} x U(2); route {r.method})")
    print("\nexact (sympy) route, cold:")
    G = make_group("SU", 2, "physics")
    for name in ("figure-eight", "lattice-6x", "star-5/2"):
        import sympy

        lam = sympy.Symbol("lambda")
        v = LOOPS[name]
        tc, r = _cold(lambda: evaluate_polygon(G, v, coupling=lam, exact=True))
        rows.append(dict(group="SU(2)", loop=name, exact=True, cold=tc, ratio_base=tc / base))
        print(f"  {name:<14} {tc:8.3f} s  ({tc / base:9.1f} x base)")
    return rows


if __name__ == "__main__":
    main()
