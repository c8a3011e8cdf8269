"""Malformed historian exports, registers and plant files for the fuzz and corpus tests.

Everything here is invented. The hypothesis strategies build whole files (bytes) with the
faults met in unattended monthly runs: truncated copies, wrong delimiters and encodings,
empty files, headers only, text and non-finite numbers, absurd magnitudes, timestamps in
several layouts and zones, duplicated and reversed rows, Parquet files of a wrong schema.

The oracles count, independently of the loader (Python's :mod:`csv` and pyarrow instead of
pandas), how many cells of each tag a file holds, so a test can check that every one of
them was counted as a sample or as a bad timestamp: nothing dropped silently.
"""

from __future__ import annotations

import csv
import gzip
import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
from hypothesis import strategies as st
from plantmaker import make_plant

import screening
from screening.inputs.loader import ExportIndex

TAGS = ("P1.PS", "P1.TT", "P1.FT", "P1.RUN")
START = pd.Timestamp("2026-10-01")  # the plantmaker window: 2026-10-01 to 2026-10-02, UTC
WINDOW_H = 24.0

# --- text cells ------------------------------------------------------------------------------

#: Timestamp layouts: (name, function of a naive UTC time -> text).
TIME_LAYOUTS = {
    "iso": lambda t: t.strftime("%Y-%m-%d %H:%M:%S"),
    "iso_t": lambda t: t.strftime("%Y-%m-%dT%H:%M"),
    "zulu": lambda t: t.strftime("%Y-%m-%dT%H:%M:%SZ"),
    "plus2": lambda t: (t + pd.Timedelta(hours=2)).strftime("%Y-%m-%dT%H:%M:%S+02:00"),
    "minus5": lambda t: (t - pd.Timedelta(hours=5)).strftime("%Y-%m-%d %H:%M:%S-0500"),
    "dotted": lambda t: t.strftime("%d.%m.%Y %H:%M"),
    "slashed": lambda t: t.strftime("%m/%d/%Y %H:%M"),
    "utc_word": lambda t: t.strftime("%Y-%m-%d %H:%M UTC"),
    "zone_name": lambda t: t.strftime("%Y-%m-%d %H:%M CET"),
    "date_only": lambda t: t.strftime("%Y-%m-%d"),
    "epoch": lambda t: str(int(t.timestamp())),
    "garbage": lambda t: "not-a-time",
    "empty": lambda t: "",
    "far_future": lambda t: "9999-12-31 00:00",
    "far_past": lambda t: "0001-01-01 00:00",
}

_WORDS = [
    "", " ", "inf", "-inf", "Infinity", "nan", "NaN", "1e400", "-1e400", "1e308", "-1e308",
    "Bad", "sensor-lost", "I/O Timeout", "20 °C", "  12.5  ", "=1+2", "@SUM(A1)", "+1", "-0",
    "0x1F", "1_000", "<script>alert(1)</script>", "\x00", "NULL", "true", "1e-320",
]  # fmt: skip

cell_values = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(-(10**20), 10**20).map(str),
    st.floats(-1e3, 1e3).map(lambda v: f"{v:.3f}"),
    st.sampled_from(_WORDS),
)


@st.composite
def csv_rows(draw, columns: int, max_rows: int = 25):
    """Rows of a CSV export: (minute from the window start, layout, cells)."""
    n = draw(st.integers(0, max_rows))
    rows = []
    for _ in range(n):
        minute = draw(st.integers(-30, 1500))
        layout = draw(st.sampled_from(sorted(TIME_LAYOUTS)))
        cells = draw(st.lists(cell_values, min_size=columns, max_size=columns))
        rows.append((minute, layout, cells))
    order = draw(st.sampled_from(["as drawn", "sorted", "reversed"]))
    if order != "as drawn":
        rows.sort(key=lambda r: r[0], reverse=order == "reversed")
    if rows and draw(st.booleans()):  # duplicated rows, as a historian writes on a retry
        picks = draw(st.lists(st.integers(0, len(rows) - 1), max_size=4))
        rows += [rows[i] for i in picks]
    return rows


@st.composite
def damage(draw, data: bytes) -> bytes:
    """Damage the bytes of a text file the ways a hand edit or a half copy does."""
    kind = draw(
        st.sampled_from(["none", "none", "truncate", "semicolons", "stray comma", "blank lines"])
    )
    if kind == "truncate" and data:
        return data[: draw(st.integers(0, len(data)))]
    if kind == "semicolons":
        return data.replace(b",", b";")
    if kind == "stray comma" and b"\n" in data:
        lines = data.split(b"\n")
        i = draw(st.integers(0, len(lines) - 1))
        lines[i] = lines[i] + b",1,2"
        return b"\n".join(lines)
    if kind == "blank lines":
        return data.replace(b"\n", b"\n\n   \n", 2)
    return data


@st.composite
def encode(draw, text: str) -> bytes:
    """Text as bytes: UTF-8, UTF-8 with a byte-order mark, or Latin-1 (where it can be)."""
    how = draw(st.sampled_from(["utf-8", "utf-8-sig", "latin-1", "crlf"]))
    if how == "crlf":
        return text.replace("\n", "\r\n").encode("utf-8")
    return text.encode(how, errors="replace")


@st.composite
def wide_csv(draw) -> bytes:
    """A wide export: timestamp and one column per tag (some tags missing or renamed)."""
    header = ["timestamp", *draw(st.permutations(TAGS))]
    if draw(st.booleans()):
        header[-1] = draw(st.sampled_from(["P1.TT °C", "P1.PS", "", "OTHER.TAG", "P1.FT"]))
    rows = draw(csv_rows(len(header) - 1))
    lines = [",".join(header)]
    for minute, layout, cells in rows:
        t = TIME_LAYOUTS[layout](START + pd.Timedelta(minutes=minute))
        lines.append(",".join([t, *cells]))
    data = draw(encode("\n".join(lines) + "\n"))
    return draw(damage(data))


@st.composite
def long_csv(draw) -> bytes:
    """A long export: tag, time, value, quality."""
    n = draw(st.integers(0, 40))
    lines = ["tag,time,value,quality"]
    tags = st.one_of(st.sampled_from(TAGS), st.sampled_from(["", " P1.TT ", "OTHER", "p1.ps"]))
    for _ in range(n):
        tag = draw(tags)
        minute = draw(st.integers(-30, 1500))
        t = TIME_LAYOUTS[draw(st.sampled_from(sorted(TIME_LAYOUTS)))](
            START + pd.Timedelta(minutes=minute)
        )
        quality = draw(st.sampled_from(["ok", "OK", "bad", "", "Substituted"]))
        lines.append(f"{tag},{t},{draw(cell_values)},{quality}")
    if n and draw(st.booleans()):
        lines = [lines[0], *lines[:0:-1]]  # reversed rows
    data = draw(encode("\n".join(lines) + "\n"))
    return draw(damage(data))


# --- Parquet ---------------------------------------------------------------------------------

_TIME_KINDS = (
    ["aware"] * 3 + ["naive", "string"] * 2 + ["int", "float", "null", "absent", "other tz"]
)
_VALUE_KINDS = ["float", "float", "int", "string", "bool", "binary", "null", "list", "absent"]


def _time_array(kind: str, minutes: list[int]) -> pa.Array | None:
    times = [START + pd.Timedelta(minutes=m) for m in minutes]
    if kind == "aware":
        return pa.array([t.tz_localize("UTC") for t in times], pa.timestamp("us", tz="UTC"))
    if kind == "other tz":
        return pa.array(
            [t.tz_localize("UTC") for t in times], pa.timestamp("ms", tz="Asia/Kolkata")
        )
    if kind == "naive":
        return pa.array(times, pa.timestamp("ns"))
    if kind == "string":
        return pa.array([t.strftime("%Y-%m-%d %H:%M:%S") for t in times])
    if kind == "int":
        return pa.array([int(t.timestamp()) for t in times])
    if kind == "float":
        return pa.array([t.timestamp() / 3600.0 for t in times])
    if kind == "null":
        return pa.nulls(len(times), pa.timestamp("ns", tz="UTC"))
    return None


@st.composite
def _value_array(draw, kind: str, n: int) -> pa.Array | None:
    if kind == "absent":
        return None
    if kind == "null":
        return pa.nulls(n, pa.float64())
    if kind == "float":
        return pa.array(
            draw(st.lists(st.one_of(st.none(), st.floats()), min_size=n, max_size=n)),
            pa.float64(),
        )
    if kind == "int":
        ints = st.one_of(st.none(), st.integers(-(2**63), 2**63 - 1))
        return pa.array(draw(st.lists(ints, min_size=n, max_size=n)), pa.int64())
    if kind == "string":
        texts = st.one_of(st.none(), cell_values)
        return pa.array(draw(st.lists(texts, min_size=n, max_size=n)), pa.string())
    if kind == "bool":
        flags = st.one_of(st.none(), st.booleans())
        return pa.array(draw(st.lists(flags, min_size=n, max_size=n)), pa.bool_())
    if kind == "binary":
        return pa.array(draw(st.lists(st.binary(max_size=4), min_size=n, max_size=n)))
    return pa.array([[1.0, 2.0]] * n, pa.list_(pa.float64()))


@st.composite
def wide_parquet(draw) -> bytes:
    """A wide Parquet export with a time column and tag columns of any type."""
    minutes = draw(st.lists(st.integers(-30, 1500), max_size=25))
    if minutes and draw(st.booleans()):
        minutes = sorted(minutes, reverse=draw(st.booleans()))
    columns, names = [], []
    time_col = _time_array(draw(st.sampled_from(_TIME_KINDS)), minutes)
    if time_col is not None:
        columns.append(time_col)
        names.append("timestamp")
    for tag in TAGS:
        col = draw(_value_array(draw(st.sampled_from(_VALUE_KINDS)), len(minutes)))
        if col is not None:
            columns.append(col)
            names.append(tag)
    if not columns:
        columns, names = [pa.array([1.0] * len(minutes))], ["unrelated"]
    return draw(_parquet_bytes(pa.Table.from_arrays(columns, names=names)))


@st.composite
def long_parquet(draw) -> bytes:
    """A long Parquet export: tag, time, value (of any type), optional quality."""
    n = draw(st.integers(0, 40))
    tag_kind = draw(st.sampled_from(["string", "string", "with nulls", "int", "dictionary"]))
    tags = draw(st.lists(st.sampled_from([*TAGS, "OTHER"]), min_size=n, max_size=n))
    if tag_kind == "with nulls":
        tag_col = pa.array([None if i % 3 == 0 else t for i, t in enumerate(tags)], pa.string())
    elif tag_kind == "int":
        tag_col = pa.array([TAGS.index(t) if t in TAGS else 99 for t in tags])
    elif tag_kind == "dictionary":
        tag_col = pa.array(tags, pa.string()).dictionary_encode()
    else:
        tag_col = pa.array(tags, pa.string())
    minutes = draw(st.lists(st.integers(-30, 1500), min_size=n, max_size=n))
    time_col = _time_array(draw(st.sampled_from(_TIME_KINDS)), minutes)
    value_col = draw(_value_array(draw(st.sampled_from(_VALUE_KINDS)), n))
    columns, names = [tag_col], ["tag"]
    for name, col in (("time", time_col), ("value", value_col)):
        if col is not None:
            columns.append(col)
            names.append(name)
    columns.append(pa.array(draw(st.lists(st.sampled_from(["ok", "bad", None]), min_size=n,
                                          max_size=n)), pa.string()))  # fmt: skip
    names.append("quality")
    return draw(_parquet_bytes(pa.Table.from_arrays(columns, names=names)))


@st.composite
def _parquet_bytes(draw, table: pa.Table) -> bytes:
    sink = io.BytesIO()
    pq.write_table(table, sink)
    data = sink.getvalue()
    kind = draw(st.sampled_from(["none", "none", "none", "truncate", "junk", "empty"]))
    if kind == "truncate":
        return data[: draw(st.integers(0, len(data)))]
    if kind == "junk":
        return b"PAR1" + draw(st.binary(max_size=64)) + b"PAR1"
    if kind == "empty":
        return b""
    return data


# --- files in a plant ------------------------------------------------------------------------

#: [[exports]] blocks per kind of export: (file name, block).
EXPORTS = {
    "wide-csv": ("a.csv", 'files = "exports/a.csv"\nlayout = "wide"\n'),
    "wide-csv-gz": ("a.csv.gz", 'files = "exports/a.csv.gz"\nlayout = "wide"\n'),
    "long-csv": (
        "a.csv",
        'files = "exports/a.csv"\nlayout = "long"\ntime_column = "time"\n'
        'quality_column = "quality"\n',
    ),
    "wide-parquet": ("a.parquet", 'files = "exports/a.parquet"\nlayout = "wide"\n'),
    "long-parquet": (
        "a.parquet",
        'files = "exports/a.parquet"\nlayout = "long"\ntime_column = "time"\n'
        'quality_column = "quality"\n',
    ),
}


def plant_with_export(folder: Path, kind: str, data: bytes, rows: list[str] | None = None):
    """A one-pump invented plant (plantmaker) whose only export is ``data``; its path."""
    path = make_plant(folder, wide={}, rows=rows)
    name, block = EXPORTS[kind]
    text = path.read_text()
    start = text.index("[[exports]]")
    end = text.index("[policy]")
    path.write_text(text[:start] + "[[exports]]\n" + block + "\n" + text[end:])
    if kind == "wide-csv-gz":
        data = gzip.compress(data)
    (folder / "exports" / name).write_bytes(data)
    return path


def csv_oracle(data: bytes, layout: str) -> dict[str, int] | None:
    """Cells per tag of a CSV export by :mod:`csv`; None where the file is not readable text.

    Wide: a non-empty cell counts, and so does every tag's cell of a row with a wrong number
    of fields. Long: every row whose tag (stripped) is the tag counts.
    """
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        return None
    records = [
        r
        for r in csv.reader(io.StringIO(text.lstrip("\ufeff"), newline=""))
        if any(c.strip() for c in r) or len(r) > 1
    ]
    if not records:
        return None
    header = [c.strip() for c in records[0]]
    counts: dict[str, int] = {}
    if layout == "wide":
        for i, name in enumerate(header):
            if name == "timestamp" or header.count(name) > 1:
                continue
            counts[name] = sum(
                1 for r in records[1:] if len(r) != len(header) or r[i].strip() != ""
            )
    else:
        for r in records[1:]:
            counts[r[0].strip()] = counts.get(r[0].strip(), 0) + 1
    return counts


def parquet_oracle(data: bytes, layout: str) -> dict[str, int] | None:
    """Cells per tag of a Parquet export by pyarrow (non-null, and not NaN for floats)."""
    try:
        table = pq.read_table(io.BytesIO(data))
    except (pa.ArrowException, OSError):
        return None
    counts: dict[str, int] = {}
    if layout == "wide":
        for name in table.column_names:
            col = table.column(name)
            present = np.asarray(col.is_valid().to_numpy(zero_copy_only=False), dtype=bool)
            if pa.types.is_floating(col.type):
                values = col.to_numpy(zero_copy_only=False)
                present &= ~np.isnan(values.astype(np.float64))
            counts[name] = int(present.sum())
    elif "tag" in table.column_names:
        for tag in table.column("tag").to_pylist():
            if tag is not None:
                counts[str(tag)] = counts.get(str(tag), 0) + 1
    return counts


@dataclass
class Outcome:
    """What a scan of a fuzzed plant gave, checked for the invariants of issue 8."""

    result: screening.ScanResult

    def screened(self) -> set[str]:
        """Pumps screened (an empty summary of a scan that screened none has no columns)."""
        summary = self.result.summary
        return set(summary["pump_id"]) if len(summary) else set()

    def check_accounting(self) -> None:
        """Every screened pump: hours of each kind of state add up to the window."""
        r = self.result
        for pid in self.screened():
            by_kind = r.hours[r.hours.pump_id == pid].groupby("kind")["hours"].sum()
            assert set(by_kind.index) == {"margin", "region"}
            np.testing.assert_allclose(by_kind.to_numpy(), r.window_hours, rtol=1e-12)
            daily = r.daily[r.daily.pump_id == pid].groupby("kind")["hours"].sum()
            np.testing.assert_allclose(daily.to_numpy(), r.window_hours, rtol=1e-12)

    def check_nothing_lost(self, pumps: set[str]) -> None:
        """Every pump is either screened or listed with its reason; unread files named."""
        r = self.result
        screened = self.screened()
        listed = set(r.problems["pump_id"])
        assert screened | listed == pumps, (screened, listed)
        assert not screened & listed
        for message in r.problems["message"]:
            assert message.strip()
        for file, message in zip(r.file_problems["file"], r.file_problems["message"],
                                 strict=True):  # fmt: skip
            assert message.startswith(file) or file in message or "pattern" in message


def index_of(plant_path: Path) -> ExportIndex:
    """The export index of a plant file."""
    plant = screening.load_plant(plant_path)
    return ExportIndex(plant.settings, plant.base)
