"""The [surface] table and exact values on closed surfaces (README.md, Closed surfaces).

Reference values: the SU(2) character sum written out by hand (Migdal 1975, Sov. Phys.
JETP 42, 413; Rusakov 1990, Mod. Phys. Lett. A 5, 693), as in
tests/holonomy/exact/test_closed_surface.py.
"""

import json
import math

import pytest

from holonomy.experiment import SpecError, exact_results, parse_spec, series_results
from tests.conftest import BOX_AND_ELL, spec_text, wg


def su2_sum(t1, t2, genus=0, terms=300):
    cas = lambda j: j * (j + 1)  # noqa: E731  (k = 2)
    js = [j / 2 for j in range(terms)]
    Z = sum((2 * j + 1) ** (2 - 2 * genus) * math.exp(-cas(j) * (t1 + t2) / 2) for j in js)
    num = sum((2 * j + 1) * (2 * b + 1) ** (1 - 2 * genus)
              * math.exp(-cas(j) * t1 / 2 - cas(b) * t2 / 2)
              for j in js for b in (j - 0.5, j + 0.5) if b >= 0)
    return num / (2 * Z)


def surface_spec(table: str, purpose: str = "exact"):
    return parse_spec(spec_text(BOX_AND_ELL, name="surf") + table, purpose=purpose)


@pytest.mark.parametrize("table, genus", [('[surface]\nkind = "sphere"\narea = 3.0\n', 0),
                                          ('[surface]\nkind = "torus"\narea = 3.0\n', 1),
                                          ('[surface]\nkind = "closed"\ngenus = 2\narea = 3.0\n', 2)])
def test_exact_values_on_surfaces(table, genus):
    spec = surface_spec(table)
    assert spec.closed and spec.genus == genus and spec.total_area == 3.0
    out = exact_results(spec)
    assert out["surface"] == {"kind": spec.surface, "genus": genus, "area": 3.0}
    box = out["results"][0]  # area 0.5, lattice loop exact on the heat lattice
    assert box["exact_method"] == "surface-character-sum"
    assert box["exact"] == pytest.approx(su2_sum(0.5, 2.5, genus), abs=1e-12)
    assert box["continuum"] == pytest.approx(box["exact"], abs=1e-14)
    assert box["truncation_bound"] < 1e-14
    assert (box["zero_instanton"] is None) == (genus > 0)
    ell = out["results"][1]  # the L-shaped moves loop: 3 cells of 0.25^2
    assert ell["exact"] == pytest.approx(su2_sum(0.1875, 2.8125, genus), abs=1e-12)


def test_plane_is_unchanged():
    plane = parse_spec(spec_text(BOX_AND_ELL, name="surf"), purpose="exact")
    explicit = surface_spec('[surface]\nkind = "plane"\n')
    assert not plane.closed and plane.surface == "plane" and plane.total_area is None
    a, b = exact_results(plane), exact_results(explicit)
    assert [r["exact"] for r in a["results"]] == [r["exact"] for r in b["results"]]


@pytest.mark.parametrize("table, key", [
    ('[surface]\nkind = "sphere"\narea = 0.4\n', "surface.area"),        # the box has 0.5
    ('[surface]\nkind = "sphere"\narea = -1.0\n', "surface.area"),
    ('[surface]\nkind = "sphere"\n', "surface.area"),
    ('[surface]\nkind = "closed"\ngenus = -1\narea = 3.0\n', "surface.genus"),
    ('[surface]\nkind = "closed"\ngenus = 1.5\narea = 3.0\n', "surface.genus"),
    ('[surface]\nkind = "closed"\narea = 3.0\n', "surface.genus"),
    ('[surface]\nkind = "torus"\ngenus = 0\narea = 3.0\n', "surface.genus"),
    ('[surface]\nkind = "klein"\narea = 3.0\n', "surface.kind"),
    ('[surface]\narea = 3.0\n', "surface.area"),
    ('[surface]\nkind = "plane"\narea = 3.0\n', "surface.area"),
    ('[surface]\nkind = "sphere"\narea = 3.0\nholes = 1\n', "surface.holes"),
])
def test_bad_surface_tables(table, key):
    with pytest.raises(SpecError) as err:
        surface_spec(table)
    assert err.value.key == key


def test_cli_exact_and_bad_input(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(spec_text(BOX_AND_ELL, name="surf") + '[surface]\nkind = "torus"\narea = 3.0\n')
    proc = wg("exact", path, "--json", check_code=0)
    row = json.loads(proc.stdout)["results"][0]
    assert row["exact"] == pytest.approx(su2_sum(0.5, 2.5, 1), abs=1e-12)
    bad = tmp_path / "b.toml"
    bad.write_text(spec_text(BOX_AND_ELL, name="surf") + '[surface]\nkind = "torus"\narea = 0.1\n')
    proc = wg("exact", bad, check_code=2)
    assert proc.stderr.count("\n") == 1 and "surface.area" in proc.stderr
    assert "Traceback" not in proc.stderr


@pytest.mark.parametrize("purpose", ["study"])
def test_sampling_on_surfaces_refused(purpose):
    with pytest.raises(SpecError) as err:
        surface_spec('[surface]\nkind = "sphere"\narea = 3.0\n', purpose=purpose)
    assert err.value.key == "surface.kind" and "not available" in err.value.rule


def test_series_on_the_sphere(tmp_path):
    # the zero-instanton sector's series; SU(2), k = 2, simple loop of area A on a
    # sphere of area T: (1 - tau/4) exp(-tau/8), tau = lambda A (T - A) / T
    # (Minahan and Polychronakos 1994, Nucl. Phys. B 422, 172; from memory)
    path = tmp_path / "s.toml"
    path.write_text(spec_text(BOX_AND_ELL, name="surf") + '[surface]\nkind = "sphere"\narea = 3.0\n')
    proc = wg("series", path, "--order", "2", check_code=0)
    assert "sphere" in proc.stdout and "T = 3" in proc.stdout
    assert "zero-instanton" in proc.stdout and "O(exp(-const/lambda))" in proc.stdout
    obj = series_results(surface_spec('[surface]\nkind = "sphere"\narea = 3.0\n',
                                      purpose="series"), 2)
    assert obj["surface"] == {"kind": "sphere", "genus": 0, "area": 3.0}
    box = obj["results"][0]  # area 1/2
    tau = 0.5 * 2.5 / 3.0
    assert box["rationals"] == ["1", "-5/32", "125/18432"]
    assert box["coefficients"] == pytest.approx([1, -3 * tau / 8, 5 * tau**2 / 128], abs=1e-15)
    assert box["sector"] == "zero-instanton" and "no series" in box["sector_note"]
    assert box["continuum_rationals"] == box["rationals"]
    # only the heat scheme's series on a closed surface; the torus has none, with the reason
    with pytest.raises(SpecError) as err:  # the command line exits 2 on a SpecError
        series_results(parse_spec(spec_text(BOX_AND_ELL, name="surf", scheme="gauss")
                                  + '[surface]\nkind = "sphere"\narea = 3.0\n',
                                  purpose="series"), 2)
    assert err.value.key == "field.scheme"
    torus = series_results(surface_spec('[surface]\nkind = "torus"\narea = 3.0\n',
                                        purpose="series"), 2, loops=[0])
    assert torus["results"][0]["coefficients"] is None
    assert "half-integer powers" in torus["results"][0]["note"]
