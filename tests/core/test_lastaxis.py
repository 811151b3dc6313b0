"""The column-by-column reductions give exactly numpy's own answers (numpy 2.x ``ndarray.max/min/argmax/argmin/
any/all`` with ``axis=-1`` are the reference: the library's documented results, including the first index
of ties and of NaN), on arrays with ties, signed zeros, infinities and NaN, in the shapes dv free uses:
(samples, tanks), (tanks,) and (samples, engines, tanks)."""
from __future__ import annotations

import numpy as np
from hypothesis import given, settings, strategies as st

from ledger.core import lastaxis

VALUES = [0.0, -0.0, 1.0, -1.0, 2.5, np.inf, -np.inf, np.nan, 1e-300, -3.0]


@st.composite
def arrays(draw):
    shape = draw(st.sampled_from([(1,), (2,), (3,), (4,), (5, 1), (7, 3), (6, 4), (3, 2, 3), (1, 1, 5)]))
    size = int(np.prod(shape))
    items = draw(st.lists(st.sampled_from(VALUES), min_size=size, max_size=size))
    return np.array(items, dtype=float).reshape(shape)


def _same(a, b) -> None:
    a, b = np.asarray(a), np.asarray(b)
    assert a.shape == b.shape and a.dtype == b.dtype
    assert np.array_equal(a, b, equal_nan=a.dtype.kind == "f")
    if a.dtype.kind == "f":  # and the same signed zeros
        assert np.array_equal(np.signbit(a), np.signbit(b))


@settings(max_examples=300, deadline=None)
@given(arrays())
def test_float_reductions_equal_numpy(a):
    _same(lastaxis.max_last(a), a.max(axis=-1))
    _same(lastaxis.min_last(a), a.min(axis=-1))
    _same(lastaxis.argmax_last(a), a.argmax(axis=-1))
    _same(lastaxis.argmin_last(a), a.argmin(axis=-1))


@settings(max_examples=300, deadline=None)
@given(arrays())
def test_bool_reductions_equal_numpy(a):
    b = a > 0
    _same(lastaxis.any_last(b), b.any(axis=-1))
    _same(lastaxis.all_last(b), b.all(axis=-1))
    _same(lastaxis.argmax_last(b), b.argmax(axis=-1))
    _same(lastaxis.argmin_last(b), b.argmin(axis=-1))


def test_empty_axis_answers_as_numpy():
    e = np.zeros((4, 0))
    _same(lastaxis.any_last(e > 0), (e > 0).any(axis=-1))
    _same(lastaxis.all_last(e > 0), (e > 0).all(axis=-1))
    for fn in (lastaxis.max_last, lastaxis.argmax_last):
        try:
            fn(e)
        except ValueError:
            pass
        else:
            raise AssertionError("numpy refuses an empty reduction; so must this")


def test_large_sample_arrays_equal_numpy():
    rng = np.random.default_rng(7)
    a = np.round(rng.normal(size=(10_000, 3)), 1)  # rounded: many ties
    a[rng.random(a.shape) < 0.01] = np.nan
    for mine, ref in ((lastaxis.max_last, np.max), (lastaxis.min_last, np.min),
                      (lastaxis.argmax_last, np.argmax), (lastaxis.argmin_last, np.argmin)):
        _same(mine(a), ref(a, axis=-1))
