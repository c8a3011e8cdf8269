"""Export files one at a time: which format and columns a file has, reading a CSV file's
columns with the line of each row, and the time range of a Parquet file."""

from __future__ import annotations

import codecs
import csv
import gzip
import io
import stat
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
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


def not_regular(path: Path) -> str | None:
    """Why ``path`` is not read when it is not a regular file (a named pipe, a device, a
    socket or a folder: reading a pipe or a device could wait forever), else None."""
    try:
        mode = path.stat().st_mode
    except OSError as exc:
        return f"{path}: cannot be read ({exc.strerror or exc})"
    if stat.S_ISREG(mode):
        return None
    kinds = (
        (stat.S_ISDIR, "a folder"), (stat.S_ISFIFO, "a named pipe"),
        (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
        (stat.S_ISSOCK, "a socket"),
    )  # fmt: skip
    kind = next((word for test, word in kinds if test(mode)), "not a regular file")
    return f"{path}: {kind}, not a regular file; not read"


def long_columns(source: ExportSource) -> list[str]:
    """The columns of a long-layout file that are read: tag, time, value and the optional
    quality."""
    cols = [source.tag_column, source.time_column, source.value_column]
    return cols + [source.quality_column] if source.quality_column else cols


def format_of(path: Path, source: ExportSource) -> str:
    if source.format:
        return source.format
    name = path.name.lower()
    if name.endswith(".parquet") or name.endswith(".pq"):
        return "parquet"
    if name.endswith(".csv") or name.endswith(".csv.gz") or name.endswith(".txt"):
        return "csv"
    raise ExportError(f"{path}: cannot tell the format from the name; set 'format' in [[exports]]")


#: Longest line of a CSV export that is read [bytes]. A longer line (a real export line is far
#: shorter: a wide row of 2000 tags is about 30 kB) is bad data, counted, and never held in
#: memory whole.
MAX_LINE = 1 << 20

#: Bytes read at a time while a CSV file's lines are counted (memory stays bounded by this,
#: not by the file).
_BLOCK = 1 << 21

_GZIP_MAGIC = b"\x1f\x8b"
_UTF16_BOMS = {b"\xff\xfe": "UTF-16 (little-endian)", b"\xfe\xff": "UTF-16 (big-endian)"}


def open_binary(path: Path):
    """The file's bytes as a stream, uncompressed when its name ends in .gz."""
    return gzip.open(path, "rb") if path.name.lower().endswith(".gz") else open(path, "rb")


def size_limit(source: ExportSource) -> int:
    """The largest CSV file read for ``source`` [bytes, uncompressed]."""
    return int(source.max_csv_mb * 1e6)


def _what_it_is(path: Path, source: ExportSource) -> str | None:
    """A message when the file's first bytes say it is not text in ``source.encoding``:
    UTF-16 with a byte-order mark, or gzip data in a file whose name does not end in .gz."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(4)
    except OSError:
        return None
    enc = source.encoding.lower().replace("-", "").replace("_", "")
    if head[:2] in _UTF16_BOMS and not enc.startswith("utf16"):
        return (
            f"{path}: {_UTF16_BOMS[head[:2]]} text (it begins with the byte-order mark "
            f'{head[0]:02X} {head[1]:02X}); save it as UTF-8, or set encoding = "utf-16" in '
            "its [[exports]] block"
        )
    if head[:2] == _GZIP_MAGIC and not path.name.lower().endswith(".gz"):
        return (
            f"{path}: gzip-compressed data in a file whose name does not end in .gz; rename it "
            f"{path.name}.gz (or uncompress it)"
        )
    return None


def csv_header(path: Path, source: ExportSource) -> list[str]:
    """The column names of a CSV file's first line (at most :data:`MAX_LINE` long)."""
    what = _what_it_is(path, source)
    if what:
        raise ExportError(what)
    try:
        if not path.name.lower().endswith(".gz") and path.stat().st_size > size_limit(source):
            raise _too_large(path, source)  # compressed files are measured as they are read
    except OSError as exc:
        raise ExportError(f"{path}: cannot be read ({exc})") from exc
    opener = gzip.open if path.name.lower().endswith(".gz") else open
    try:
        with opener(path, "rt", encoding=source.encoding, newline="") as fh:
            line = fh.readline(MAX_LINE + 1)
    except UnicodeDecodeError as exc:
        raise ExportError(encoding_message(path, source.encoding)) from exc
    except (OSError, EOFError, gzip.BadGzipFile) as exc:
        raise ExportError(f"{path}: cannot be read ({exc})") from exc
    if len(line) > MAX_LINE:
        raise ExportError(
            f"{path} line 1: the header is longer than {MAX_LINE // 1024} KiB (no line break); "
            "not a CSV export"
        )
    if "\x00" in line:
        raise ExportError(f"{path} line 1: the header holds NUL bytes; not a CSV export")
    line = line.lstrip("\ufeff").rstrip("\r\n")
    if not line:
        raise ExportError(f"{path}: empty file (no header line)")
    return [c.strip().strip('"') for c in line.split(source.delimiter)]


def encoding_message(path: Path, encoding: str) -> str:
    """Where a file stops being text in ``encoding``: its first undecodable line and byte
    (read a block at a time), or what the file is when its first bytes say so."""
    source = ExportSource(layout="wide", files="-", encoding=encoding)
    what = _what_it_is(path, source)
    if what:
        return what
    try:
        decoder = codecs.getincrementaldecoder(encoding)()
    except LookupError:
        return f"{path}: {encoding!r} is not an encoding Python knows; set encoding in [[exports]]"
    number = 1
    try:
        with open_binary(path) as fh:
            while True:
                raw = fh.readline(MAX_LINE)
                if not raw:
                    break
                try:
                    decoder.decode(raw)
                except UnicodeDecodeError as exc:
                    byte = raw[min(exc.start, len(raw) - 1)]
                    return (
                        f"{path} line {number}: not {encoding} text (byte 0x{byte:02x} at column "
                        f"{exc.start + 1}; a Latin-1 or Windows-1252 character such as '°'?). "
                        'Save the file as UTF-8, or set encoding = "latin-1" in its [[exports]] '
                        "block"
                    )
                number += raw.endswith(b"\n")
    except (OSError, EOFError, gzip.BadGzipFile) as exc:
        return f"{path}: cannot be read ({exc})"
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


def record_layout(path: Path, source: ExportSource) -> tuple[np.ndarray, ...]:
    """Line number [-], number of fields, badness and length of every non-blank record of a
    CSV file.

    The first record is the header. A record is bad when it holds NUL bytes (the zeros of a
    sparse or preallocated file) or is longer than :data:`MAX_LINE` (the fourth array): a bad
    record is a malformed row, and a long one is not read at all. The file is read a block at
    a time, so memory is bounded by the block and the number of lines, whatever the file
    holds. Quote-free files in an ASCII-compatible encoding are counted with numpy; others
    through :mod:`csv`, which follows quoting.

    Raises
    ------
    ExportError
        The file is larger than ``max_csv_mb`` of its ``[[exports]]`` block, or (quoted or
        not ASCII-compatible) has a line longer than :data:`MAX_LINE`.
    """
    enc = source.encoding.lower().replace("-", "").replace("_", "")
    delim = source.delimiter.encode(source.encoding)
    if enc in _ASCII_LIKE and len(delim) == 1:
        with open_binary(path) as fh:
            found = _simple_layout(fh, path, source, delim[0])
        if found is not None:
            return found
    return _csv_layout(path, source)


def _too_large(path: Path, source: ExportSource) -> ExportError:
    return ExportError(
        f"{path}: larger than {source.max_csv_mb:g} MB (uncompressed), the limit of its "
        "[[exports]] block (max_csv_mb); not read. Split the export, convert it to Parquet, or "
        "raise max_csv_mb if the machine's memory allows"
    )


def _simple_layout(fh, path: Path, source: ExportSource, delim: int):
    """:func:`record_layout` of a quote-free file, a block at a time with numpy; None when
    the file turns out to hold quotes or lone carriage returns (the csv module's work)."""
    lines_out, fields_out, bad_out, long_out = [], [], [], []
    line, total, limit = 1, 0, size_limit(source)
    open_d = open_c = open_z = open_len = 0  # the line still open at the end of a block
    last = b""
    while True:
        block = fh.read(_BLOCK)
        if not block:
            break
        total += len(block)
        if total > limit:
            raise _too_large(path, source)
        if b'"' in block:
            return None
        both = last + block  # a CR at the end of the last block may pair with this LF
        if both.count(b"\r") != both.count(b"\r\n") + (both.endswith(b"\r")):
            return None
        last = block[-1:]
        buf = np.frombuffer(block, dtype=np.uint8)
        nl = np.flatnonzero(buf == 10)
        starts = np.concatenate(([0], nl + 1))
        ends = np.concatenate((nl, [len(buf)]))
        counts = []
        for mask in (buf == delim, ~_BLANK[buf], buf == 0):
            c = np.concatenate(([0], np.cumsum(mask, dtype=np.int64)))
            counts.append(c[ends] - c[starts])
        d, c, z = counts
        length = ends - starts
        d[0] += open_d
        c[0] += open_c
        z[0] += open_z
        length[0] += open_len
        done = len(nl)  # segments ended by a line feed
        keep = c[:done] > 0
        lines_out.append(line + np.flatnonzero(keep))
        fields_out.append(d[:done][keep] + 1)
        bad_out.append((z[:done] > 0)[keep])
        long_out.append((length[:done] > MAX_LINE)[keep])
        line += done
        open_d, open_c, open_z, open_len = int(d[-1]), int(c[-1]), int(z[-1]), int(length[-1])
    if open_c > 0:  # a last line without a line feed
        lines_out.append(np.array([line]))
        fields_out.append(np.array([open_d + 1]))
        bad_out.append(np.array([open_z > 0]))
        long_out.append(np.array([open_len > MAX_LINE]))
    if not lines_out:
        return np.zeros(0, np.int64), np.zeros(0, np.int64), np.zeros(0, bool), np.zeros(0, bool)
    long = np.concatenate(long_out).astype(bool)
    return (
        np.concatenate(lines_out).astype(np.int64),
        np.concatenate(fields_out).astype(np.int64),
        np.concatenate(bad_out).astype(bool) | long,
        long,
    )


def _csv_layout(path: Path, source: ExportSource):
    """:func:`record_layout` through the csv module (quotes, other encodings), streamed."""
    limit = size_limit(source)
    lines, fields, bad, line = [], [], [], 1
    with open_binary(path) as raw:
        text = io.TextIOWrapper(raw, encoding=source.encoding, newline="")

        def pieces():
            number = 1
            while True:
                piece = text.readline(MAX_LINE + 1)
                if not piece:
                    return
                if len(piece) > MAX_LINE:
                    raise ExportError(
                        f"{path} line {number}: longer than {MAX_LINE // 1024} KiB; not read"
                    )
                if raw.tell() > limit:
                    raise _too_large(path, source)
                number += 1
                yield piece

        reader = csv.reader(pieces(), delimiter=source.delimiter)
        for record in reader:
            if any(c.strip() for c in record) or len(record) > 1:
                lines.append(line)
                fields.append(len(record))
                bad.append(any("\x00" in c for c in record))
            line = reader.line_num + 1
    return (
        np.array(lines, dtype=np.int64),
        np.array(fields, dtype=np.int64),
        np.array(bad, dtype=bool),
        np.zeros(len(lines), dtype=bool),  # a long line stopped the reading (above)
    )


def _csv_options(source: ExportSource, columns: list[str], skip: set[int] | None) -> dict:
    return dict(
        skiprows=skip or None,
        usecols=lambda c: c.strip().strip('"').lstrip("\ufeff") in columns,
        index_col=False,  # never take a row with extra fields as an index
        dtype=str,
        keep_default_na=False,
        na_values=[""],
        sep=source.delimiter,
        encoding=source.encoding,
        skipinitialspace=True,
    )


def _clean_names(frame: pd.DataFrame) -> pd.DataFrame:
    return frame.rename(columns=lambda c: c.strip().strip('"').lstrip("\ufeff"))


def read_csv(
    path: Path, source: ExportSource, columns: list[str], skip: set[int] | None = None
) -> pd.DataFrame:
    """The ``columns`` of a CSV file as text, leaving out the lines in ``skip`` (0-based line
    indices; the bad lines :func:`record_layout` found)."""
    try:
        return _clean_names(pd.read_csv(path, **_csv_options(source, columns, skip)))
    except UnicodeDecodeError as exc:
        raise ExportError(encoding_message(path, source.encoding)) from exc
    except (pd.errors.ParserError, OSError, EOFError, ValueError) as exc:
        raise ExportError(f"{path}: cannot be read as CSV ({exc})") from exc


def _checked_layout(path: Path, source: ExportSource):
    """:func:`record_layout` with its errors as :class:`ExportError` and the header checked."""
    try:
        lines, fields, bad, long = record_layout(path, source)
    except UnicodeDecodeError as exc:
        raise ExportError(encoding_message(path, source.encoding)) from exc
    except ExportError:
        raise
    except (csv.Error, OSError, EOFError, ValueError) as exc:
        raise ExportError(f"{path}: cannot be read as CSV ({exc})") from exc
    if len(lines) and bad[0]:
        raise ExportError(f"{path} line {lines[0]}: the header is not text; not a CSV export")
    return lines, fields, bad, long


def _count_mismatch(path: Path, read: int, good: np.ndarray) -> ExportError:
    return ExportError(
        f"{path}: {read} rows read but {int(good.sum())} data lines "
        "counted; check the quoting and the line endings of the file"
    )


def read_csv_rows(
    path: Path, source: ExportSource, columns: list[str]
) -> tuple[pd.DataFrame, np.ndarray, np.ndarray]:
    """Read CSV columns with the line number of each row and whether the row is malformed
    (more or fewer fields than the header: a truncated copy or a garbled line; or a line
    holding NUL bytes; a line longer than :data:`MAX_LINE` is not read and comes back as an
    empty malformed row). Memory is bounded by the rows read, never by a long line."""
    lines, fields, bad, long = _checked_layout(path, source)
    skip = {int(n) - 1 for n in lines[long]}
    frame = read_csv(path, source, columns, skip)
    good = ~long[1:]
    if int(good.sum()) != len(frame):
        raise _count_mismatch(path, len(frame), good)
    if skip:
        # the bad lines come back as empty rows flagged malformed: counted, never dropped
        frame = frame.set_axis(np.flatnonzero(good)).reindex(np.arange(len(good)))
    malformed = (fields[1:] != fields[0]) | bad[1:]
    return frame, lines[1:], malformed


def read_csv_blocks(path: Path, source: ExportSource, columns: list[str], block_rows: int):
    """:func:`read_csv_rows` a block of about ``block_rows`` data rows at a time, in file
    order: yields (frame, lines, malformed) whose concatenation is exactly what
    :func:`read_csv_rows` returns, so memory is bounded by the block, not by the file.

    Raises
    ------
    ExportError
        As :func:`read_csv_rows`; a count mismatch is raised after the last block.
    """
    lines, fields, bad, long = _checked_layout(path, source)
    skip = {int(n) - 1 for n in lines[long]}
    good = ~long[1:]
    where = np.flatnonzero(good)  # position among the data lines of each row read
    malformed = (fields[1:] != fields[0]) | bad[1:]
    lines = lines[1:]
    read, done = 0, 0  # rows read; data lines given out
    opts = _csv_options(source, columns, skip)
    try:
        with pd.read_csv(path, chunksize=max(1, int(block_rows)), **opts) as reader:
            for chunk in reader:
                frame = _clean_names(chunk)
                a, read = read, read + len(frame)
                if read > len(where) or not len(frame):
                    continue  # counted; the mismatch is raised at the end
                end = int(where[read - 1]) + 1
                if skip:  # the long lines of this stretch as empty malformed rows
                    frame = frame.set_axis(where[a:read]).reindex(np.arange(done, end))
                frame = frame.set_axis(np.arange(end - done))
                yield frame, lines[done:end], malformed[done:end]
                done = end
    except UnicodeDecodeError as exc:
        raise ExportError(encoding_message(path, source.encoding)) from exc
    except (pd.errors.ParserError, OSError, EOFError, ValueError) as exc:
        raise ExportError(f"{path}: cannot be read as CSV ({exc})") from exc
    if read != len(where):
        raise _count_mismatch(path, read, good)
    if done < len(good):  # long lines after the last row read
        names = frame_columns(path, source, columns)
        tail = pd.DataFrame(np.nan, index=np.arange(len(good) - done), columns=names)
        tail = tail.astype(object)
        yield tail, lines[done:], malformed[done:]


def frame_columns(path: Path, source: ExportSource, columns: list[str]) -> list[str]:
    """Which of ``columns`` the CSV file's header holds."""
    return [c for c in csv_header(path, source) if c in columns]


def parquet_time_range(path: Path, column: str, meta=None) -> tuple[int, int] | None:
    """First and last time [ns, UTC] of a Parquet file from its statistics, if it has them
    (``meta``: the file's metadata when it is open already)."""
    meta = pq.ParquetFile(path).metadata if meta is None else meta
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


def read_whole(path: Path, columns: list[str]) -> pa.Table:
    """These columns of every row of a Parquet file, by the file reader alone.

    ``pq.read_table`` goes through Arrow's dataset layer, which a read without a filter does
    not need; its first use in a process imports it (about 10 ms after pandas, again in every
    forked worker of the scan). The file reader leaves out a column the file lacks (a file
    replaced since it was indexed) where the dataset layer refused it: refused here too.

    Raises
    ------
    KeyError
        A column not in the file (named)."""
    wanted = list(dict.fromkeys(columns))
    table = pq.ParquetFile(path).read(columns=wanted)
    present = set(table.column_names)  # pyarrow builds that list anew on every access
    missing = [c for c in wanted if c not in present]
    if missing:
        raise KeyError(f"no column {', '.join(missing)}")
    return table


def read_parquet_rows(info: FileInfo, columns: list[str], span, tags=None):
    """The rows of a Parquet file with a time-zone-aware time column whose time is in
    ``span`` [ns] (None: every row; rows without a time are then kept), and of ``tags`` when
    given (a long file's tag column): only the row groups whose time statistics overlap the
    span are read. Returns the table and each row's number in the file (from 0), so that a
    problem is named at the same row however the file is cut in time (a pump screened in
    time chunks, :mod:`screening.engine.chunked`)."""
    src = info.source
    pf = pq.ParquetFile(info.path)
    meta = pf.metadata
    at = meta.schema.to_arrow_schema().get_field_index(src.time_column)
    groups, numbers, offset = [], [], 0
    for i in range(meta.num_row_groups):
        n = meta.row_group(i).num_rows
        if span is None or _overlaps(meta.row_group(i).column(at).statistics, span):
            groups.append(i)
            numbers.append(np.arange(offset, offset + n))
        offset += n
    table = pf.read_row_groups(groups, columns=columns)
    rows = np.concatenate(numbers) if numbers else np.zeros(0, dtype=np.int64)
    keep = None
    if span is not None:
        t = table.column(src.time_column).cast(pa.timestamp("ns", tz="UTC")).cast(pa.int64())
        keep = pc.and_(pc.greater_equal(t, span[0]), pc.less(t, span[1]))
    if tags is not None:
        wanted = pc.is_in(table.column(src.tag_column), value_set=pa.array(list(tags)))
        keep = wanted if keep is None else pc.and_(keep, wanted)
    if keep is not None:
        keep = pc.fill_null(keep, False)
        table = table.filter(keep)
        rows = rows[keep.to_numpy(zero_copy_only=False)]
    return table, rows


def _overlaps(stats, span) -> bool:
    """Whether a row group's time statistics may hold a time in ``span`` [ns]."""
    if stats is None or not stats.has_min_max:
        return True
    lo, hi = pd.Timestamp(stats.min), pd.Timestamp(stats.max)
    if lo.tzinfo is None:
        lo, hi = lo.tz_localize("UTC"), hi.tz_localize("UTC")
    return hi.value >= span[0] and lo.value < span[1]
