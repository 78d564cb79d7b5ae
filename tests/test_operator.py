"""The one piecewise-linear operator: composition equals applying step by step, both conventions agree."""

from __future__ import annotations

import numpy as np
import pytest

from cvdfilter.observers.operator import PiecewiseLinear


def _random_operator(rng, k):
    mats = rng.normal(size=(k, 3, 3))
    return PiecewiseLinear(mats, rng.normal(size=3) if k == 2 else None)


@pytest.mark.parametrize("k", [1, 2])
def test_compose_and_then_equal_step_by_step(k):
    rng = np.random.default_rng(k)
    op = _random_operator(rng, k)
    a, b = rng.normal(size=(3, 3)), rng.normal(size=(3, 3))
    x = rng.normal(size=(500, 3))
    step = op.apply(x @ a.T) @ b.T
    folded = op.compose(a).then(b)
    assert np.allclose(folded.apply(x), step, rtol=1e-12, atol=1e-12)
    # Row vectors: the transposed matrices give the same result.
    rows = folded.row_matrices
    by_rows = x @ rows[0]
    if k == 2:
        by_rows = np.where((x @ folded.separator >= 0)[:, None], by_rows, x @ rows[1])
    assert np.allclose(by_rows, step, rtol=1e-12, atol=1e-12)


def test_brettel_simulation_is_one_operator():
    """The simulation's own rule (matrices[0] on the separator's non-negative side) is the operator's."""
    from cvdfilter.observers.simulate import simulation

    s = simulation("deuteranope")
    x = np.random.default_rng(0).uniform(0, 1, size=(200, 3))
    each = np.array([(s.matrices[0] if v @ s.separator >= 0 else s.matrices[1]) @ v for v in x])
    assert np.array_equal(s.apply(x), s.operator.apply(x))
    assert np.allclose(s.apply(x), each, rtol=1e-12, atol=1e-15)


def test_bad_shapes_and_two_planes_refused():
    with pytest.raises(ValueError):
        PiecewiseLinear(np.zeros((2, 3, 3)))  # two matrices need a separator
    with pytest.raises(ValueError):
        PiecewiseLinear(np.zeros((3, 3, 3)))
    rng = np.random.default_rng(1)
    with pytest.raises(ValueError):
        _random_operator(rng, 2).then(_random_operator(rng, 2))
