"""Regularization studies on one coupled field."""

from __future__ import annotations

import numpy as np
import pytest

from discretize import Loop
from holonomy import Field, StudyProblem, WilsonProblem, run_study_block


def _rect(w, h):
    return Loop.polygon([[0, 0], [w, 0], [w, h], [0, h]])


def _study(spacings=(0.5, 0.25, 0.125), schemes=("heat", "linear", "gauss"), **kw):
    field = Field(coupling=1.0, spacing=0.5, reference=0.0)
    base = WilsonProblem(family=kw.get("family", "SU"), n=kw.get("n", 2),
                         metric=kw.get("metric", "physics"), field=field,
                         loops=(_rect(1.0, 0.5),), names=("box",), samples=200, block=100,
                         seed=9)
    return StudyProblem(base, spacings, schemes)


def test_study_grids_nest_and_noise_is_shared():
    study = _study(schemes=("linear",), family="U", n=1, metric="trace")
    g0, g2 = study.grids[0.5], study.grids[0.125]
    assert g0.origin == g2.origin and g2.nx == 4 * g0.nx and g2.ny == 4 * g0.ny
    sums = run_study_block(study, 0)
    # U(1) linear: the phase is the enclosed noise, which refinement preserves exactly
    # (the children of a cell sum to the parent), so every spacing sees the same phases
    base = sums[(0.5, "linear")]
    for h in (0.25, 0.125):
        np.testing.assert_allclose(sums[(h, "linear")].sum_re, base.sum_re, atol=1e-10)


def test_study_is_block_order_independent():
    study = _study()
    forward = {k: [] for k in study.problems}
    for b in range(study.n_blocks):
        for k, v in run_study_block(study, b).items():
            forward[k].append(v)
    backward = {k: list(reversed(v)) for k, v in forward.items()}
    a, b = study.finish(forward), study.finish(backward)
    for k in a:
        assert a[k].loops[0].estimate == b[k].loops[0].estimate


@pytest.mark.parametrize("spacings,match", [
    ((0.5,), "at least two"),
    ((0.5, 0.3), "powers of 2"),
    ((0.5, -0.25), "positive"),
])
def test_study_bad_input(spacings, match):
    with pytest.raises(ValueError, match=match):
        _study(spacings=spacings)
