"""Tests of pipeopt._arrays: the short-axis reductions against numpy's own reductions."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from pipeopt._arrays import last_axis_max, last_axis_sum

FLOATS = st.floats(allow_nan=True, allow_infinity=True, width=64)


@pytest.mark.reference
@settings(max_examples=200, deadline=None)
@given(x=hnp.arrays(np.float64, hnp.array_shapes(min_dims=1, max_dims=4, max_side=10),
                    elements=FLOATS))
def test_short_axis_reductions_equal_numpy_bit_for_bit(x):
    # numpy's own x.sum(axis=-1) and x.max(axis=-1) (the reference: an independent library),
    # NaN and infinities included, every length of the last axis up to 10 (the helpers hand
    # lengths of 8 and more to numpy); overflow to infinity alike
    with np.errstate(all="ignore"):
        np.testing.assert_array_equal(last_axis_sum(x), x.sum(axis=-1), strict=True)
        np.testing.assert_array_equal(last_axis_max(x), x.max(axis=-1), strict=True)


@pytest.mark.reference
def test_short_axis_sum_of_a_strided_view_and_of_duty_points():
    # numpy's own sum (reference) over a non-contiguous view, and over the duty-point axis of
    # a (samples, candidates, years, duty points) array as the hydraulics forms it
    rng = np.random.default_rng(7)
    x = rng.lognormal(0.0, 3.0, (3, 40, 41, 5))
    view = x[:, ::2, :, ::2]
    for a in (x, view, np.swapaxes(x, 2, 3)):
        np.testing.assert_array_equal(last_axis_sum(a), a.sum(axis=-1))
        np.testing.assert_array_equal(last_axis_max(a), a.max(axis=-1))


def test_the_result_is_a_new_array():
    x = np.ones((4, 1))
    out = last_axis_sum(x)
    out[0] = 5.0
    assert x[0, 0] == 1.0
    out = last_axis_max(x)
    out[0] = 5.0
    assert x[0, 0] == 1.0
