"""Curves in specs: exact continuum values from the curves' exact face areas, the
face-by-face area error, and Monte Carlo against the exact lattice value."""

import math

import pytest

from tests.conftest import spec_text

from holonomy.experiment import SpecError, exact_results, parse_spec, run_spec

SPEC = spec_text("""
[[loops]]
name = "lemniscate"
curve = {family = "lemniscate", a = 1.2, sides = 256}
[[loops]]
name = "cardioid"
curve = {family = "cardioid", a = 0.4, center = [3.0, 0.0], sides = 256}
[[loops]]
name = "ellipse"
ellipse = {center = [0.0, 3.0], radii = [1.0, 0.5], sides = 128}
""", name="curves", spacing=0.1, samples=20000,
                 block=5000, seed=11)

# SU(2) with the physics metric (k = 2): fundamental Casimir 3/4 (e.g. Fulton and
# Harris, "Representation Theory", 1991, from memory). A simple loop of area A:
# exp(-c lambda A / 2) (Levy 2003, Mem. AMS 166); the lemniscate's lobes are disjoint
# faces with windings +1 and -1, independent and conjugation invariant, so its value is
# the product of the lobes' values, exp(-c lambda (a^2/2 + a^2/2) / 2).
C = 0.75
CLOSED = {"lemniscate": math.exp(-C * 1.2**2 / 2),
          "cardioid": math.exp(-C * 6 * math.pi * 0.4**2 / 2),
          "ellipse": math.exp(-C * math.pi * 0.5 / 2)}


def test_exact_continuum_is_the_curve_not_its_polygon():
    obj = exact_results(parse_spec(SPEC, purpose="exact"))
    for row in obj["results"]:
        assert row["continuum"] == pytest.approx(CLOSED[row["loop"]], rel=1e-12), row["loop"]
        if row["loop"] != "ellipse":
            assert "exact face areas" in row["continuum_method"]


def test_monte_carlo_within_four_standard_errors(tmp_path):
    outcome = run_spec(parse_spec(SPEC), out=tmp_path / "run")
    rows = {r["loop"]: r for r in outcome.results["results"]}
    for name, r in rows.items():
        assert r["exact"] is not None and abs(r["z"]) < 4, (name, r["z"])
        assert r["continuum"] == pytest.approx(CLOSED[name], rel=1e-12)
        # heat: the exact value is the continuum value of the loop as snapped
        assert r["snapped"] == pytest.approx(r["exact"], rel=1e-12)
        assert r["snapping_error"] == pytest.approx(r["exact"] - r["continuum"], abs=1e-15)
        assert r["max_face_area_error"] is not None and r["max_face_area_error"] >= 0
    lem = rows["lemniscate"]
    assert abs(lem["area_error"]) < 1e-12 < lem["max_face_area_error"]
    # a warning exactly when the snapping error exceeds the statistical error
    for r in rows.values():
        assert (r["warning"] is not None) == (abs(r["snapping_error"]) > r["stderr"])


@pytest.mark.parametrize("loop,key", [
    ('curve = {family = "spiral", a = 1, sides = 64}', "loops[0].curve.family"),
    ('curve = {family = "limacon", a = 1, sides = 64}', "loops[0].curve.b"),
    ('curve = {family = "rose", a = 1, k = 0, sides = 64}', "loops[0].curve.k"),
    ('curve = {family = "cardioid", a = 1, sides = 2}', "loops[0].curve.sides"),
    ('curve = {family = "cardioid", a = 1, r = 2, sides = 64}', "loops[0].curve.r"),
    ('ellipse = {center = [0, 0], radii = [1, -1], sides = 64}', "loops[0].ellipse.radii[1]"),
    ('ellipse = {center = [0, 0], sides = 64}', "loops[0].ellipse.radii"),
])
def test_bad_curves_name_the_key(loop, key):
    text = SPEC.split("[[loops]]")[0] + f"[[loops]]\n{loop}\n[run]\nsamples = 10\nseed = 1\n"
    with pytest.raises(SpecError) as info:
        parse_spec(text)
    assert info.value.key == key
