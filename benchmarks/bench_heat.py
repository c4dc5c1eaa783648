"""Heat-kernel samplers: previous against current implementation, side by side.

Each line times the previous implementation (``benchmarks/_heat_before.py``, a frozen
copy, with the previous exponential routes: batched ``eigh`` for every N >= 3 except
SO(3)) and the current one on the same inputs in the same process, and checks that
both draw the same law: for each time, the normalized fundamental character means of
the two samplers agree within 4 combined standard errors, and both agree with the
Casimir law ``E[chi/dim] = exp(-c t/2)`` (M. Liao 2004, "Levy Processes in Lie
Groups", Section 1.3). For the SU(2) angle sampler the check is a two-sample KS test
(scipy.stats.ks_2samp) between old and new draws, plus ``E[cos theta]`` within 4
standard errors.

Sections:

1. ``exp``: ``Group.exp_matrix`` against the batched ``eigh`` route (error against
   scipy.linalg.expm on 200 matrices).
2. ``heat``: ``Group.heat_kernel`` for non-exact groups on an array of times (equal
   short times: the exponential route alone; spread times: also the per-time step
   counts), and SO(3) (now exact through SU(2)).
3. ``su2``: ``sample_su2_angle`` at several tau, 10^6 draws in the sampler's
   (samples, times) layout, with the floor of drawing one uniform and three Gaussians
   per angle.

Run ``python3 benchmarks/bench_heat.py`` (``--quick`` for smaller sizes).
"""

from __future__ import annotations

import os
import sys
import time

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import numpy as np  # noqa: E402
import scipy.linalg  # noqa: E402
from scipy import stats  # noqa: E402

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import _heat_before as old  # noqa: E402

from holonomy.groups import make_group, sample_su2_angle  # noqa: E402
from holonomy.groups._expmap import expm_eigh, expm_so3  # noqa: E402


class _OldExpGroup:
    """The group with the previous exponential routes (for the previous sampler)."""

    def __init__(self, G):
        self.G = G
        self.dim, self.N, self.family, self.k = G.dim, G.N, G.family, G.k

    def identity(self, shape):
        return self.G.identity(shape)

    def drift(self, U):
        return self.G.drift(U)

    def exp(self, A, coords=True):
        return self.exp_matrix(self.G.algebra(A))

    def exp_matrix(self, X):
        if self.family == "SO":
            X = np.asarray(X).real
            return expm_so3(X) if self.N == 3 else expm_eigh(X, real=True)
        return expm_eigh(X)


def _best(f, repeat):
    best, out = np.inf, None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = f()
        best = min(best, time.perf_counter() - t0)
    return best, out


def bench_exp(size, repeat):
    print("== exp: batched eigh (previous) vs Group.exp_matrix (current), per matrix")
    rng = np.random.default_rng(1)
    for fam, n in [("SU", 3), ("U", 3), ("U", 4), ("Sp", 2), ("SO", 4), ("SO", 5), ("U", 6)]:
        G = make_group(fam, n, "physics")
        X = G.algebra(0.3 * rng.standard_normal((size, G.dim)))  # a Brownian step's size
        t_old, E_old = _best(lambda: _OldExpGroup(G).exp_matrix(X), repeat)
        t_new, E_new = _best(lambda: G.exp_matrix(X), repeat)
        ref = np.array([scipy.linalg.expm(x) for x in X[:200]])
        err = np.abs(E_new[:200] - ref).max()
        print(f"  {fam}({n}): old {1e6 * t_old / size:6.2f} us  new {1e6 * t_new / size:6.2f} us"
              f"  speed-up {t_old / t_new:5.2f}x  |new - expm| {err:.1e}  drift {G.drift(E_new):.1e}")


def _agree(G, t, U_old, U_new):
    r = G.rep("fundamental")
    a, b = r.character(U_old).real, r.character(U_new).real
    se = np.sqrt(a.var(axis=0) / a.shape[0] + b.var(axis=0) / b.shape[0]) + 1e-300
    z = np.abs(a.mean(axis=0) - b.mean(axis=0)) / se
    exact = np.exp(-r.casimir * np.asarray(t) / 2)
    z_new = np.abs(b.mean(axis=0) - exact) / (b.std(axis=0) / np.sqrt(b.shape[0]) + 1e-300)
    ok = bool(np.all(z < 4) and np.all(z_new < 4))
    return float(z.max()), float(z_new.max()), ok


def bench_heat(size, repeat):
    print("== heat: Group.heat_kernel(t array), previous vs current")
    cases = [("SU", 3, "physics"), ("U", 4, "physics"), ("Sp", 2, "physics"), ("SO", 4, "trace"),
             ("SO", 3, "trace")]
    times = {"equal": np.full(8, 0.05), "spread": np.geomspace(0.01, 1.0, 8)}
    all_ok = True
    for fam, n, metric in cases:
        G = make_group(fam, n, metric)
        OG = _OldExpGroup(G)
        for label, t in times.items():
            seeds = np.random.SeedSequence(7).spawn(2)
            t_old, U_old = _best(lambda: old.heat_kernel(OG, t, size, rng=np.random.default_rng(seeds[0])), repeat)
            t_new, U_new = _best(lambda: G.heat_kernel(t, size, rng=np.random.default_rng(seeds[1])), repeat)
            z, z_new, ok = _agree(G, t, U_old, U_new)
            all_ok &= ok
            print(f"  {fam}({n}) {label:6s} t: old {t_old:7.3f} s  new {t_new:7.3f} s  speed-up "
                  f"{t_old / t_new:6.2f}x  |old-new| {z:4.2f} se, |new-exact| {z_new:4.2f} se"
                  f"  {'ok' if ok else 'DISAGREE'}")
    return all_ok


def bench_su2(size, repeat):
    print(f"== su2: sample_su2_angle, {size} draws as ({size // 4}, 4), previous vs current")
    rng = np.random.default_rng(3)
    t_floor, _ = _best(lambda: (rng.random(size), rng.standard_normal((size, 3))), repeat)
    print(f"  floor (1 uniform + 3 Gaussians per angle): {t_floor:.3f} s")
    all_ok = True
    for tau in [1e-3, 0.01, 0.05, 0.07, 0.2, 0.45, 1.0, 5.0]:
        T = np.full((size // 4, 4), tau)
        s = np.random.SeedSequence(int(tau * 1e4)).spawn(2)
        t_old, a = _best(lambda: old.sample_su2_angle(T, rng=np.random.default_rng(s[0])), repeat)
        t_new, b = _best(lambda: sample_su2_angle(T, rng=np.random.default_rng(s[1])), repeat)
        p = stats.ks_2samp(a.ravel(), b.ravel()).pvalue
        ca, cb = np.cos(a), np.cos(b)
        z = abs(ca.mean() - cb.mean()) / np.sqrt(ca.var() / ca.size + cb.var() / cb.size)
        # E[cos theta] = E[chi_1/2]/2 = exp(-3 tau) (character series, Weyl 1939).
        z_ex = abs(cb.mean() - np.exp(-3 * tau)) / (cb.std() / np.sqrt(cb.size))
        ok = p > 1e-4 and z < 4 and z_ex < 4
        all_ok &= ok
        print(f"  tau={tau:<6g} old {t_old:6.3f} s ({t_old / t_floor:5.1f} floors)  new {t_new:6.3f} s "
              f"({t_new / t_floor:5.1f} floors)  speed-up {t_old / t_new:5.2f}x  KS p {p:.2f}  "
              f"E[cos] old-new {z:4.2f} se, new-exact {z_ex:4.2f} se  {'ok' if ok else 'DISAGREE'}")
    return all_ok


def main(argv=None):
    argv = sys.argv[1:] if argv is None else argv
    quick = "--quick" in argv
    bench_exp(5000 if quick else 20000, 3)
    ok = bench_heat(500 if quick else 2000, 1)
    ok &= bench_su2(200000 if quick else 1000000, 1 if quick else 2)
    print("all agreement checks passed" if ok else "SOME AGREEMENT CHECK FAILED")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
