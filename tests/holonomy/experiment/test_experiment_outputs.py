"""Outputs that behave: file modes from the umask, CSV columns, tables without fake
errors and with a reason for every missing value, one progress bar per command, and
the start and end lines of the command line."""

import csv
import io
import os
import re
import stat
import subprocess
import sys

import pytest

from tests.conftest import spec_text

from holonomy.experiment import MISSING, Progress, format_exact_table, format_table, \
    parse_spec, run_spec
from holonomy.experiment._report import _write_text_atomic

SPEC = spec_text("""
[[loops]]
name = "box"
vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]
[[loops]]
name = "eight"
vertices = [[0.0, 0.0], [0.5, 0.0], [0.5, 1.0], [1.0, 1.0], [1.0, 0.5], [0.0, 0.5]]
""", name="outputs", scheme="gauss", block=200, seed=3)


@pytest.fixture
def umask():
    old = os.umask(0o022)
    yield lambda m: os.umask(m)
    os.umask(old)


@pytest.mark.parametrize("mask,mode", [(0o022, 0o644), (0o027, 0o640), (0o002, 0o664)])
def test_files_get_the_umask_mode(tmp_path, umask, mask, mode):
    umask(mask)
    outcome = run_spec(parse_spec(SPEC), out=tmp_path / "run")
    for name in ("results.json", "results.csv"):
        assert stat.S_IMODE(os.stat(outcome.files[name]).st_mode) == mode, name
    # report.md and study.csv go through the same writer
    path = _write_text_atomic("# report\n", tmp_path / "report.md")
    assert stat.S_IMODE(os.stat(path).st_mode) == mode


def test_csv_has_group_metric_scheme_spacing(tmp_path):
    outcome = run_spec(parse_spec(SPEC), out=tmp_path / "run")
    rows = list(csv.DictReader(io.StringIO(open(outcome.files["results.csv"]).read())))
    assert [r["loop"] for r in rows] == ["box", "eight"]
    for r in rows:
        assert (r["group"], r["metric"], r["scheme"], float(r["spacing"])) == \
            ("SU(2)", "physics", "gauss", 0.25)
    # a null is an empty cell: the gauss scheme has no closed form for the figure eight
    assert rows[1]["exact"] == "" and rows[0]["exact"] != ""


def test_tables_mark_missing_values_and_say_why(tmp_path):
    results = run_spec(parse_spec(SPEC)).results
    table = format_table(results)
    assert not exact_zero_error(table) and "null" not in table
    eight = [line for line in table.splitlines() if MISSING in line]
    assert eight, table
    # every line with a missing value carries its reason
    for line in eight:
        assert "not available" in line or "closed form" in line, line
    from holonomy.experiment import exact_results

    exact = format_exact_table(exact_results(parse_spec(SPEC, purpose="exact")))
    assert not exact_zero_error(exact) and "null" not in exact


def exact_zero_error(text: str) -> bool:
    """True if some value is shown with a fake error ``± 0`` (not ``± 0.0057``)."""
    return re.search(r"± 0(?![.\d])", text) is not None


class Recording(Progress):
    opened = 0

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.stages = []
        self.ticks = 0

    def _open(self):
        if self.bar is None and self.enabled:
            Recording.opened += 1
        return super()._open()

    def stage(self, name, blocks, done=0):
        self.stages.append((name, blocks, done))
        super().stage(name, blocks, done)

    def update(self, k=1):
        self.ticks += k
        super().update(k)


def test_one_bar_for_a_whole_command(tmp_path, capsys):
    bar = Recording(enabled=True)
    Recording.opened = 0
    spec = parse_spec(SPEC)
    run_spec(spec, out=tmp_path / "a", progress=bar)
    run_spec(spec, out=tmp_path / "a", progress=bar, resume=True)  # all blocks reused
    bar.close()
    assert Recording.opened == 1
    assert bar.stages == [("outputs", 3, 0), ("outputs", 3, 3)]
    assert bar.ticks == 3 and bar.total == 6
    assert "outputs" in capsys.readouterr().err


def test_cli_says_what_runs_where_and_where_the_files_are(tmp_path):
    spec = tmp_path / "outputs.toml"
    spec.write_text(SPEC)
    proc = subprocess.run([sys.executable, "-m", "holonomy.cli", "run", str(spec), "--out",
                           str(tmp_path / "out")], capture_output=True, text=True,
                          timeout=300)
    assert proc.returncode == 0, proc.stderr
    first, *_, last = proc.stderr.strip().splitlines()
    assert first.startswith("whitegauge run: outputs: SU(2), gauss scheme, spacing 0.25")
    assert "600 samples in 3 blocks of 200 (seed 3)" in first
    assert str(tmp_path / "out") in first
    assert last.startswith(f"whitegauge run: wrote {tmp_path / 'out' / 'results.json'}")
    assert "3 blocks computed, 0 reused" in last
    assert not exact_zero_error(proc.stdout)


def test_readme_defines_every_results_field_and_csv_column(tmp_path):
    from pathlib import Path

    readme = (Path(__file__).resolve().parents[3] / "README.md").read_text()
    section = readme[readme.index("## Results"):]
    section = section[:section.index("\n## ", 5)]
    outcome = run_spec(parse_spec(SPEC), out=tmp_path / "run")
    res = outcome.results
    keys = set(res) | set(res["results"][0]) | set(res["provenance"]) | set(res["field"])
    missing = sorted(k for k in keys if f"`{k}`" not in section)
    assert not missing, missing
    header = open(outcome.files["results.csv"]).readline().strip().split(",")
    assert all(col in section for col in header)


def test_rerun_reuses_the_same_specs_blocks_and_fresh_discards_them(tmp_path):
    """Blocks are pure functions of the spec and their index: a rerun into the folder
    reuses them without --resume, bitwise; --fresh computes them again (the same
    numbers); another spec is refused."""
    from holonomy.experiment import SpecError as Refused

    spec = parse_spec(SPEC)
    first = run_spec(spec, out=tmp_path / "r")
    again = run_spec(spec, out=tmp_path / "r")
    assert (again.stats.reused, again.stats.computed) == (3, 0)
    assert again.results["results"] == first.results["results"]
    assert again.results["provenance"]["blocks_reused"] == 3
    fresh = run_spec(spec, out=tmp_path / "r", fresh=True)
    assert (fresh.stats.reused, fresh.stats.computed) == (0, 3)
    assert fresh.results["results"] == first.results["results"]
    with pytest.raises(ValueError, match="exclude each other"):
        run_spec(spec, out=tmp_path / "r", fresh=True, resume=True)
    other = parse_spec(SPEC.replace("seed = 3", "seed = 4"))
    with pytest.raises(Refused):
        run_spec(other, out=tmp_path / "r")
