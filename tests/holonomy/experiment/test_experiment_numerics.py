"""Numerical extremes (issue 7, part 3).

Reference values: for a simple loop enclosing area A and an irreducible representation
with Casimir c, E[W] = exp(-c lambda A / 2) (Levy, T. (2003), "Yang-Mills measure on
compact surfaces", Mem. AMS 166, no. 790, Prop. 2.x (simple loops), from memory; the
same formula is the heat-kernel mean stated in README.md, "Conventions"). Casimir values
(Georgi 1999, Lie Algebras in Particle Physics, ch. 7-8, from memory): SU(2) fundamental with k = 2: 3/4; U(1), k = 1: 1; U(N)
fundamental with k = N: 1; SO(N) defining with k = 1: (N - 1)/2. The `heat` scheme is
exact for lattice loops at every spacing, so its estimate has no bias. Tolerance: 4
standard errors (common practice, no source).
"""

import math
import time

import numpy as np
import pytest

from discretize import Loop
from holonomy import Field, WilsonProblem, run_block
from holonomy._kernels import kernel_for
from holonomy.experiment import LIMITS, parse_spec, run_spec, series_results
from holonomy.groups import make_group

from tests.conftest import BASE, mutate, wg

SQUARE = Loop.polygon([[0, 0], [1, 0], [1, 1], [0, 1]])  # area 1: lambda * A = lambda
GROUPS = {"SU2": ("SU", 2, "physics", 0.75), "U1": ("U", 1, "trace", 1.0)}
LAMBDA_A = [1e-10, 1e-6, 1e-2, 1.0, 10.0, 100.0, 1380.0, 1840.0, 1e4]


def _estimate(family, n, metric, lam, scheme="heat", samples=4000, block=1000, seed=11,
              loop=SQUARE, spacing=0.5):
    p = WilsonProblem(family=family, n=n, metric=metric,
                      field=Field(coupling=lam, spacing=spacing, scheme=scheme),
                      loops=(loop,), samples=samples, block=block, seed=seed)
    return p.finish([run_block(p, b) for b in range(p.n_blocks)]).loops[0]


@pytest.mark.parametrize("group", sorted(GROUPS))
@pytest.mark.parametrize("lam", LAMBDA_A)
def test_simple_loop_across_lambda_area(group, lam):
    family, n, metric, c = GROUPS[group]
    le = _estimate(family, n, metric, lam)
    exact = math.exp(-c * lam / 2)  # 1e-300 at lambda A = 1840 for SU(2); 0.0 at 1e4
    for v in (le.estimate, le.estimate_imag, le.stderr, le.stderr_batch, le.drift):
        assert math.isfinite(v)
    assert le.stderr > 0  # was 0 at lambda A = 1e-10: sumsq - sum^2/n cancelled
    assert abs(le.estimate - exact) <= 4 * le.stderr, (le.estimate, exact, le.stderr)
    assert le.drift < 1e-10 and not le.reprojected


@pytest.mark.parametrize("scheme", ["linear", "gauss", "wilson"])
@pytest.mark.parametrize("lam", [1e-10, 1.0, 1840.0, 1e4])
def test_other_schemes_stay_finite(scheme, lam):
    le = _estimate("SU", 2, "physics", lam, scheme=scheme, samples=1000, block=500)
    assert all(math.isfinite(v) for v in (le.estimate, le.stderr, le.drift))
    assert -1 - 1e-12 <= le.estimate <= 1 + 1e-12 and le.stderr > 0


def test_results_file_reads_zero_within_error_at_1e_minus_300(tmp_path):
    """Through the whole pipeline: exp(-3/4 * 1840 / 2) ~ 1e-300; JSON holds numbers."""
    spec = parse_spec(mutate(("coupling = 1.0", "coupling = 3680.0"),
                             ("samples = 64", "samples = 2000"), ("block = 32", "block = 500")))
    res = run_spec(spec, out=tmp_path).results  # box area 0.5: lambda A = 1840
    box = res["results"][0]
    assert box["exact"] == pytest.approx(math.exp(-0.75 * 1840 / 2), rel=1e-9)
    assert box["exact"] < 1e-299
    for key in ("estimate", "stderr", "z", "drift"):
        assert isinstance(box[key], float) and math.isfinite(box[key])
    assert abs(box["z"]) <= 4


@pytest.mark.parametrize("family,n,metric,c", [
    ("U", 16, "large-n", 1.0),    # U(N), k = N: c = 1
    ("SO", 12, "trace", 5.5),     # SO(N), k = 1: c = (N - 1)/2
])
def test_large_groups_run(family, n, metric, c):
    le = _estimate(family, n, metric, 1.0, samples=64, block=64)
    assert abs(le.estimate - math.exp(-c / 2)) <= 4 * le.stderr
    assert le.drift < 1e-10


@pytest.mark.parametrize("family,n,metric,m", [
    ("SU", 2, "physics", 10**5), ("U", 3, "trace", 5000), ("SO", 4, "trace", 5000),
    ("Sp", 2, "trace", 3000),
    pytest.param("U", 3, "trace", 10**5, marks=pytest.mark.slow),
    pytest.param("SO", 4, "trace", 10**5, marks=pytest.mark.slow),
    pytest.param("Sp", 2, "trace", 10**5, marks=pytest.mark.slow),
    pytest.param("U", 16, "large-n", 10**5, marks=pytest.mark.slow),
])
def test_drift_over_many_successive_products(family, n, metric, m):
    """The kernel's pairwise product and a sequential left-to-right product of m
    heat-kernel elements stay on the group to 1e-10 without re-projection."""
    g = make_group(family, n, metric)
    k = kernel_for(g)
    rng = np.random.default_rng(2026)
    f = k.heat(np.full(m, 0.5), 1, rng)
    assert k.drift(k.product(f)) < 1e-10
    acc = f[:, 0]
    for i in range(1, m):
        acc = k.mul(acc, f[:, i])
    assert k.drift(acc) < 1e-10


@pytest.mark.slow
@pytest.mark.parametrize("family,n,metric", [("SU", 2, "physics"), ("U", 3, "trace")])
def test_drift_along_a_column_of_1e5_plaquettes(family, n, metric):
    """`gauss` on the dense path multiplies the plaquettes of a column one by one: a
    loop 1 cell wide and 1e5 cells tall takes 1e5 successive products; the result
    reports the drift, and it stays below 1e-10 (no re-projection: `reprojected` False).
    """
    tall = Loop.polygon([[0, 0], [1, 0], [1, 1e5], [0, 1e5]])
    le = _estimate(family, n, metric, 1e-5, scheme="gauss", samples=4, block=4,
                   loop=tall, spacing=1.0)
    assert le.drift < 1e-10 and not le.reprojected
    assert math.isfinite(le.estimate)


# ----------------------------------------------------------- exact and formal limits

def test_series_order_limit_is_refused(tmp_path, capsys):
    from holonomy.cli import main

    spec = tmp_path / "s.toml"
    spec.write_text(BASE)
    assert main(["series", str(spec), "--order", "21"]) == 2
    assert capsys.readouterr().err.strip() == \
        "whitegauge: error: --order: got '21'; expected an integer from 0 to 20"


def test_series_beyond_its_budget_answers_null_instead_of_hanging(monkeypatch):
    """Order 9 of a four-step loop takes far longer than 2 s (the Wick sum has
    (2M-1)!! pairings per word); the formal route gives up at its stated budget."""
    monkeypatch.setenv("WHITEGAUGE_SERIES_BUDGET", "2")
    # the linear scheme's Wick series (the heat scheme's series is a closed form)
    spec = parse_spec(mutate(('scheme = "heat"', 'scheme = "linear"')))
    t0 = time.monotonic()
    obj = series_results(spec, 9, loops=[0])
    assert time.monotonic() - t0 < 20
    row = obj["results"][0]
    assert row["coefficients"] is None and "budget of 2 s" in row["note"]


def test_series_within_budget_still_answers(monkeypatch):
    monkeypatch.setenv("WHITEGAUGE_SERIES_BUDGET", "30")
    obj = series_results(parse_spec(mutate(('scheme = "heat"', 'scheme = "linear"'))), 2,
                         loops=[0], rationals=True)
    # box 1 x 0.5, SU(2), k = 2, linear scheme: c_1 = -c A / 2 = -(3/4)(1/2)/2 = -3/16
    # (first-order Wick term; Wick 1950, Phys. Rev. 80, 268; README.md "Conventions")
    assert obj["results"][0]["rationals"][:2] == ["1", "-3/16"]


def test_exact_route_refuses_sizes_beyond_max_dim():
    """evaluate_polygon refuses a tensor contraction above `max_dim` at once."""
    from holonomy.exact import evaluate_polygon

    # SO(8) has no closed form for a loop wound 6 times: the tensor would be 8^6 wide
    g = make_group("SO", 8, "trace")
    t0 = time.monotonic()
    with pytest.raises(ValueError, match="max_dim"):
        evaluate_polygon(g, [[0, 0], [1, 0], [1, 1], [0, 1]], turns=6, coupling=1.0)
    assert time.monotonic() - t0 < 10
    # U(8) takes the closed form (Adams operation) instead: no size limit
    from holonomy.exact import unitary_wound_loop

    r = evaluate_polygon(make_group("U", 8, "large-n"), [[0, 0], [1, 0], [1, 1], [0, 1]],
                         turns=6, coupling=1.0)
    assert r.value == pytest.approx(unitary_wound_loop(8, 6, 1.0), abs=1e-12)


@pytest.mark.slow
def test_exact_command_on_large_groups_answers_quickly(tmp_path):
    text = mutate(("n = 2", "n = 32"), ('family = "SU"', 'family = "SO"'),
                  ('metric = "physics"', 'metric = "trace"'),
                  ('name = "ell"', 'name = "ell"\nturns = 20'))
    (tmp_path / "s.toml").write_text(text)
    t0 = time.monotonic()
    p = wg("exact", tmp_path / "s.toml", "--json", timeout=120)
    assert p.returncode == 0 and time.monotonic() - t0 < 60
    assert '"exact": null' in p.stdout  # the winding loop: not available, no number


def test_limits_are_stated():
    assert LIMITS["matrix size"] == 32 and LIMITS["grid cells"] == 10**7


def test_stderr_of_nearly_constant_values_does_not_cancel():
    """Regression (found by this suite): values 1 - 1e-11 z gave stderr 0 because the
    variance was formed as sumsq/n - mean^2. Reference: numpy.std(ddof=1) / sqrt(n)."""
    from holonomy._estimate import BlockSums, combine_blocks

    rng = np.random.default_rng(5)
    vals = 1.0 - 1e-11 * rng.standard_normal((3000, 1))
    blocks = [BlockSums.from_values(b, vals[b * 1000:(b + 1) * 1000], 0.0) for b in range(3)]
    blocks = [BlockSums.from_dict(b.to_dict()) for b in blocks]  # as the store keeps them
    res = combine_blocks(blocks, names=["a"], areas=[1.0], seed=0, block=1000,
                         scheme="heat", path="perimeter")
    want = np.std(vals[:, 0], ddof=1) / math.sqrt(3000)
    assert res.loops[0].stderr == pytest.approx(want, rel=1e-6)
