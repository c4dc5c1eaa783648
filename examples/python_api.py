"""Run a spec from Python on a process pool and print the table (the README's tour).

    python3 examples/python_api.py [OUT]
"""

import sys
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import whitegauge as wg

if __name__ == "__main__":   # process pools re-import this file in their workers
    here = Path(__file__).resolve().parent
    out = sys.argv[1] if len(sys.argv) > 1 else "runs/box-and-ring-py"
    spec = wg.load_spec(here / "box_and_ring.toml")
    with ProcessPoolExecutor(max_workers=2) as pool:
        outcome = wg.run_spec(spec, out=out, executor=pool)
    print(wg.format_table(outcome.results))
    box = outcome.results["results"][0]
    print(f"box: {box['estimate']:.4f} ± {box['stderr']:.4f} (estimate), "
          f"{box['exact']:.4f} (exact, {box['exact_method']}), z = {box['z']:+.2f}")
