"""The top-level ``whitegauge`` module: importable from anywhere once installed, and
every name it promises is there."""

import subprocess
import sys


def test_import_from_another_folder(tmp_path):
    # a fresh interpreter outside the checkout: the module comes from the installation
    code = ("import whitegauge as wg, math; "
            "G = wg.make_group('SU', 2, 'physics'); "
            "v = wg.exact_wilson_loop(G, 'fundamental', wg.Loop.curve('cardioid', 64, a=0.5), "
            "coupling=1.0).value.real; "
            # simple loop exp(-c A / 2), c = 3/4, A = 6 pi a^2 (Levy 2003; Lawrence 1972)
            "assert abs(v - math.exp(-0.75 * 6 * math.pi * 0.25 / 2)) < 1e-12, v; "
            "missing = [n for n in wg.__all__ if not hasattr(wg, n)]; "
            "assert not missing, missing; print(len(wg.__all__))")
    out = subprocess.run([sys.executable, "-c", code], cwd=tmp_path, capture_output=True,
                         text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert int(out.stdout) >= 30


def test_public_names_are_the_packages_objects():
    import whitegauge as wg
    from discretize import Loop
    from holonomy.experiment import load_spec, run_spec

    assert wg.Loop is Loop and wg.load_spec is load_spec and wg.run_spec is run_spec
