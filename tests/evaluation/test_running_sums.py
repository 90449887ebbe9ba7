"""The running sums add in the same order whichever way they are computed (np.cumsum, or one
add per layer for a sweep's few layers and many variants), so they agree bit for bit."""

from __future__ import annotations

import numpy as np
import pytest

from layercalc.language.functions import downward_sum, upward_sum


@pytest.mark.parametrize("order", ["C", "F"])
@pytest.mark.parametrize("shape", [(1, 12), (3, 12), (1000, 12), (1000, 100), (5, 100_000)])
def test_running_sums_equal_cumsum_exactly(shape, order):
    x = np.asarray(np.random.default_rng(1).normal(size=shape), order=order)
    # reference: numpy's cumulative sum (numpy itself, the version installed)
    assert np.array_equal(upward_sum(x), np.cumsum(x, axis=-1))
    assert np.array_equal(downward_sum(x), np.cumsum(x[:, ::-1], axis=-1)[:, ::-1])


@pytest.mark.parametrize("function", ["at_min", "at_max"])
def test_at_min_and_at_max_by_layer_equal_argmin_and_argmax(function):
    from layercalc.language.functions import lookup

    rng = np.random.default_rng(2)
    key = np.asarray(rng.integers(0, 4, size=(1000, 12)).astype(float), order="F")  # ties
    values = rng.normal(size=(1000, 12))
    pick = np.argmin if function == "at_min" else np.argmax  # numpy: the first extreme
    want = np.take_along_axis(values, pick(key, axis=-1)[:, None], axis=-1)
    assert np.array_equal(lookup(function, 2).impl(key, values), want)
