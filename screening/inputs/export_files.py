"""Export files one at a time: which format and columns a file has, reading a CSV file's
columns with the line of each row, and the time range of a Parquet file."""

from __future__ import annotations

import csv
import gzip
import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.parquet as pq

from screening.inputs.config import ExportSource
from screening.inputs.tagdata import ExportError


@dataclass(frozen=True)
class FileInfo:
    """An export file found by the index: its format, layout and the tags it holds."""

    path: Path
    source: ExportSource
    fmt: str
    tags: frozenset[str]
    timestamp_typed: bool = False  # Parquet time column of a timestamp type (filterable)
    time_range: tuple[int, int] | None = None  # [ns] from the Parquet statistics
    time_unit: str = "ns"  # unit of a typed Parquet time column (s, ms, us, ns)
    time_zone: str | None = None  # its time zone as stored


def format_of(path: Path, source: ExportSource) -> str:
    if source.format:
        return source.format
    name = path.name.lower()
    if name.endswith(".parquet") or name.endswith(".pq"):
        return "parquet"
    if name.endswith(".csv") or name.endswith(".csv.gz") or name.endswith(".txt"):
        return "csv"
    raise ExportError(f"{path}: cannot tell the format from the name; set 'format' in [[exports]]")


def csv_header(path: Path, source: ExportSource) -> list[str]:
    opener = gzip.open if path.name.lower().endswith(".gz") else open
    try:
        with opener(path, "rt", encoding=source.encoding, newline="") as fh:
            line = fh.readline()
    except UnicodeDecodeError as exc:
        raise ExportError(encoding_message(path, source.encoding)) from exc
    except (OSError, EOFError, gzip.BadGzipFile) as exc:
        raise ExportError(f"{path}: cannot be read ({exc})") from exc
    line = line.lstrip("\ufeff").rstrip("\r\n")
    if not line:
        raise ExportError(f"{path}: empty file (no header line)")
    return [c.strip().strip('"') for c in line.split(source.delimiter)]


def raw_bytes(path: Path) -> bytes:
    """The bytes of a file, uncompressed when its name ends in .gz."""
    if path.name.lower().endswith(".gz"):
        with gzip.open(path, "rb") as fh:
            return fh.read()
    return path.read_bytes()


def encoding_message(path: Path, encoding: str) -> str:
    """Where a file stops being text in ``encoding``: its first undecodable line and byte."""
    try:
        data = raw_bytes(path)
    except (OSError, EOFError, gzip.BadGzipFile) as exc:
        return f"{path}: cannot be read ({exc})"
    for number, raw in enumerate(data.split(b"\n"), start=1):
        try:
            raw.decode(encoding)
        except UnicodeDecodeError as exc:
            byte = raw[exc.start]
            return (
                f"{path} line {number}: not {encoding} text (byte 0x{byte:02x} at column "
                f"{exc.start + 1}; a Latin-1 or Windows-1252 character such as '°'?). Save "
                'the file as UTF-8, or set encoding = "latin-1" in its [[exports]] block'
            )
    return f"{path}: not {encoding} text; save it as UTF-8 or set encoding in [[exports]]"


def check_unique(path: Path, names: list[str]) -> None:
    """A column named twice is ambiguous: which of the two holds the tag?"""
    seen: dict[str, int] = {}
    for i, name in enumerate(names, start=1):
        if name in seen:
            raise ExportError(
                f"{path}: column {name!r} appears twice (columns {seen[name]} and {i}); "
                "each tag and the time must have one column"
            )
        seen[name] = i


_ASCII_LIKE = {"utf8", "utf8sig", "latin1", "iso88591", "cp1252", "windows1252", "ascii"}
_BLANK = np.zeros(256, dtype=bool)
_BLANK[[9, 13, 32]] = True  # tab, carriage return, space: pandas skips lines of only these


def record_layout(path: Path, source: ExportSource) -> tuple[np.ndarray, np.ndarray]:
    """Line number [-] and number of fields of every non-blank record of a CSV file.

    The first record is the header. Quote-free files in an ASCII-compatible encoding are
    counted with numpy; others through :mod:`csv`, which follows quoting.
    """
    data = raw_bytes(path)
    enc = source.encoding.lower().replace("-", "").replace("_", "")
    delim = source.delimiter.encode(source.encoding)
    simple = (
        enc in _ASCII_LIKE
        and len(delim) == 1
        and b'"' not in data
        and data.count(b"\r") == data.count(b"\r\n")
    )
    if simple:
        buf = np.frombuffer(data, dtype=np.uint8)
        nl = np.flatnonzero(buf == 10)
        starts = np.concatenate(([0], nl + 1))
        ends = np.concatenate((nl, [len(buf)]))
        delims = np.concatenate(([0], np.cumsum(buf == delim[0])))
        content = np.concatenate(([0], np.cumsum(~_BLANK[buf])))
        keep = content[ends] > content[starts]
        lines = np.flatnonzero(keep) + 1
        return lines, (delims[ends] - delims[starts] + 1)[keep]
    text = data.decode(source.encoding)
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=source.delimiter)
    lines, fields, line = [], [], 1
    for record in reader:
        if any(c.strip() for c in record) or len(record) > 1:
            lines.append(line)
            fields.append(len(record))
        line = reader.line_num + 1
    return np.array(lines, dtype=np.int64), np.array(fields, dtype=np.int64)


def read_csv(path: Path, source: ExportSource, columns: list[str]) -> pd.DataFrame:
    try:
        return pd.read_csv(
            path,
            usecols=lambda c: c.strip().strip('"').lstrip("\ufeff") in columns,
            index_col=False,  # never take a row with extra fields as an index
            dtype=str,
            keep_default_na=False,
            na_values=[""],
            sep=source.delimiter,
            encoding=source.encoding,
            skipinitialspace=True,
        ).rename(columns=lambda c: c.strip().strip('"').lstrip("\ufeff"))
    except UnicodeDecodeError as exc:
        raise ExportError(encoding_message(path, source.encoding)) from exc
    except (pd.errors.ParserError, OSError, EOFError, ValueError) as exc:
        raise ExportError(f"{path}: cannot be read as CSV ({exc})") from exc


def read_csv_rows(
    path: Path, source: ExportSource, columns: list[str]
) -> tuple[pd.DataFrame, np.ndarray, np.ndarray]:
    """Read CSV columns with the line number of each row and whether the row is malformed
    (more or fewer fields than the header: a truncated copy or a garbled line)."""
    frame = read_csv(path, source, columns)
    try:
        lines, fields = record_layout(path, source)
    except (csv.Error, UnicodeDecodeError, OSError, EOFError, ValueError) as exc:
        raise ExportError(f"{path}: cannot be read as CSV ({exc})") from exc
    if len(lines) != len(frame) + 1:
        raise ExportError(
            f"{path}: {len(frame)} rows read but {max(len(lines) - 1, 0)} data lines "
            "counted; check the quoting and the line endings of the file"
        )
    malformed = fields[1:] != fields[0]
    return frame, lines[1:], malformed


def parquet_time_range(path: Path, column: str) -> tuple[int, int] | None:
    """First and last time [ns, UTC] of a Parquet file from its statistics, if it has them."""
    meta = pq.ParquetFile(path).metadata
    idx = meta.schema.to_arrow_schema().get_field_index(column)
    lo = hi = None
    for i in range(meta.num_row_groups):
        stats = meta.row_group(i).column(idx).statistics
        if stats is None or not stats.has_min_max:
            return None
        a, b = pd.Timestamp(stats.min), pd.Timestamp(stats.max)
        if a.tzinfo is None:
            a, b = a.tz_localize("UTC"), b.tz_localize("UTC")
        lo = a.value if lo is None else min(lo, a.value)
        hi = b.value if hi is None else max(hi, b.value)
    return None if lo is None else (lo, hi)
