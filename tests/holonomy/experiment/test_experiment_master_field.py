"""group.n = "inf": the U(N) master field in the exact and series commands."""

import numpy as np
import pytest

from holonomy.experiment import parse_spec
from holonomy.experiment._commands import exact_results, series_results
from holonomy.experiment._spec import SpecError

TEXT = """
[group]
family = "{family}"
n = "inf"
metric = "{metric}"
[field]
coupling = 0.3
spacing = 0.5
[[loops]]
name = "nested"
vertices = [[2, 0], [4, 0], [4, 4], [0, 4], [0, 1], [3, 1], [3, 3], [2, 3]]
[[loops]]
name = "twice"
vertices = [[0, 0], [1, 0], [1, 1], [0, 1]]
turns = 2
"""


def test_exact_and_series():
    spec = parse_spec(TEXT.format(family="U", metric="large-n"), purpose="exact")
    rows = exact_results(spec)["results"]
    # Kazakov and Kostov 1980: (1 - A2) exp(-A1 / 2 - A2), A1 = 12 lambda, A2 = 2 lambda;
    # Biane 1997: nu_2(t) = e^{-t} (1 - t)
    lam = 0.3
    assert rows[0]["exact"] == pytest.approx((1 - 2 * lam) * np.exp(-8 * lam), abs=1e-12)
    assert rows[1]["continuum"] == pytest.approx(np.exp(-lam) * (1 - lam), abs=1e-12)
    ser = series_results(parse_spec(TEXT.format(family="U", metric="large-n"),
                                    purpose="series"), 2)["results"]
    assert ser[1]["coefficients"] == pytest.approx([1.0, -2.0, 1.5], abs=1e-10)


@pytest.mark.parametrize("family, metric, purpose, match", [
    ("SU", "large-n", "exact", 'only with family "U" and metric "large-n"'),
    ("U", "trace", "exact", 'only with family "U" and metric "large-n"'),
    ("U", "large-n", "run", "no samples"),
])
def test_refused(family, metric, purpose, match):
    text = TEXT.format(family=family, metric=metric) + "[run]\nsamples = 10\nseed = 1\n"
    with pytest.raises(SpecError, match=rf"group\.n: .*{match}"):
        parse_spec(text, purpose=purpose)
