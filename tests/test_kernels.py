"""The compiled hold kernel gives exactly what numpy's searchsorted gives."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from screening.kernels import last_index, last_index_numpy

sorted_unique = st.lists(st.integers(-(10**12), 10**12), max_size=200).map(
    lambda v: np.unique(np.array(v, dtype=np.int64))
)
sorted_any = st.lists(st.integers(-(10**12), 10**12), max_size=200).map(
    lambda v: np.sort(np.array(v, dtype=np.int64))
)


@settings(max_examples=300, deadline=None)
@given(times=sorted_unique, grid=sorted_any)
def test_last_index_matches_searchsorted(times, grid):
    np.testing.assert_array_equal(last_index(times, grid), last_index_numpy(times, grid))


def test_grid_points_equal_to_samples_take_that_sample():
    times = np.array([10, 20, 30], dtype=np.int64)
    grid = np.array([5, 10, 19, 20, 30, 99], dtype=np.int64)
    np.testing.assert_array_equal(last_index(times, grid), [-1, 0, 0, 1, 2, 2])
