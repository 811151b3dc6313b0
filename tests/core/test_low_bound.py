"""``sampled.low_bound`` gives exactly numpy's empirical quantile (numpy 2.x ``numpy.quantile`` with
``method="lower"``, Hyndman and Fan's discontinuous lower estimate, is the reference), on sample arrays
with ties, signed zeros, infinities and NaN, contiguous or a column of a (samples, n) array."""
from __future__ import annotations

import math

import numpy as np
from hypothesis import given, settings, strategies as st

from ledger.core.sampled import low_bound

VALUES = [0.0, -0.0, 1.0, -1.0, 2.5, 1e-300, -3.0, 7.25, np.inf, -np.inf]
CONFIDENCES = [0.5, 0.8, 0.9, 0.95, 0.99, 0.999, 0.9999, 1e-4]


def _same(mine: float, ref: float) -> None:
    assert type(mine) is float
    if math.isnan(ref):
        assert math.isnan(mine)
    else:
        assert mine == ref and math.copysign(1.0, mine) == math.copysign(1.0, ref)


@settings(max_examples=400, deadline=None)
@given(st.lists(st.sampled_from(VALUES), min_size=1, max_size=60), st.sampled_from(CONFIDENCES),
       st.floats(1e-4, 1.0 - 1e-4), st.booleans(), st.booleans())
def test_equals_numpy_quantile_lower(items, listed, drawn, use_drawn, nan):
    a = np.array(items + ([np.nan] if nan else []), dtype=float)
    c = drawn if use_drawn else listed
    _same(low_bound(a, c), float(np.quantile(a, 1.0 - c, method="lower")))
    col = np.stack([a, -a], axis=1)[:, 0]  # a strided column, as the status takes them
    _same(low_bound(col, c), float(np.quantile(col, 1.0 - c, method="lower")))


def test_large_sample_arrays_equal_numpy():
    rng = np.random.default_rng(11)
    for n in (1, 2, 99, 100, 101, 10_000, 12_345):
        a = np.round(rng.normal(size=n), 1)  # rounded: many ties
        for c in CONFIDENCES:
            _same(low_bound(a, c), float(np.quantile(a, 1.0 - c, method="lower")))
            z = np.maximum(a, 0.0) * np.where(rng.random(n) < 0.5, -1.0, 1.0)  # many zeros of both signs
            _same(low_bound(z, c), float(np.quantile(z, 1.0 - c, method="lower")))


def test_other_inputs_go_to_numpy():
    assert low_bound(np.arange(100), 0.9) == float(np.quantile(np.arange(100), 0.1, method="lower"))
    assert low_bound(np.arange(100, dtype=np.float32), 0.9) == float(
        np.quantile(np.arange(100, dtype=np.float32), 0.1, method="lower"))
    assert low_bound([3.0, 1.0, 2.0], 0.5) == 2.0 == float(np.quantile([3.0, 1.0, 2.0], 0.5, method="lower"))
