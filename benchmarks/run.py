"""whitegauge performance figures, each measured side by side with its baseline.

Every figure is a ratio measured in this one run on this machine (or an absolute rate
where the table says "no target"), printed with its target; the script exits 1 when a
target is missed. Run from the repository root:

    python3 benchmarks/run.py            # everything (several minutes)
    python3 benchmarks/run.py --quick    # smaller sample counts, same figures

Figures (see DEVELOPERS.md, "Benchmarks"):
 (figures 1 and 2, the sampler against a naive per-sample loop with scipy.linalg.expm
 and against the floor of its random numbers, are in figure 8 for both kernel paths)
 3. absolute throughput in sample-edges per second (no target);
 4. scaling in the number of samples and in the loop size (perimeter, not area);
 5. peak resident memory of 10^6 vs 10^5 samples, each in a fresh process, above
    that process's own footprint after its imports (``VmHWM`` minus ``VmRSS`` from
    /proc/self/status: the high-water mark starts anew at exec, unlike ``ru_maxrss``,
    which a child inherits from a large parent);
 6. parallel speed-up of ``--workers 2`` over ``--workers 1`` with identical numbers
    (information only: not measurable on a shared 2-core machine);
 7. exact evaluation and formal series timings;
 8. the sampler's targets for both kernel paths (numpy, and the ``fast`` extra when
    numba is installed), CPU time over interleaved rounds, one table.

Ratios use CPU time (``time.process_time``) over interleaved rounds: every side runs
once per round, in turn, and the best round of each side counts, so a load that comes
and goes on a shared machine hits both sides alike.
"""

from __future__ import annotations

import os

# one BLAS thread for every side of every comparison: small-matrix BLAS calls with
# several threads on a shared 2-core machine are erratic (seen: 100x slower)
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import argparse  # noqa: E402
import json  # noqa: E402
import resource  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import textwrap  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402
import scipy.linalg  # noqa: E402

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)

from discretize import Loop, arrangement  # noqa: E402
from holonomy import Field, WilsonProblem, run_block  # noqa: E402
from holonomy._kernels import fast_available, kernel_for  # noqa: E402
from noise import block_rng, interval_sums  # noqa: E402

ROWS: list[tuple[str, float, str, bool]] = []


def record(name: str, value: float, target: str, ok: bool, unit: str = "") -> None:
    ROWS.append((name, value, target, ok))
    flag = "ok  " if ok else "MISS"
    print(f"{flag} {name:58s} {value:12.3f}{unit:3s} target {target}", flush=True)


def best_time(fn, repeat: int = 3) -> float:
    best = np.inf
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def interleaved(fns: dict, rounds: int = 3) -> dict:
    """Best CPU time of each callable over ``rounds`` interleaved rounds."""
    best = {k: np.inf for k in fns}
    for _ in range(rounds):
        for k, fn in fns.items():
            t = time.process_time()
            fn()
            best[k] = min(best[k], time.process_time() - t)
    return best


def square(cells: int, h: float) -> Loop:
    L = cells * h
    return Loop.polygon([[0, 0], [L, 0], [L, L], [0, L]])


def circle(h: float) -> Loop:
    return Loop.circle((0.0, 0.0), 16 * h, 64)


def problem(family, n, metric, scheme, loop, h, samples, block=None):
    block = block or samples
    return WilsonProblem(family=family, n=n, metric=metric,
                         field=Field(coupling=1.0 / (16 * h) ** 2, spacing=h, scheme=scheme),
                         loops=(loop,), samples=samples, block=block, seed=1,
                         path="perimeter")


def naive_linear(prob: WilsonProblem, samples: int) -> np.ndarray:
    """The baseline: a per-sample Python loop over the loop's edges, scipy.linalg.expm.

    Same law as the ``linear`` scheme on the perimeter path: interval Gaussian sums,
    cumulated outward from the reference line, one expm per horizontal edge.
    """
    plan, group = prob.plan, prob.group
    basis = group.basis
    rng = block_rng(99, 0)
    lam = prob.field.coupling
    links, direction = plan.steps[0]
    rep = group.rep(prob.rep)
    out = np.empty(samples, complex)
    for s in range(samples):
        x = interval_sums(lam * plan.measure, group.dim, 1, rng=rng)[0]
        cum = np.zeros_like(x)
        for k in range(plan.n_intervals):
            cum[k] = plan.side[k] * x[k] + (cum[plan.parent[k]] if plan.parent[k] >= 0 else 0)
        hol = np.eye(group.N, dtype=complex)
        for link, d in zip(links, direction):
            if link < 0:
                continue
            a = np.tensordot(-d * cum[link], basis, axes=1)
            hol = hol @ scipy.linalg.expm(a)
        out[s] = rep.character(hol[None], normalized=True)[0]
    return out


def _with_kernel(prob: WilsonProblem, fast: bool) -> WilsonProblem:
    """The problem with its cached kernel replaced by the chosen path's."""
    prob.__dict__["kernel"] = kernel_for(prob.group, fast=fast)
    run_block(prob, 0, size=8)  # warm-up (and numba's compile or cache load)
    return prob


def fig_targets(quick: bool) -> None:
    """The sampler's targets, numpy path and `fast` path side by side (one table)."""
    h = 1.0 / 32
    samples = 2000 if quick else 10000
    naive_n = 60 if quick else 200
    rounds = 2 if quick else 3
    paths = [False] + ([True] if fast_available() else [])
    names = {False: "numpy", True: "fast"}
    table = []  # (figure, {path: value}, (target numpy, target fast), better)
    shapes = (("square 32x32", square(32, h)), ("64-gon", circle(h)))

    for shape, loop in shapes:  # SU(2) heat against the floor of its random numbers
        probs = {f: _with_kernel(problem("SU", 2, "physics", "heat", loop, h, samples), f)
                 for f in paths}
        K = probs[False].plan.n_intervals

        def floor():
            rng = np.random.default_rng(5)
            rng.standard_normal(samples * K * 3)
            rng.random(samples * K)
        fns = {names[f]: (lambda p=probs[f]: run_block(p, 0)) for f in paths}
        fns["floor"] = floor
        t = interleaved(fns, rounds)
        table.append((f"SU(2) heat, time / RNG floor, {shape}",
                      {names[f]: t[names[f]] / t["floor"] for f in paths}, (3.0, 1.5), "low"))

    for family, n, targets in (("SU", 2, (300, 500)), ("SU", 3, (50, 100))):
        for shape, loop in shapes:
            probs = {f: _with_kernel(problem(family, n, "physics", "linear", loop, h, samples), f)
                     for f in paths}
            fns = {names[f]: (lambda p=probs[f]: run_block(p, 0)) for f in paths}
            fns["naive"] = lambda p=probs[False]: naive_linear(p, naive_n)
            t = interleaved(fns, rounds)
            per = {k: v / (naive_n if k == "naive" else samples) for k, v in t.items()}
            table.append((f"{family}({n}) linear, speed-up vs naive, {shape}",
                          {names[f]: per["naive"] / per[names[f]] for f in paths}, targets,
                          "high"))

    for family, n, metric, target in (("SU", 3, "physics", 3.0), ("U", 4, "large-n", 5.0)):
        fns = {}
        for f in paths:
            for scheme in ("heat", "linear"):
                p = _with_kernel(problem(family, n, metric, scheme, square(32, h), h,
                                         samples // 4), f)
                fns[(names[f], scheme)] = lambda p=p: run_block(p, 0)
        t = interleaved(fns, rounds)
        table.append((f"{family}({n}) heat (exact) / {family}({n}) linear, square 32x32",
                      {names[f]: t[(names[f], "heat")] / t[(names[f], "linear")] for f in paths},
                      (target, target), "low"))

    big = 100_000 if quick else 1_000_000
    table.append((f"peak memory at {big} samples above imports (MiB)",
                  {names[f]: memory_above_imports(big, "fast" if f else "numpy")[0]
                   for f in paths}, (50.0, 50.0), "low"))

    print(f"{'figure':62s} {'numpy':>9} {'fast':>9}   targets (numpy / fast)")
    for name, vals, (tn, tf), better in table:
        cells = []
        for key, target in (("numpy", tn), ("fast", tf)):
            v = vals.get(key)
            if v is None:
                cells.append(f"{'n/a':>9}")
                continue
            ok = v <= target if better == "low" else v >= target
            cells.append(f"{v:8.2f}{'' if ok else '*'}")
            ROWS.append((f"8 {name} [{key}]", v, f"{'<=' if better == 'low' else '>='} {target}", ok))
        sign = "<=" if better == "low" else ">="
        print(f"{name:62s} {cells[0]} {cells[1]}   {sign} {tn:g} / {sign} {tf:g}", flush=True)
    print("(* = target missed; CPU time, best of interleaved rounds, one BLAS thread)")


def fig_throughput(quick: bool) -> None:
    h = 1.0 / 32
    samples = 2000 if quick else 10000
    for family, n, metric in (("SU", 2, "physics"), ("SU", 3, "physics"), ("U", 4, "large-n"),
                              ("SO", 3, "trace")):
        for scheme in ("heat", "linear"):
            prob = problem(family, n, metric, scheme, square(32, h), h, samples)
            run_block(prob, 0, size=8)
            t = best_time(lambda: run_block(prob, 0), repeat=1)
            edges = prob.plan.link_count()
            record(f"3 {family}({n}) {scheme}: sample-edges per second", samples * edges / t / 1e6,
                   "(no target)", True, "M")


def fig_scaling(quick: bool) -> None:
    h = 1.0 / 32
    small, big = (10_000, 100_000) if quick else (100_000, 1_000_000)
    prob_small = problem("SU", 2, "physics", "heat", square(32, h), h, small, block=4096)
    prob_big = problem("SU", 2, "physics", "heat", square(32, h), h, big, block=4096)

    def run_all(p):
        for b in range(p.n_blocks):
            run_block(p, b)
    run_block(prob_small, 0, size=8)
    t_small = best_time(lambda: run_all(prob_small), repeat=1)
    t_big = best_time(lambda: run_all(prob_big), repeat=1)
    ratio = t_big / t_small
    record(f"4 samples x10 ({small} -> {big}): time ratio", ratio, "9 to 11", 9 <= ratio <= 11)
    for scheme in ("heat", "linear"):
        samples = 4000
        p32 = problem("SU", 2, "physics", scheme, square(32, h), h, samples)
        p128 = problem("SU", 2, "physics", scheme, square(128, h), h, samples)
        run_block(p32, 0, size=8)
        run_block(p128, 0, size=8)
        r = best_time(lambda: run_block(p128, 0), 2) / best_time(lambda: run_block(p32, 0), 2)
        record(f"4 {scheme} square 128x128 / 32x32 (perimeter 4, area 16)", r, "3 to 5",
               3 <= r <= 5)


_MEM_SCRIPT = textwrap.dedent("""
    import json, sys
    sys.path.insert(0, {root!r})

    def status(key):
        with open("/proc/self/status") as fh:
            for line in fh:
                if line.startswith(key + ":"):
                    return int(line.split()[1]) / 1024  # MiB

    from discretize import Loop
    from holonomy import Field, estimate_wilson_loops
    h = 1 / 32
    loop = Loop.polygon([[0, 0], [1, 0], [1, 1], [0, 1]])

    def run(samples):
        return estimate_wilson_loops(("SU", 2, "physics"), Field(1.0, h, scheme="heat"),
                                     [loop], samples=samples, block=4096, seed=1)
    run(64)  # the interpreter with its imports and (fast path) the compiled kernels
    with open("/proc/self/clear_refs", "w") as fh:
        fh.write("5")  # start the high-water mark (VmHWM) here
    base = status("VmRSS")
    res = run(int(sys.argv[1]))
    print(json.dumps({{"base": base, "peak": status("VmHWM")}}))
""")


def memory_above_imports(samples: int, kernel: str = "numpy") -> tuple[float, float]:
    """(peak above the interpreter with imports, that baseline), MiB, in a fresh process
    with the given kernel path (``WHITEGAUGE_KERNEL``)."""
    env = dict(os.environ, WHITEGAUGE_KERNEL=kernel)
    out = subprocess.run([sys.executable, "-c", _MEM_SCRIPT.format(root=ROOT), str(samples)],
                         capture_output=True, text=True, check=True, env=env)
    r = json.loads(out.stdout.strip().splitlines()[-1])
    return r["peak"] - r["base"], r["base"]


def fig_memory(quick: bool) -> None:
    small, big = (10_000, 100_000) if quick else (100_000, 1_000_000)
    above_small, _ = memory_above_imports(small)
    above_big, base = memory_above_imports(big)
    ratio = above_big / max(above_small, 1e-9)
    record(f"5 peak RSS above imports, {big} / {small} samples", ratio, "<= 1.5", ratio <= 1.5)
    record(f"5 peak RSS above imports at {big} samples (imports: {base:.0f} MiB)", above_big,
           "<= 50 MiB", above_big <= 50, "MiB")


def fig_parallel(quick: bool) -> None:
    samples = 60_000 if quick else 400_000
    spec = textwrap.dedent(f"""
        name = "bench-parallel"
        [group]
        family = "SU"
        n = 2
        metric = "physics"
        [field]
        coupling = 1.0
        spacing = 0.03125
        scheme = "heat"
        [[loops]]
        name = "square"
        vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]]
        [[loops]]
        name = "ring"
        circle = {{ center = [0.5, 0.5], radius = 0.4, sides = 64 }}
        [run]
        samples = {samples}
        block = 4096
        seed = 7
    """)
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "spec.toml")
        with open(path, "w") as fh:
            fh.write(spec)
        times, results = [], []
        for workers in (1, 2):
            out = os.path.join(tmp, f"w{workers}")
            t = time.perf_counter()
            proc = subprocess.run([sys.executable, "-m", "holonomy.cli", "run", path, "--out", out,
                                   "--workers", str(workers), "--quiet", "--json"],
                                  capture_output=True, text=True)
            times.append(time.perf_counter() - t)
            if proc.returncode != 0:
                record("6 parallel run", float("nan"), f"exit 0 (got {proc.returncode})", False)
                print(proc.stderr[-2000:])
                return
            results.append([(r["estimate"], r["stderr"]) for r in json.loads(proc.stdout)["results"]])
    same = results[0] == results[1]
    speed = times[0] / times[1]
    # information only: on a shared 2-core machine the other load decides the speed-up
    record(f"6 --workers 2 vs 1 ({times[0]:.1f} s serial), identical={same}", speed,
           "(information; identical numbers required)", same, "x")


def fig_exact_and_series(quick: bool) -> None:
    from holonomy.groups import make_group

    try:
        from holonomy.exact import evaluate_polygon
    except ImportError:
        record("7 exact evaluation", float("nan"), "available", False)
        return
    su2 = make_group("SU", 2, "physics")
    # a lattice loop with 6 crossings (also in benchmarks/bench_exact.py)
    six = np.array([(3, 0), (2, 0), (2, 4), (1, 4), (1, 1), (4, 1), (4, 3), (0, 3), (0, 2),
                    (3, 2)], float)
    crossings = len(arrangement(six).crossings)
    t = best_time(lambda: evaluate_polygon(su2, six, turns=1, coupling=1.0), repeat=1)
    record(f"7 exact: SU(2) loop with {crossings} crossings, seconds", t, "< 1 s", t < 1.0, "s")
    # a reduced word with a closed form (X^2, nested lobe): U(32) as fast as U(2)
    nested = np.array([(2, 0), (4, 0), (4, 4), (0, 4), (0, 1), (3, 1), (3, 3), (2, 3)], float)
    t_small = best_time(lambda: evaluate_polygon(make_group("U", 2, "large-n"), nested,
                                                 coupling=0.5), repeat=3)
    t_big = best_time(lambda: evaluate_polygon(make_group("U", 32, "large-n"), nested,
                                               coupling=0.5), repeat=3)
    record("7 exact: U(32) / U(2) time on a nested lobe", t_big / t_small, "< 3",
           t_big / t_small < 3.0)
    from holonomy import lattice_series
    moves = "R2 U1 R2 U1 R2 U1 R2 U3 L2 D1 L2 D1 L2 D1 L2 D3"  # 16 horizontal unit edges
    loop = Loop.from_moves(moves, start=(0.0, 0.0), spacing=0.25)
    prob = WilsonProblem(family="SU", n=2, metric="physics",
                         field=Field(1.0, 0.25, scheme="linear", reference=-0.25),
                         loops=(loop,), samples=1, block=1)
    t = best_time(lambda: lattice_series(prob, 0, 4), repeat=1)
    edges = int((prob.plan.steps[0][0] >= 0).sum())
    record(f"7 series: SU(2) order 4, {edges} non-trivial edges, seconds", t, "< 5 s", t < 5.0, "s")
    if quick:
        return
    # the README example (examples/box_and_ring.toml) as a linear lattice series at
    # order 6, all loops, pairing graph included (208 s and out of memory before the
    # label transfer; benchmarks/bench_series.py has the side-by-side order-5 ratio)
    import dataclasses
    import pathlib

    from holonomy._series import _key_graph
    from holonomy.experiment import load_spec
    from holonomy.experiment._problems import build_lattice

    spec = load_spec(pathlib.Path(__file__).resolve().parents[1] / "examples" /
                     "box_and_ring.toml", purpose="series")
    lat = build_lattice(dataclasses.replace(spec, scheme="linear"))
    _key_graph.cache_clear()
    t0 = time.perf_counter()
    for i in range(len(spec.loops)):
        lattice_series(lat, i, 6)
    t = time.perf_counter() - t0
    record("7 series: README example, linear, order 6, all loops, seconds", t, "< 60 s",
           t < 60.0, "s")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description="whitegauge performance figures")
    parser.add_argument("--quick", action="store_true", help="smaller sample counts")
    parser.add_argument("--only", default="", help="comma-separated figure numbers")
    args = parser.parse_args(argv)
    figures = {"8": fig_targets, "3": fig_throughput, "4": fig_scaling,
               "5": fig_memory, "6": fig_parallel, "7": fig_exact_and_series}
    chosen = [f for f in args.only.split(",") if f] or list(figures)
    print(f"whitegauge benchmarks on {os.cpu_count()} cores, numpy {np.__version__}")
    for key in chosen:
        figures[key](args.quick)
    missed = [r for r in ROWS if not r[3]]
    print(f"{len(ROWS) - len(missed)} met, {len(missed)} missed")
    return 1 if missed else 0


if __name__ == "__main__":
    sys.exit(main())
