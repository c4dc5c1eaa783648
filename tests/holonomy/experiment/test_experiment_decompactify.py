"""`whitegauge decompactify`: the two orders of limits for a loop on spheres.

Reference values: SU(2), k = 2, a simple loop of area A: the zero-instanton sector is
(1 - tau/4) exp(-tau/8), tau = lambda A (T - A)/T; as T -> infinity its lambda^2
coefficient tends to 5/128 A^2, the Gaussian-matrix value E[tr exp X]/2, while the plane's
exp(-3 lambda A/8) has 9/128 A^2 (E. Witten 1991, Commun. Math. Phys. 141, 153;
README.md, Closed surfaces).
"""

import json

import pytest

from tests.conftest import spec_text, wg

SPHERE = spec_text('[[loops]]\nname = "box"\nvertices = [[0, 0], [1, 0], [1, 1], [0, 1]]\n',
                   name="dec") + '[surface]\nkind = "sphere"\narea = 4.0\n'


def test_json_shape_and_limits(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(SPHERE)
    proc = wg("decompactify", path, "--areas", "2,4,16", "--order", "3", "--json",
              "--out", tmp_path / "out", check_code=0)
    obj = json.loads(proc.stdout)
    (res,) = obj["results"]
    assert res["loop"] == "box" and [r["area"] for r in res["rows"]] == [2.0, 4.0, 16.0]
    for row in res["rows"]:
        tau = (row["area"] - 1.0) / row["area"]  # lambda = 1, A = 1
        assert row["coefficients"][1] == pytest.approx(-3 * tau / 8, abs=1e-10)
        assert set(row) >= {"area", "exact", "zero_instanton", "coefficients"}
    assert res["plane"]["coefficients"][2] == pytest.approx(9 / 128, abs=1e-14)
    lim = res["limit"]
    assert lim["coefficients"][2] == pytest.approx(5 / 128, abs=max(lim["error"][2], 1e-7))
    assert lim["minus_plane"][2] == pytest.approx(-4 / 128, abs=1e-6)
    assert (tmp_path / "out" / "decompactify.png").stat().st_size > 0
    assert (tmp_path / "out" / "decompactify.json").exists()


@pytest.mark.parametrize("args, needle", [
    (("--areas", "0.5", "--order", "2"), "--areas"),
    (("--areas", "2,-1", "--order", "2"), "--areas"),
    (("--areas", "2", "--order", "x"), "--order"),
])
def test_bad_input(tmp_path, args, needle):
    path = tmp_path / "s.toml"
    path.write_text(SPHERE)
    proc = wg("decompactify", path, *args, check_code=2)
    assert needle in proc.stderr and "Traceback" not in proc.stderr


def test_plane_spec_refused(tmp_path):
    path = tmp_path / "p.toml"
    path.write_text(SPHERE.replace('[surface]\nkind = "sphere"\narea = 4.0\n', ""))
    proc = wg("decompactify", path, "--areas", "4", "--order", "2", check_code=2)
    assert "surface.kind" in proc.stderr


def test_series_beyond_double_precision_is_a_note(tmp_path):
    """A metric constant of 1e-6 puts the zero-instanton sector's Gaussian factor
    e^(lambda kappa) near e^(5e5): the float series is refused with a precision-limit
    note (it was an OverflowError, exit 1); the exact values still come out: with a
    Casimir of order 1e6 the sector's exp(-c tau / 2) factor is 0 in double precision
    (Witten 1991)."""
    path = tmp_path / "s.toml"
    path.write_text(SPHERE.replace('metric = "physics"', "metric = 1e-6"))
    proc = wg("decompactify", path, "--areas", "2,4", "--order", "2", "--json",
              check_code=0)
    assert proc.stderr == ""
    (res,) = json.loads(proc.stdout)["results"]
    assert all(row["coefficients"] is None for row in res["rows"])
    assert res["limit"]["coefficients"] is None
    assert "precision limit" in res["note"]
    assert all(row["exact"] == pytest.approx(0.0, abs=1e-300) for row in res["rows"])
