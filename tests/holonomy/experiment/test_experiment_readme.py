"""The README's tour and the scripts in examples/ run as written.

The tour's Python block and shell lines are extracted from README.md and run in a
scratch folder holding a copy of examples/, so the test follows the README as it is.
They run in this process (``runpy``, ``holonomy.cli.main``) to spare the start-up of a
new interpreter; tests/test_cli.py runs every subcommand in a subprocess.
"""

import re
import runpy
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[3]
README = ROOT / "README.md"
EXAMPLES = ROOT / "examples"


def _tour() -> str:
    text = README.read_text()
    start = text.index("## A short tour")
    end = text.index("\n## ", start + 5)
    return text[start:end]


def _scratch(tmp_path) -> Path:
    shutil.copytree(EXAMPLES, tmp_path / "examples")
    return tmp_path


def _run(argv, cwd):
    proc = subprocess.run(argv, cwd=cwd, capture_output=True, text=True, timeout=900)
    assert proc.returncode == 0, (argv, proc.stdout, proc.stderr)
    return proc


def test_readme_keeps_job_paragraph_and_quick_start():
    text = README.read_text()
    assert text.startswith("# whitegauge\n\nwhitegauge is an engine for stochastic holonomy")
    quick = text[text.index("## Quick start"):text.index("## A short tour")]
    assert ".venv/bin/whitegauge demo" in quick
    # .ci/run greps this exact command line
    assert re.search(r"^python3 -m venv .* -m pytest$", quick, re.M)


def test_readme_python_tour_runs(tmp_path, monkeypatch, capsys):
    code = re.search(r"```python\n(.*?)```", _tour(), re.S).group(1)
    cwd = _scratch(tmp_path)
    (cwd / "tour.py").write_text(code)
    monkeypatch.chdir(cwd)
    runpy.run_path(str(cwd / "tour.py"), run_name="__main__")
    out = capsys.readouterr().out
    assert "estimate" in out and "exact" in out
    assert (cwd / "runs" / "box-and-ring-py" / "results.json").exists()


def _console_lines():
    block = re.search(r"```console\n(.*?)```", _tour(), re.S).group(1)
    lines = [ln[2:].split() for ln in block.splitlines() if ln.startswith("$ whitegauge ")]
    assert len(lines) >= 3
    return [pytest.param(ln, marks=pytest.mark.slow) if ln[1] == "study" else ln
            for ln in lines]


@pytest.mark.parametrize("argv", _console_lines(), ids=lambda a: a[1])
def test_readme_cli_tour_runs(argv, tmp_path, monkeypatch, capsys):
    from holonomy.cli import main

    cwd = _scratch(tmp_path)
    monkeypatch.chdir(cwd)
    assert main(argv[1:]) == 0
    assert capsys.readouterr().out.strip()
    if argv[1] == "run":
        assert (cwd / "runs" / "box-and-ring" / "results.json").exists()
    if argv[1] == "study":
        assert (cwd / "runs" / "study" / "convergence.png").exists()


def test_example_python_api(tmp_path, monkeypatch, capsys):
    cwd = _scratch(tmp_path)
    monkeypatch.chdir(cwd)
    monkeypatch.setattr(sys, "argv", ["python_api.py", "out"])
    runpy.run_path(str(cwd / "examples" / "python_api.py"), run_name="__main__")
    assert "box:" in capsys.readouterr().out and (cwd / "out" / "run.sqlite").exists()


@pytest.mark.slow
def test_example_dask_cluster(tmp_path):
    pytest.importorskip("distributed")
    cwd = _scratch(tmp_path)
    proc = _run([sys.executable, "examples/dask_cluster.py"], cwd)
    assert "bitwise identical: True" in proc.stdout


def test_every_example_is_exercised():
    # each script or spec in examples/ appears in this file or in the README tour
    here = Path(__file__).read_text() + _tour()
    for path in EXAMPLES.iterdir():
        if path.suffix in (".py", ".toml"):
            assert path.name in here, path.name
