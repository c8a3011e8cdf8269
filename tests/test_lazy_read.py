"""A lazy read (``ExportIndex.read(..., lazy=True)``, the scan's batches) gives every tag the
series, counts and first places of the eager read: the same samples in the same order, the
same quality figures, and the same tags present or absent."""

from __future__ import annotations

import dataclasses
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from fuzzkit import index_of, plant_with_export, wide_parquet
from hypothesis import HealthCheck, given, settings
from plantmaker import make_plant

from screening.inputs.export_reader import LazySeries

SPANS = [None, (pd.Timestamp("2026-10-01", tz="UTC").value,
                pd.Timestamp("2026-10-01 12:00", tz="UTC").value)]  # fmt: skip


def _same(eager, lazy) -> None:
    assert isinstance(lazy, LazySeries)
    assert sorted(lazy) == sorted(eager)
    assert len(lazy) == len(eager)
    for tag, want in eager.items():
        got = lazy[tag]
        for f in dataclasses.fields(want):
            a, b = getattr(got, f.name), getattr(want, f.name)
            if isinstance(b, np.ndarray):
                np.testing.assert_array_equal(a, b)
                assert a.dtype == b.dtype
            elif f.name == "quality":
                assert dataclasses.asdict(a) == dataclasses.asdict(b)
            else:
                assert a == b


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow],
          database=None)  # fmt: skip
@given(data=wide_parquet())
def test_lazy_read_of_any_wide_parquet_file_is_the_eager_read(data):
    with tempfile.TemporaryDirectory() as tmp:
        index = index_of(plant_with_export(Path(tmp), "wide-parquet", data))
        tags = sorted(index.known_tags())
        for span in SPANS:
            eager, eager_problems = index.read(tags, span)
            lazy, lazy_problems = index.read(tags, span, lazy=True)
            assert lazy_problems == eager_problems
            _same(eager, lazy)


def _aware(minutes) -> pa.Array:
    times = [pd.Timestamp("2026-10-01", tz="UTC") + pd.Timedelta(minutes=m) for m in minutes]
    return pa.array(times, pa.timestamp("ms", tz="UTC"))


@pytest.fixture
def three_files(tmp_path):
    """P1.PS in two Parquet files with times in both (duplicates), P1.TT as numbers in one
    and as text in the other, P1.FT in a Parquet file and a CSV file; P1.RUN in one."""
    path = make_plant(tmp_path, wide={})
    text = path.read_text()
    start, end = text.index("[[exports]]"), text.index("[policy]")
    blocks = ('[[exports]]\nfiles = "exports/*.parquet"\nlayout = "wide"\n\n'
              '[[exports]]\nfiles = "exports/*.csv"\nlayout = "wide"\n\n')  # fmt: skip
    path.write_text(text[:start] + blocks + text[end:])
    nan = float("nan")
    a = pa.table({
        "timestamp": _aware(range(0, 60)),
        "P1.PS": pa.array([1.0e5 + i if i % 7 else nan for i in range(60)]),
        "P1.TT": pa.array([300.0 + i % 3 for i in range(60)]),
        "P1.FT": pa.array([0.01 * i if i != 5 else float("inf") for i in range(60)]),
        "P1.RUN": pa.array([1.0] * 60),
    })  # fmt: skip
    b = pa.table({
        "timestamp": _aware(range(50, 90)),
        "P1.PS": pa.array([2.0e5 + i for i in range(40)]),
        "P1.TT": pa.array(["warm" if i == 3 else str(301.0 + i) for i in range(40)]),
    })  # fmt: skip
    pq.write_table(a, tmp_path / "exports" / "a.parquet")
    pq.write_table(b, tmp_path / "exports" / "b.parquet")
    (tmp_path / "exports" / "c.csv").write_text(
        "timestamp,P1.FT\n2026-10-01 01:30:00+00:00,0.5\n2026-10-01 00:10:00+00:00,0.4\n"
    )
    return index_of(path)


def test_lazy_read_of_tags_over_several_files_is_the_eager_read(three_files):
    index = three_files
    tags = sorted(index.known_tags())
    assert tags == ["P1.FT", "P1.PS", "P1.RUN", "P1.TT"]
    for span in SPANS:
        eager, problems = index.read(tags, span)
        # 50 to 59 min in both files, but for 56 min (empty in a.parquet)
        assert eager["P1.PS"].quality.duplicates == 9
        lazy, lazy_problems = index.read(tags, span, lazy=True)
        assert lazy_problems == problems
        # the tags held only in wide Parquet files with numbers wait to be made
        assert set(lazy.pending) == {"P1.PS", "P1.RUN"}
        _same(eager, lazy)
        assert not lazy.pending


def test_forgotten_tags_are_dropped_made_or_not(three_files):
    index = three_files
    lazy, _ = index.read(["P1.PS", "P1.RUN", "P1.FT"], None, lazy=True)
    first = lazy["P1.PS"]
    assert lazy["P1.PS"] is first  # made once, then kept
    lazy.forget(["P1.PS", "P1.RUN"])
    assert sorted(lazy) == ["P1.FT"] and "P1.PS" not in lazy and lazy.get("P1.RUN") is None
    with pytest.raises(KeyError, match="P1.PS"):
        lazy["P1.PS"]


def test_a_file_that_fails_leaves_the_lazy_read_as_the_eager_one(three_files, tmp_path):
    # the footer intact (the file is indexed), the column data damaged (its read fails)
    b = tmp_path / "exports" / "b.parquet"
    data = bytearray(b.read_bytes())
    data[8:200] = bytes(range(192))
    b.write_bytes(bytes(data))
    index = index_of(tmp_path / "plant.toml")
    assert not index.file_problems
    tags = sorted(index.known_tags())
    eager, problems = index.read(tags, None)
    lazy, lazy_problems = index.read(tags, None, lazy=True)
    assert lazy_problems == problems and str(tmp_path / "exports" / "b.parquet") in str(problems)
    _same(eager, lazy)


def test_a_file_failing_after_an_empty_column_leaves_its_tag_out_in_both(tmp_path, monkeypatch):
    """A tag whose only file fails is absent from an eager read unless the file gave it
    samples before failing; the lazy read must not keep it for a column not yet made."""
    from screening.inputs import export_reader
    from screening.inputs.tagdata import ExportError

    path = make_plant(tmp_path, wide={})
    text = path.read_text()
    start, end = text.index("[[exports]]"), text.index("[policy]")
    block = '[[exports]]\nfiles = "exports/*.parquet"\nlayout = "wide"\n\n'
    path.write_text(text[:start] + block + text[end:])
    table = pa.table({
        "timestamp": _aware(range(10)),
        "P1.PS": pa.array([float("nan")] * 10),
        "P1.TT": pa.array(["a"] * 10),
    })  # fmt: skip
    pq.write_table(table, tmp_path / "exports" / "a.parquet")

    def fails(*args, **kwargs):
        raise ExportError("a text column that cannot be read")

    monkeypatch.setattr(export_reader, "add_chunk", fails)
    index = index_of(path)
    eager, problems = index.read(["P1.PS", "P1.TT"], None)
    assert "cannot be read" in str(problems) and "P1.PS" not in eager
    lazy, _ = index.read(["P1.PS", "P1.TT"], None, lazy=True)
    _same(eager, lazy)


def test_a_column_gone_since_the_file_was_indexed_names_the_file(three_files, tmp_path):
    """The file reader leaves out a column a file lacks; a wide file replaced since it was
    indexed, without a tag's column, is named as not read rather than read without it."""
    index = three_files
    a = tmp_path / "exports" / "a.parquet"
    pq.write_table(pq.read_table(a).drop_columns(["P1.RUN"]), a)
    for lazy in (False, True):
        series, problems = index.read(["P1.PS", "P1.RUN"], None, lazy=lazy)
        assert "no column P1.RUN" in problems[str(a)], problems
        assert problems[str(a)].startswith(str(a))
