"""Fuzzing the export readers: malformed CSV, CSV.gz and Parquet files, wide and long.

Hypothesis writes whole files with the faults of unattended monthly runs (see fuzzkit.py).
Each must end in one of two ways: the file is listed as not read, with a message that names
it (and the line, where a line is at fault); or it is read and every cell of every tag is
counted, as a sample or as a bad timestamp (an independent count by Python's csv module or
pyarrow is the reference): nothing is dropped silently. Through ``screening.scan`` the pump
is then screened with every hour of the window in exactly one state, or listed as not
screened with the reason. No other exception may escape.
"""

from __future__ import annotations

import io
import tempfile
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
from fuzzkit import (
    EXPORTS,
    Outcome,
    csv_oracle,
    index_of,
    long_csv,
    long_parquet,
    parquet_oracle,
    plant_with_export,
    wide_csv,
    wide_parquet,
)
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import screening

FUZZ = settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow], database=None
)
SCAN_FUZZ = settings(
    max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow], database=None
)


def _timestamp_column(data: bytes, layout: str = "wide") -> bool:
    """Whether a Parquet file (that pyarrow reads) has a time column of a timestamp type, and,
    in the long layout, the tag and value columns it needs besides (a long file without its
    value column is named as not read, whatever its time column)."""
    try:
        schema = pq.read_schema(io.BytesIO(data))
    except (pa.ArrowException, OSError):
        return False
    if layout == "long" and not {"tag", "value"} <= set(schema.names):
        return False
    for name in ("timestamp", "time"):
        if name in schema.names and pa.types.is_timestamp(schema.field(name).type):
            return True
    return False


STRATEGIES = {
    "wide-csv": wide_csv(),
    "wide-csv-gz": wide_csv(),
    "long-csv": long_csv(),
    "wide-parquet": wide_parquet(),
    "long-parquet": long_parquet(),
}


def _check_index(kind: str, data: bytes) -> None:
    """Read every tag of one fuzzed file through ExportIndex and hold it to the oracle."""
    layout = kind.split("-")[0]
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        index = index_of(plant_with_export(folder, kind, data))
        name = EXPORTS[kind][0]
        path = str(folder / "exports" / name)
        series, problems = index.read(sorted(index.known_tags()))
        unread = {**index.file_problems, **problems}
        oracle = parquet_oracle(data, layout) if "parquet" in kind else csv_oracle(data, layout)
        if "parquet" in kind and _timestamp_column(data, layout):
            # a Parquet time column of a timestamp type (any unit, any zone) is always read
            assert path not in unread, unread.get(path)
        if path in unread:
            assert unread[path].startswith(path), unread[path]  # names the file
            return
        # a file read in full is read for a window too (the time filter of Parquet files)
        span = (
            pd.Timestamp("2026-10-01", tz="UTC").value,
            pd.Timestamp("2026-10-02", tz="UTC").value,
        )
        _, problems = index.read(sorted(index.known_tags()), span)
        assert path not in problems, problems.get(path)
        assert oracle is not None, f"{kind} file read although not readable: {data[:80]!r}"
        for tag, s in series.items():
            q = s.quality
            counted = q.samples + q.bad_timestamps
            assert counted == oracle.get(tag, 0), (tag, counted, oracle, data[:300])
            assert len(s.times) == q.samples - q.duplicates  # duplicates: one stands
            assert (s.times[1:] > s.times[:-1]).all()  # sorted, unique
            for where in q.first_problem.values():
                assert where.startswith(path)  # every first problem names the file


@FUZZ
@given(data=wide_csv())
def test_wide_csv_every_cell_counted_or_file_named(data):
    _check_index("wide-csv", data)


@FUZZ
@given(data=wide_csv())
def test_wide_csv_gz_every_cell_counted_or_file_named(data):
    _check_index("wide-csv-gz", data)


@FUZZ
@given(data=long_csv())
def test_long_csv_every_cell_counted_or_file_named(data):
    _check_index("long-csv", data)


@FUZZ
@given(data=wide_parquet())
def test_wide_parquet_every_cell_counted_or_file_named(data):
    _check_index("wide-parquet", data)


@FUZZ
@given(data=long_parquet())
def test_long_parquet_every_cell_counted_or_file_named(data):
    _check_index("long-parquet", data)


@SCAN_FUZZ
@given(kind=st.sampled_from(sorted(STRATEGIES)), data=st.data())
def test_scan_of_any_export_accounts_every_hour(kind, data):
    """Through the public API: the identity holds, or the pump is listed with its reason."""
    content = data.draw(STRATEGIES[kind], label="file")
    with tempfile.TemporaryDirectory() as tmp:
        result = screening.scan(plant_with_export(Path(tmp), kind, content))
        outcome = Outcome(result)
        outcome.check_accounting()
        outcome.check_nothing_lost({"P1"})
        if len(result.summary) == 0:
            message = result.problems["message"].iloc[0]
            assert "P1." in message or "not found" in message, message  # names the tag
