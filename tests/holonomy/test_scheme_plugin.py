"""A scheme is one class: registered by name, it runs through the spec, the runner and
the references, with its own exact value -- and a scheme without one gets null, never
another scheme's value.

The plug-in here, ``halfgauss``, draws each plaquette as ``exp(X / sqrt(2))`` (the
``gauss`` scheme at half the variance). Its exact value on a simple loop is a product
of one-plaquette values ``f(t) = E[tr exp(Y)] / 2`` over the cells, Y a Gaussian of the
su(2) algebra with variance t = lambda mu(cell) / 2 per component (independent,
conjugation-invariant factors multiply their normalized traces: Schur's lemma). For
SU(2) with the physics metric (k = 2) the eigenvalues of Y are +-i r / 2 with
r = |Y| ~ sqrt(t) chi_3, so f(t) = E[cos(sqrt(t) chi_3 / 2)], evaluated here with
scipy.stats.chi (Hall, B. C. (2015). Lie Groups, Lie Algebras, and Representations,
2nd ed., Springer, section 4.6 for su(2); the chi law of a Gaussian vector's norm:
Johnson, Kotz and Balakrishnan (1994), Continuous Univariate Distributions 1, ch. 18).
"""

import math

import numpy as np
import pytest
from scipy import stats

from holonomy import SCHEMES, Scheme, register_scheme
from holonomy.exact import LatticeValue, simple_cells
from holonomy.experiment import exact_results, parse_spec, run_spec
from tests.conftest import spec_text

SPEC = spec_text("""
[[loops]]
name = "box"
vertices = [[0.0, 0.0], [1.0, 0.0], [1.0, 0.5], [0.0, 0.5]]
""", name="plugin", scheme="{scheme}", samples=2000, block=250, seed=11)


def _one_plaquette(t: float) -> float:
    """E[cos(sqrt(t) chi_3 / 2)] by scipy's quadrature of the chi(3) law."""
    return stats.chi(3).expect(lambda r: math.cos(math.sqrt(t) * r / 2.0))


class HalfGaussScheme(Scheme):
    """Plaquettes exp(X / sqrt(2)): a scheme defined outside the package."""

    name = "halfgauss"
    rate = 2.0

    def _plaquettes_impl(self, kernel, noise, variances, rng, size):
        return kernel.exp(noise / math.sqrt(2.0))

    def lattice_value(self, problem, i):
        w = simple_cells(problem.lattice_loops[i])
        mu = problem.field.area.cell_measures(problem.grid)[w != 0]
        value = np.prod([_one_plaquette(problem.field.coupling * m / 2.0) for m in mu])
        return LatticeValue(complex(value), "halfgauss: product of half-variance plaquettes")


class NoReferenceScheme(HalfGaussScheme):
    """The same sampler with no exact value (the base class's null)."""

    name = "noref"
    lattice_value = Scheme.lattice_value


@pytest.fixture
def plugins():
    for cls in (HalfGaussScheme, NoReferenceScheme):
        register_scheme(cls)
    yield
    for cls in (HalfGaussScheme, NoReferenceScheme):
        SCHEMES.pop(cls.name)


def test_registered_scheme_runs_against_its_own_reference(plugins):
    spec = parse_spec(SPEC.format(scheme="halfgauss"))
    row = run_spec(spec).results["results"][0]
    assert row["scheme"] == "halfgauss"
    assert row["exact_method"].startswith("halfgauss:")
    assert abs(row["z"]) < 4
    # not another scheme's value: the linear and gauss closed forms are far off
    for other in ("linear", "gauss", "heat"):
        ref = exact_results(parse_spec(SPEC.format(scheme=other)))["results"][0]["exact"]
        assert abs(ref - row["exact"]) > 8 * row["stderr"], other


def test_scheme_without_reference_gets_null(plugins):
    spec = parse_spec(SPEC.format(scheme="noref"))
    row = run_spec(spec).results["results"][0]
    assert row["exact"] is None and row["z"] is None
    assert "noref" in row["exact_note"]
    assert row["continuum"] is not None    # the continuum value does not depend on it


def test_unregistered_scheme_is_refused_by_the_spec():
    from holonomy.experiment import SpecError

    with pytest.raises(SpecError) as info:
        parse_spec(SPEC.format(scheme="halfgauss"))
    assert info.value.key == "field.scheme"
