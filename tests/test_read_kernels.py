"""The readers' compiled passes give exactly what their numpy forms and the general reading
path give: the same samples, the same counts and the same first places."""

from __future__ import annotations

import dataclasses
from types import SimpleNamespace

import numpy as np
import pandas as pd
from hypothesis import given, settings
from hypothesis import strategies as st

from screening.base.read_kernels import (
    long_steps,
    long_steps_numpy,
    overflow_frozen,
    overflow_frozen_numpy,
    strictly_increasing,
    strictly_increasing_numpy,
    wide_column,
    wide_column_numpy,
)
from screening.inputs.quality import frozen_samples, gap_stretches
from screening.inputs.tagdata import (
    TagQuality,
    add_chunk,
    add_numbers,
    chunk_rows,
    placed_in_order,
)

# a few distinct numbers so that runs of equal values and zeros are common
cells = st.sampled_from([np.nan, np.inf, -np.inf, 0.0, -0.0, 1.5, 2.0, 1e308])


@st.composite
def wide_columns(draw):
    """A wide file's time column (placed or not, in order or not) and one numeric column."""
    n = draw(st.integers(0, 60))
    raw = np.array(draw(st.lists(cells, min_size=n, max_size=n)), dtype=np.float64)
    steps = draw(st.lists(st.integers(-2, 3), min_size=n, max_size=n))
    times = (np.cumsum(steps) if draw(st.booleans()) else np.arange(n) * 2).astype(np.int64)
    ok = np.array(draw(st.lists(st.booleans(), min_size=n, max_size=n)), dtype=bool)
    if draw(st.booleans()):
        ok[:] = True
    rows = np.arange(n, dtype=np.int64) + draw(st.integers(0, 5))
    span = None
    if draw(st.booleans()):
        lo = draw(st.integers(-5, 20))
        span = (lo, lo + draw(st.integers(0, 60)))
    return times, ok, raw, rows, span


def _read(how, times, ok, raw, rows, span):
    quality = {"T": TagQuality("T")}
    chunks = {"T": []}
    info = SimpleNamespace(path="plant/x.parquet", source=SimpleNamespace(decimal="."))
    if how == "general":  # the reading path of any column (export_reader before add_numbers)
        present = ~np.isnan(raw)
        add_chunk(
            "T", info, raw[present], times[present], ok[present], rows[present], None, chunks,
            quality, ("good",), "row", span, None, None,
        )  # fmt: skip
    else:
        add_numbers("T", info.path, raw, times, ok, rows, chunks, quality, span, how)
    return chunks["T"], dataclasses.asdict(quality["T"])


@settings(max_examples=400, deadline=None)
@given(column=wide_columns())
def test_add_numbers_counts_as_the_general_path(column):
    times, ok, raw, rows, span = column
    expected_chunks, expected_quality = _read("general", *column)
    for ordered in {False, placed_in_order(times, ok)}:
        got_chunks, got_quality = _read(ordered, *column)
        assert got_quality == expected_quality
        assert len(got_chunks) == len(expected_chunks)
        for got, exp in zip(got_chunks, expected_chunks, strict=True):
            for a, b in zip(got[:3], exp[:3], strict=True):
                np.testing.assert_array_equal(a, b)
                assert a.dtype == b.dtype
            assert got[3][0] == exp[3][0]
            np.testing.assert_array_equal(chunk_rows(got[3]), chunk_rows(exp[3]))


@settings(max_examples=300, deadline=None)
@given(column=wide_columns())
def test_wide_column_kernel_matches_its_numpy_form(column):
    times, ok, raw, rows, span = column
    lo, hi = span if span is not None else (0, 0)
    args = (times, ok, raw, rows, np.int64(lo), np.int64(hi), span is not None)
    exp = wide_column_numpy(*args)
    for ordered in {False, placed_in_order(times, ok)}:
        got = wide_column(*args, ordered)
        assert got[0] == exp[0] and got[1] == exp[1]
        for a, b in zip(got[2:], exp[2:], strict=True):
            np.testing.assert_array_equal(a, b)


@st.composite
def usual_wide_columns(draw):
    """The usual wide file: every time placed and strictly increasing, a long column with a
    few empty cells (up to about one in ten, either side of the shorter way's limit of one in
    16), a few infinities, and a span that may cut it anywhere (or hold none of it)."""
    n = draw(st.integers(1, 3000))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    times = np.cumsum(rng.integers(1, 4, n)).astype(np.int64)
    raw = rng.normal(size=n)
    raw[rng.random(n) < draw(st.sampled_from([0.0, 0.001, 0.03, 0.0625, 0.1]))] = np.nan
    raw[rng.random(n) < draw(st.sampled_from([0.0, 0.001, 0.01]))] = np.inf
    rows = np.arange(n, dtype=np.int64) + draw(st.integers(0, 5))
    span = None
    if draw(st.booleans()):
        lo = int(times[0]) + draw(st.integers(-5, int(times[-1] - times[0]) + 5))
        span = (lo, lo + draw(st.integers(-3, int(times[-1] - times[0]) + 5)))
    return times, np.ones(n, dtype=bool), raw, rows, span


@settings(max_examples=200, deadline=None)
@given(column=usual_wide_columns())
def test_wide_column_usual_file_matches_its_numpy_form(column):
    """The shorter way for an ordered file with every time placed (bisection of the span,
    block copies between the empty cells) gives what the numpy form gives."""
    times, ok, raw, rows, span = column
    lo, hi = span if span is not None else (0, 0)
    args = (times, ok, raw, rows, np.int64(lo), np.int64(hi), span is not None)
    exp = wide_column_numpy(*args)
    got = wide_column(*args, True)
    assert got[0] == exp[0] and got[1] == exp[1]
    for a, b in zip(got[2:], exp[2:], strict=True):
        np.testing.assert_array_equal(a, b)
        assert a.dtype == b.dtype


def test_a_column_read_whole_shares_the_files_arrays():
    times = np.arange(4, dtype=np.int64)
    rows = np.arange(4, dtype=np.int64)
    raw = np.array([1.0, np.inf, 2.0, 3.0])
    chunks, quality = {"T": []}, {"T": TagQuality("T")}
    add_numbers("T", "f.parquet", raw, times, np.ones(4, bool), rows, chunks, quality, None, True)
    t, v, bad, (where, r, skipped) = chunks["T"][0]
    assert t is times and v is raw and r is rows and len(skipped) == 0
    np.testing.assert_array_equal(bad, [False, True, False, False])
    assert quality["T"].first_problem == {"missing or infinite value": "f.parquet row 1"}


@st.composite
def prepared_tags(draw):
    n = draw(st.integers(0, 50))
    values = np.array(draw(st.lists(cells, min_size=n, max_size=n)), dtype=np.float64)
    steps = draw(st.lists(st.integers(1, 4), min_size=n, max_size=n))
    times = np.cumsum(np.array(steps, dtype=np.int64))
    bad = np.array(draw(st.lists(st.booleans(), min_size=n, max_size=n)), dtype=bool)
    return times, values, bad, draw(st.integers(-3, 8))


@settings(max_examples=400, deadline=None)
@given(tag=prepared_tags(), frozen_on=st.booleans())
def test_overflow_and_frozen_in_one_pass_as_frozen_samples_has_them(tag, frozen_on):
    times, values, bad, limit = tag
    # the steps of prepare_tag before the one pass: overflow, then frozen_samples
    overflow = ~np.isfinite(values) & ~bad
    expected = bad | overflow
    frozen = np.zeros(len(values), dtype=bool)
    if frozen_on:
        frozen = frozen_samples(times, values, expected, limit) & ~expected
        expected = expected | frozen
    first = np.flatnonzero(overflow)
    counts = [overflow.sum(), first[0] if len(first) else -1, frozen.sum()]
    for kernel in (overflow_frozen, overflow_frozen_numpy):
        got, got_counts = kernel(times, values, bad, np.int64(limit), frozen_on)
        np.testing.assert_array_equal(got, expected)
        np.testing.assert_array_equal(got_counts, counts)
    np.testing.assert_array_equal(bad, tag[2])  # the input is left as it was


@settings(max_examples=300, deadline=None)
@given(
    times=st.lists(st.integers(0, 100), max_size=40).map(lambda v: np.array(sorted(v), np.int64)),
    a=st.integers(-10, 110),
    width=st.integers(0, 120),
    limit=st.integers(0, 30),
    final=st.booleans(),
)
def test_long_steps_kernel_matches_its_numpy_form(times, a, width, limit, final):
    lo, hi = np.searchsorted(times, [a, a + width])
    args = (times, int(lo), int(hi), np.int64(a - 7), np.int64(a + width), final, np.int64(limit))
    for got, exp in zip(long_steps(*args), long_steps_numpy(*args), strict=True):
        np.testing.assert_array_equal(got, exp)
        assert got.dtype == np.int64


def test_gap_stretches_worked_example():
    # one-minute samples with a 20 min hole, a 5 min stale limit, a window of one hour:
    # the gap runs from the sample at 10 min to the one at 30 min, 15 min of it without data
    minute = 60_000_000_000
    times = np.array([0, 5, 10, 30, 35, 40, 45, 50, 55], dtype=np.int64) * minute
    (begin, stop, length, missing), _ = gap_stretches(
        times, 0, 60 * minute, 0, 60 * minute, 5 * minute
    )
    assert list(begin) == [10 * minute] and list(stop) == [30 * minute]
    assert list(length) == [20 * minute] and list(missing) == [15 * minute]


@settings(max_examples=200, deadline=None)
@given(st.lists(st.integers(-5, 5), max_size=30))
def test_strictly_increasing_kernel_matches_its_numpy_form(steps):
    times = np.cumsum(np.array(steps, dtype=np.int64))
    assert strictly_increasing(times) == strictly_increasing_numpy(times)
    assert strictly_increasing(times) == bool(pd.Series(times).is_monotonic_increasing and
                                              pd.Series(times).is_unique)  # fmt: skip
