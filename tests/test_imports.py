"""Every module imports on its own in a fresh interpreter, in any order: no import
circle hidden by import order (DEVELOPERS.md, "Layout": holonomy may import discretize
and noise, discretize may import noise, noise imports neither).

One subprocess imports the third-party libraries (they are not ours and only cost
time), then forks one child per module of ours, so each child starts with none of our
modules loaded; further children import all of them in shuffled orders. A module of an
optional extra whose library is not installed (numba) is passed over.
"""

import subprocess
import sys
import textwrap
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PACKAGES = ("noise", "discretize", "holonomy")


def _modules() -> list[str]:
    out = []
    for pkg in PACKAGES:
        for path in sorted((ROOT / pkg).rglob("*.py")):
            parts = path.relative_to(ROOT).with_suffix("").parts
            out.append(".".join(parts[:-1] if parts[-1] == "__init__" else parts))
    return out


SCRIPT = textwrap.dedent("""
    import os, random, sys
    import numpy, scipy, scipy.special, scipy.stats, scipy.optimize, sympy, tqdm
    mods = sys.argv[1:]
    orders = [[m] for m in mods]
    for seed in range(2):
        shuffled = list(mods)
        random.Random(seed).shuffle(shuffled)
        orders.append(shuffled)
    bad = []
    for order in orders:
        pid = os.fork()
        if pid == 0:
            code = 0
            for m in order:
                try:
                    __import__(m)
                except ModuleNotFoundError as exc:
                    if exc.name.split(".")[0] in ("noise", "discretize", "holonomy"):
                        print(f"{m} (order starting {order[0]}): {exc}")
                        code = 1
                        break
                    # an optional extra that is not installed (numba for holonomy._fast)
                except Exception as exc:
                    print(f"{m} (order starting {order[0]}): {type(exc).__name__}: {exc}")
                    code = 1
                    break
            sys.stdout.flush()
            os._exit(code)
        _, status = os.waitpid(pid, 0)
        if status:
            bad.append(order[0])
    print("failed:", bad)
    sys.exit(1 if bad else 0)
""")


def test_every_module_imports_alone_and_in_any_order():
    mods = _modules()
    assert "holonomy.experiment._commands" in mods and "noise._errors" in mods
    proc = subprocess.run([sys.executable, "-c", SCRIPT, *mods], cwd=ROOT,
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stdout + proc.stderr


def test_layers_do_not_import_upwards():
    """noise imports neither discretize nor holonomy; discretize does not import holonomy."""
    for pkg, forbidden in (("noise", ("discretize", "holonomy")), ("discretize", ("holonomy",))):
        for path in (ROOT / pkg).rglob("*.py"):
            for line in path.read_text().splitlines():
                words = line.split()
                if words[:1] in (["import"], ["from"]) and len(words) > 1:
                    assert words[1].split(".")[0] not in forbidden, f"{path}: {line}"
