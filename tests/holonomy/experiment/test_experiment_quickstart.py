"""The README's quick-start demo command on a clean copy in a fresh virtual environment
(slow: it installs the dependencies from the package index). The test command, the
other quick-start line, is what .ci/run executes."""

import re
import shutil
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[3]


def _clean_copy(dest: Path) -> Path:
    """A clean clone when HEAD already holds the experiment package, else a copy of the
    working tree without build products, virtual environments or outputs."""
    head = subprocess.run(["git", "-C", str(ROOT), "ls-files", "holonomy/experiment"],
                          capture_output=True, text=True)
    if head.returncode == 0 and head.stdout.strip():
        subprocess.run(["git", "clone", "-q", str(ROOT), str(dest)], check=True)
        return dest
    ignore = shutil.ignore_patterns(".git", ".venv", "*.egg-info", "__pycache__",
                                    "whitegauge-*", "runs", ".pytest_cache", "build")
    shutil.copytree(ROOT, dest, ignore=ignore)
    return dest


@pytest.mark.slow
def test_quick_start_demo_command_in_fresh_venv(tmp_path):
    readme = (ROOT / "README.md").read_text()
    cmd = re.search(r"^python3 -m venv .*whitegauge demo$", readme, re.M).group(0)
    repo = _clean_copy(tmp_path / "clone")
    proc = subprocess.run(["bash", "-c", cmd], cwd=repo, capture_output=True, text=True,
                          timeout=3000)
    assert proc.returncode == 0, (proc.stdout[-2000:], proc.stderr[-2000:])
    out = repo / "whitegauge-demo"
    assert (out / "report.md").exists() and (out / "results.json").exists()
