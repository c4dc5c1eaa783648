"""Throughput of batched exponential + ordered product, against baselines in the same run.

For SU(2), SU(3) and U(4), the same random Lie-algebra increments (samples, steps, d)
are turned into holonomies ``U = exp(X_1) exp(X_2) ... exp(X_m)`` four ways:

- ``batched``: ``holonomy.ordered_product(group, x)`` (``Group.exp`` on the whole batch,
  then the pairwise tree reduction over the steps);
- ``naive``: a per-sample, per-step Python loop with ``scipy.linalg.expm`` and ``@``
  (the baseline of the target: SU(2) at least 100 times faster);
- ``tree`` and ``loop``: ``Group.exp`` on the batch, then the pairwise tree reduction
  or a Python loop of ``m`` batched products (which reduction pays; ``ordered_product``
  picks the loop for 2 x 2 factors with >= 1024 samples, the tree otherwise);
- ``scipy-batched``: ``scipy.linalg.expm`` on the whole batch, then the tree reduction
  (tells what ``Group.exp`` gains over scipy's batched Pade route).

Throughput is sample-steps per second (best of a few repeats); the naive loop runs on a
subset of the samples (so does ``scipy-batched``: scipy's batched expm loops over
the matrices and is slow on large batches) and is checked against ``batched`` on that
subset to 1e-10.

Run ``python3 benchmarks/bench_products.py``; ``main()`` returns the table (a list of
dicts) for ``benchmarks/run.py``.
"""

from __future__ import annotations

import os
import sys
import time

# One BLAS thread for both sides: on a busy machine a threaded BLAS makes each small
# scipy.linalg.expm call 10-100 times slower (thread hand-off), which would inflate the
# ratio. Only effective when this file is run as a script (before numpy is imported).
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import numpy as np  # noqa: E402
import scipy.linalg  # noqa: E402

from holonomy import ordered_product  # noqa: E402
from holonomy._solver import _sequential_product, tree_product  # noqa: E402
from holonomy.groups import make_group  # noqa: E402

CASES = [  # family, n, samples, steps, samples for the naive and scipy-batched runs
    ("SU", 2, 4096, 128, 8),
    ("SU", 3, 1024, 128, 4),
    ("U", 4, 512, 128, 4),
]


def _best(fn, repeats=3):
    best, out = np.inf, None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def _naive(alg):
    out = []
    for s in range(alg.shape[0]):                       # per-sample Python loop
        u = np.eye(alg.shape[-1], dtype=complex)
        for k in range(alg.shape[1]):
            u = u @ scipy.linalg.expm(alg[s, k])
        out.append(u)
    return np.array(out)


def main(cases=CASES, seed: int = 20261202, verbose: bool = True) -> list[dict]:
    """Measure and return one row per group: throughputs and ratios."""
    rng = np.random.default_rng(seed)
    rows = []
    for family, n, samples, steps, n_naive in cases:
        G = make_group(family, n)
        x = 0.2 * rng.normal(size=(samples, steps, G.dim))
        alg = G.algebra(x)
        work = samples * steps

        t_fast, res = _best(lambda: ordered_product(G, x))
        t_naive, naive = _best(lambda: _naive(alg[:n_naive]), repeats=1)
        t_seq, seq = _best(lambda: _sequential_product(G.exp(x)))
        t_tree, _ = _best(lambda: tree_product(G.exp(x)))
        t_sp, sp = _best(lambda: tree_product(scipy.linalg.expm(alg[:n_naive])))
        t_exp, _ = _best(lambda: G.exp(x))

        diff = float(np.max(np.abs(res.value[:n_naive] - naive)))
        diff_all = float(max(np.max(np.abs(res.value - seq)),
                             np.max(np.abs(res.value[:n_naive] - sp))))
        row = {
            "group": f"{family}({n})",
            "samples": samples,
            "steps": steps,
            "batched_per_s": work / t_fast,
            "naive_per_s": n_naive * steps / t_naive,
            "seq_per_s": work / t_seq,
            "tree_per_s": work / t_tree,
            "scipy_batched_per_s": n_naive * steps / t_sp,
            "exp_share": t_exp / t_fast,
            "max_diff_naive": diff,
            "max_diff_other": diff_all,
            "agree_1e-10": diff < 1e-10 and diff_all < 1e-10,
            "drift": res.drift,
        }
        row["ratio_naive"] = row["batched_per_s"] / row["naive_per_s"]
        row["ratio_tree_loop"] = t_seq / t_tree
        row["ratio_scipy_batched"] = row["batched_per_s"] / row["scipy_batched_per_s"]
        rows.append(row)
    if verbose:
        _print(rows)
    return rows


def tree_vs_loop(shapes=((1, 4096), (64, 1024), (4096, 128), (16384, 16)), sizes=(2, 3, 4),
                 seed: int = 7, verbose: bool = True) -> list[dict]:
    """Products only: tree reduction against the loop over steps, random factors."""
    rng = np.random.default_rng(seed)
    rows = []
    for N in sizes:
        for samples, steps in shapes:
            shape = (samples, steps, N, N)
            f = rng.normal(size=shape) + 1j * rng.normal(size=shape)
            f /= np.sqrt(2 * N)
            t_tree, a = _best(lambda: tree_product(f))
            t_loop, b = _best(lambda: _sequential_product(f))
            rows.append({"N": N, "samples": samples, "steps": steps,
                         "loop_over_tree": t_loop / t_tree,
                         "agree": bool(np.allclose(a, b, rtol=1e-10,
                                                   atol=1e-10 * np.abs(b).max()))})
    if verbose:
        print("products only: time(loop over steps) / time(tree); "
              "> 1 means the tree is faster")
        for r in rows:
            print(f"  N={r['N']} samples={r['samples']:6d} steps={r['steps']:5d}  "
                  f"{r['loop_over_tree']:7.2f}  agree={r['agree']}")
    return rows


def _pairwise_matmul(f):
    """The sampler's product step before it went through the solver (issue 11): pairwise
    reduction over axis 1 with ``@`` and a concatenate for odd counts (the baseline)."""
    while f.shape[1] > 1:
        m = f.shape[1]
        paired = f[:, 0:m - 1:2] @ f[:, 1:m:2]
        f = np.concatenate([paired, f[:, m - 1:]], axis=1) if m % 2 else paired
    return f[:, 0]


def _pairwise_quaternion(f, mul):
    """Same baseline for quaternion storage (the old kernel's concatenate variant)."""
    while f.shape[1] > 1:
        m = f.shape[1]
        paired = mul(f[:, 0:m - 1:2], f[:, 1:m:2])
        f = np.concatenate([paired, f[:, m - 1:]], axis=1) if m % 2 else paired
    return f[:, 0]


def product_step(cases=(("U", 2), ("U", 3), ("SU", 2)), shapes=((780, 63), (4096, 64)),
                 seed: int = 3, rounds: int = 5, verbose: bool = True) -> list[dict]:
    """The sampler's product step through the solver's storage against the old kernel
    product, CPU time over interleaved rounds (best of each side)."""
    from holonomy._kernels import kernel_for
    from holonomy._solver import quaternion_mul

    rng = np.random.default_rng(seed)
    rows = []
    for family, n in cases:
        G = make_group(family, n)
        K = kernel_for(G)
        for samples, steps in shapes:
            f = K.exp(0.3 * rng.normal(size=(samples, steps, G.dim)))
            if K.elem_ndim == 1:
                def old():
                    return _pairwise_quaternion(f, quaternion_mul)
            else:
                def old():
                    return _pairwise_matmul(f)
            t_old = t_new = np.inf
            for _ in range(rounds):  # interleaved: both sides see the same load
                t0 = time.process_time()
                a = old()
                t_old = min(t_old, time.process_time() - t0)
                t0 = time.process_time()
                b = K.product(f)
                t_new = min(t_new, time.process_time() - t0)
            rows.append({"group": f"{family}({n})", "samples": samples, "steps": steps,
                         "old_over_new": t_old / t_new,
                         "agree": bool(np.allclose(a, b, rtol=0, atol=1e-12))})
    if verbose:
        print("sampler product step: time(old kernel product) / time(solver storage); "
              ">= 1 means the solver is at least as fast")
        for r in rows:
            print(f"  {r['group']:6} samples={r['samples']:5d} steps={r['steps']:3d}  "
                  f"{r['old_over_new']:6.2f}  agree={r['agree']}")
    return rows


def _print(rows):
    threads = os.environ.get("OPENBLAS_NUM_THREADS", "unset")
    print("batched exp + ordered product, sample-steps per second (best of 3; "
          f"OPENBLAS_NUM_THREADS={threads})")
    hdr = (f"{'group':7} {'batched':>10} {'naive':>9} {'x naive':>8} {'loop/tree':>9} "
           f"{'x scipy-b':>9} {'exp share':>9} {'|diff|':>8} {'drift':>8}")
    print(hdr)
    for r in rows:
        print(f"{r['group']:7} {r['batched_per_s']:10.3g} {r['naive_per_s']:9.3g} "
              f"{r['ratio_naive']:8.1f} {r['ratio_tree_loop']:9.2f} "
              f"{r['ratio_scipy_batched']:9.2f} "
              f"{r['exp_share']:9.2f} {max(r['max_diff_naive'], r['max_diff_other']):8.1e} "
              f"{r['drift']:8.1e}")
    print("x naive: batched / per-sample scipy.linalg.expm loop; loop/tree: time with a"
          " loop of m batched products / time with the tree (exp included); x scipy-b:"
          " Group.exp / scipy batched expm"
          " (both with the tree); exp share: fraction of batched time spent in Group.exp.")
    ok = all(r["agree_1e-10"] for r in rows)
    print("all products agree to 1e-10:", ok)
    return ok


if __name__ == "__main__":
    rows = main()
    tl = tree_vs_loop()
    ps = product_step()
    ok = (all(r["agree_1e-10"] for r in rows) and all(r["agree"] for r in tl)
          and all(r["agree"] for r in ps))
    sys.exit(0 if ok else 1)
