"""Closed surfaces: time of exact values by character sums and of the outer face's kernel.

Times, cold (weight system built inside the timing), an SU(3) fundamental simple loop on
the sphere (target: under 1 s) and on the torus, U(4) and SU(4) on the sphere, and the
outer face's kernel K_g(t, h) on a block of 4096 group elements (what exact reweighting
of Monte Carlo samples would cost per block), each against a baseline measured in the
same run: one ``scipy.linalg.expm`` of a 64 x 64 matrix (a unit of machine speed).

Run ``python3 benchmarks/bench_surface.py``; ``main()`` returns the table (list of dicts)
and exits 1 when the SU(3) sphere value misses its 1-second target.
"""

from __future__ import annotations

import sys
import time

import numpy as np
import scipy.linalg

from holonomy.exact import outer_face_kernel, surface_simple_loop
from holonomy.groups import make_group
from holonomy.groups._weights import _weight_system


def _time(fn, repeat=3):
    best = np.inf
    for _ in range(repeat):
        _weight_system.cache_clear()
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main():
    rng = np.random.default_rng(0)
    A = rng.standard_normal((64, 64)) / 8
    base = _time(lambda: scipy.linalg.expm(A), repeat=5)
    print(f"baseline: scipy.linalg.expm 64x64 = {base * 1e3:.3f} ms")
    rows = []
    cases = [("SU", 3, "physics", 0, 1.0, 4.0), ("SU", 3, "physics", 1, 1.0, 4.0),
             ("SU", 3, "physics", 0, 0.2, 0.5), ("U", 4, "large-n", 0, 1.0, 4.0),
             ("SU", 4, "physics", 0, 1.0, 4.0)]
    print(f"{'group':<8}{'genus':>6}{'A':>6}{'T':>6}{'seconds':>10}{'x base':>10}  route")
    for fam, n, metric, g, a, T in cases:
        G = make_group(fam, n, metric)
        t = _time(lambda: surface_simple_loop(G, "fundamental", a, T, coupling=1.0, genus=g))
        r = surface_simple_loop(G, "fundamental", a, T, coupling=1.0, genus=g)
        rows.append(dict(group=f"{fam}({n})", genus=g, inside=a, total=T, seconds=t,
                         ratio_base=t / base, method=r.method))
        print(f"{fam}({n})".ljust(8) + f"{g:>6}{a:>6g}{T:>6g}{t:>10.4f}{t / base:>10.1f}  {r.method}")
    print("\nouter face's kernel on 4096 Haar elements, t = 3:")
    for fam, n, metric in (("SU", 2, "physics"), ("SO", 3, "trace"), ("SU", 3, "physics"),
                           ("U", 3, "trace")):
        G = make_group(fam, n, metric)
        h = G.haar(4096, rng=rng)
        for g in (0, 1):
            t = _time(lambda: outer_face_kernel(G, g, 3.0, h), repeat=2)
            rows.append(dict(group=f"{fam}({n})", genus=g, kernel_block=t, ratio_base=t / base))
            print(f"  {fam}({n}) g={g}: {t:8.4f} s  ({t / base:8.1f} x base)")
    su3 = rows[0]["seconds"]
    print(f"\nSU(3) sphere value: {su3:.4f} s against the 1 s target "
          f"({'met' if su3 < 1 else 'MISSED'})")
    return rows, su3 < 1


if __name__ == "__main__":
    _, ok = main()
    sys.exit(0 if ok else 1)
