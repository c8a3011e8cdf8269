"""The compiled kernels give exactly what their numpy forms (or scipy) give."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

sorted_unique = st.lists(st.integers(-(10**12), 10**12), max_size=200).map(
    lambda v: np.unique(np.array(v, dtype=np.int64))
)
sorted_any = st.lists(st.integers(-(10**12), 10**12), max_size=200).map(
    lambda v: np.sort(np.array(v, dtype=np.int64))
)


def test_grid_points_equal_to_samples_take_that_sample():
    from screening.base.kernels import hold

    times = np.array([10, 20, 30], dtype=np.int64)
    grid = np.array([5, 10, 19, 20, 30, 99], dtype=np.int64)
    values = np.array([1.0, 2.0, 3.0])
    value, _, until = hold(times, values, np.zeros(3, bool), grid, np.int64(5), np.int64(-1))
    np.testing.assert_array_equal(value, [np.nan, 1.0, 1.0, 2.0, 3.0, 3.0])
    np.testing.assert_array_equal(until, [-1, 15, 15, 25, 35, 35])


@settings(max_examples=100, deadline=None)
@given(
    q=st.lists(st.one_of(st.floats(-1.0, 12.0), st.just(np.nan)), min_size=1, max_size=100),
)
def test_pchip_kernel_matches_scipy(q):
    # scipy's PchipInterpolator is the reference implementation of the curve
    from scipy.interpolate import PchipInterpolator

    from screening.base.kernels import pchip_eval, pchip_eval_numpy

    x = np.array([1.0, 2.0, 4.0, 7.0, 10.0])
    y = np.array([2.0, 2.1, 2.6, 4.0, 7.5])
    p = PchipInterpolator(x, y, extrapolate=False)
    q = np.array(q)
    expected = np.where((q >= 1.0) & (q <= 10.0), p(q), np.nan)
    c = np.ascontiguousarray(p.c)
    np.testing.assert_allclose(pchip_eval(x, c, q), expected, rtol=1e-13, equal_nan=True)
    np.testing.assert_allclose(pchip_eval_numpy(x, c, q), expected, rtol=1e-13, equal_nan=True)


def test_table_kernel_matches_numpy_form():
    from screening.base.kernels import table_eval, table_eval_numpy

    rng = np.random.default_rng(7)  # fixed random state
    ln_pv = np.log(np.linspace(600.0, 9e4, 101))
    rho = np.linspace(1000.0, 950.0, 101)
    t = np.concatenate([rng.uniform(270.0, 380.0, 1000), [273.0, 373.0, np.nan]])
    a = table_eval(t, 273.0, 373.0, 1.0, ln_pv, rho)
    b = table_eval_numpy(t, 273.0, 373.0, 1.0, ln_pv, rho)
    for x, y in zip(a, b, strict=True):
        np.testing.assert_allclose(x, y, rtol=1e-14, equal_nan=True)


@settings(max_examples=200, deadline=None)
@given(times=sorted_unique, grid=sorted_any, stale=st.integers(0, 10**9))
def test_hold_matches_numpy(times, grid, stale):
    from screening.base.kernels import hold, hold_numpy

    rng = np.random.default_rng(len(times))  # fixed random state per case
    values = rng.normal(size=len(times))
    bad = rng.random(len(times)) < 0.3
    never = np.int64(-(2**60))
    for a, b in zip(
        hold(times, values, bad, grid, np.int64(stale), never),
        hold_numpy(times, values, bad, grid, stale, never),
        strict=True,
    ):
        np.testing.assert_array_equal(a, b)


def test_bucket_min_max_matches_numpy():
    from screening.base.kernels import bucket_min_max, bucket_min_max_numpy

    rng = np.random.default_rng(5)  # fixed random state
    values = rng.normal(size=(3, 500))
    values[rng.random((3, 500)) < 0.2] = np.nan
    values[:, 100:140] = np.nan  # a whole bucket without values
    starts = np.array([0, 7, 100, 140, 141, 300], dtype=np.int64)
    for a, b in zip(
        bucket_min_max(values, starts), bucket_min_max_numpy(values, starts), strict=True
    ):
        np.testing.assert_array_equal(a, b)


@settings(max_examples=200, deadline=None)
@given(times=sorted_unique, grid=sorted_any, stale=st.integers(0, 10**9), into=st.booleans(),
       inplace=st.booleans())  # fmt: skip
def test_hold_fold_matches_numpy(times, grid, stale, into, inplace):
    from screening.base.kernels import hold_fold, hold_fold_numpy, hold_numpy

    rng = np.random.default_rng(len(times) + 3 * len(grid))  # fixed random state per case
    values = rng.normal(size=len(times))
    bad = rng.random(len(times)) < 0.3
    never = np.int64(-(2**60))
    n = len(grid) if into else 0
    in_bad = rng.random(n) < 0.2
    in_until = rng.integers(-(10**9), 10**9, n)
    expected = hold_fold_numpy(times, values, bad, grid, stale, never, in_bad, in_until, False)
    got = hold_fold(times, values, bad, grid, np.int64(stale), never, in_bad.copy(),
                    in_until.copy(), inplace)  # fmt: skip
    for a, b in zip(got, expected, strict=True):
        np.testing.assert_array_equal(a, b)
    # a later tag folds into the folded flags in place: they must not be the tag's own
    assert not np.shares_memory(got[1], got[2])
    # the tag's own flags are hold's; folded into nothing, the fold is the tag's own
    own = hold_numpy(times, values, bad, grid, stale, never)
    np.testing.assert_array_equal(got[1], own[1])
    if not into:
        np.testing.assert_array_equal(got[3], own[2])
    # in place (the compiled form): the arrays folded into are the ones returned
    if into and inplace and n and hold_fold is not hold_fold_numpy:
        flags, until = in_bad.copy(), in_until.copy()
        out = hold_fold(times, values, bad, grid, np.int64(stale), never, flags, until, True)
        assert np.shares_memory(out[2], flags) and np.shares_memory(out[3], until)


@settings(max_examples=100, deadline=None)
@given(
    source=st.lists(st.integers(-(2**62), 2**62), max_size=40),
    extra=st.integers(0, 5),
    writable=st.booleans(),
)
def test_copy_into_matches_slice_assignment(source, extra, writable):
    """The compiled copy (a loop numba vectorises) writes what slice assignment writes, and
    nothing past the source's length."""
    from screening.base.kernels import copy_into, copy_into_numpy

    src = np.array(source, dtype=np.int64)
    src.setflags(write=writable)  # Arrow lends read-only arrays
    got = np.full(len(src) + extra, -7, dtype=np.int64)
    expected = got.copy()
    copy_into(src, got)
    copy_into_numpy(src, expected)
    np.testing.assert_array_equal(got, expected)
    assert (got[len(src) :] == -7).all()
