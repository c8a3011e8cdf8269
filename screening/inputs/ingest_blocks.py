"""One export file read for ``ingest`` a block of rows at a time, as dataset rows.

A block is at most :data:`BLOCK_CELLS` cells (rows times columns read), so memory is bounded
by the block whatever the file holds: a Parquet file is read in record batches
(``ParquetFile.iter_batches``) with each row numbered from the file's first row, a CSV file in
blocks of lines (:func:`screening.inputs.export_files.read_csv_blocks`, with the same line
numbers and malformed rows as when it is read whole). What needs the whole file is carried
from block to block: the clock times of the repeated hour already met (a text time without an
offset on the day clocks go back, :class:`screening.inputs.timestamps.RepeatedHour`) and, in
:class:`FileNotes`, the counts and the first place of each kind of problem, so that a file
read in blocks gives exactly the dataset rows and notes of the file read whole. Day-month
dates are read only in the order the ``[[exports]]`` block declares (nothing is inferred from
the file's values), so they need no whole-file pass.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from screening.inputs.export_files import FileInfo, long_columns, read_csv_blocks
from screening.inputs.tagdata import ExportError, as_text
from screening.inputs.timestamps import RepeatedHour, parse_times

#: Cells (rows x columns read) per block of an export file read by ``ingest``: about 0.5 M,
#: some 20 MB of dataset rows in memory at a time.
BLOCK_CELLS = 1 << 19

#: The kinds of problem noted, in the order a file's notes are made.
KINDS = (
    "no tag",
    "bad timestamp",
    "text value",
    "row with a wrong number of fields",
    "missing or infinite value",
    "bad quality",
)


@dataclass
class Rows:
    """One block of dataset rows: ``codes`` index ``tags`` (the tag of each row)."""

    tags: list[str]
    codes: np.ndarray  # int32
    times: np.ndarray  # int64 [ns, UTC], 0 where not ok
    ok: np.ndarray
    values: np.ndarray  # float64 [tag unit]
    text: np.ndarray  # object: the text of a value that is not a number, else None
    quality: np.ndarray | None  # object: quality words as written
    rows: np.ndarray  # int64: row (from 0) or line of the file
    malformed: np.ndarray
    by_tag: bool = True  # rows ordered tag by tag (a wide file), else in file order (long)

    def keys(self) -> np.ndarray:
        """Keys of :meth:`FileNotes.add`: the tag index of a wide file's rows, else 0."""
        return self.codes if self.by_tag else np.zeros(len(self.codes), dtype=np.int32)

    def take(self, keep: np.ndarray) -> Rows:
        q = self.quality[keep] if self.quality is not None else None
        return Rows(self.tags, self.codes[keep], self.times[keep], self.ok[keep],
                    self.values[keep], self.text[keep], q, self.rows[keep],
                    self.malformed[keep], self.by_tag)  # fmt: skip


@dataclass
class FileNotes:
    """Counts and first places of each kind of problem met in one file, over its blocks.

    A wide file's rows are ordered tag by tag (tags sorted), so its first place of a kind is
    the first row of the first tag (in that order) that has it; a long file's is its first
    row. ``first`` keeps, per kind, the first row met for each key (tag index of a wide file,
    0 for a long one); blocks come in file order, so the first met is the first in the file.
    """

    counts: dict[str, int] = field(default_factory=dict)
    first: dict[str, dict[int, int]] = field(default_factory=dict)
    outside_window: int = 0

    def add(self, kind: str, mask: np.ndarray, keys: np.ndarray, rows: np.ndarray) -> None:
        """Count the rows of ``mask``; remember each key's first row."""
        at = np.flatnonzero(mask)
        if not len(at):
            return
        self.counts[kind] = self.counts.get(kind, 0) + len(at)
        found, pos = np.unique(keys[at], return_index=True)
        mine = self.first.setdefault(kind, {})
        for key, p in zip(found.tolist(), pos.tolist(), strict=True):
            mine.setdefault(int(key), int(rows[at[p]]))

    def places(self) -> list[tuple[str, int, int]]:
        """(kind, count, first row or line) in the order the notes are made."""
        return [
            (kind, self.counts[kind], self.first[kind][min(self.first[kind])])
            for kind in KINDS
            if self.counts.get(kind)
        ]


def block_rows(columns: int) -> int:
    """Rows per block for a file read with ``columns`` columns [-]."""
    return max(1, BLOCK_CELLS // max(1, columns))


def file_blocks(index, info: FileInfo, notes: FileNotes) -> tuple[Iterator[Rows], str]:
    """The blocks of dataset rows of one export file, in file order, and the label of its
    rows (``row`` or ``line``). ``index`` is the plant's ``ExportIndex`` (time zone, good
    quality words); ``notes`` gathers the rows without a tag of a long file."""
    label = "row" if info.fmt == "parquet" else "line"
    if info.source.layout == "wide":
        return _wide_blocks(index, info), label
    return _long_blocks(index, info, notes), label


def _raw_blocks(info: FileInfo, columns: list[str]) -> Iterator[tuple[pd.DataFrame, ...]]:
    """(frame, rows, malformed) of each block of the file's ``columns``."""
    size = block_rows(len(columns))
    if info.fmt != "parquet":
        yield from read_csv_blocks(info.path, info.source, columns, size)
        return
    offset = 0
    try:
        # without pre-buffering: with it, the reader keeps every row group it has read
        # (measured: 360 MB more over a pump-year of one-second data)
        pf = pq.ParquetFile(info.path, pre_buffer=False)
        for batch in pf.iter_batches(batch_size=size, columns=columns):
            n = batch.num_rows
            table = pa.Table.from_batches([batch])
            rows = np.arange(offset, offset + n, dtype=np.int64)
            offset += n
            yield table, rows, np.zeros(n, dtype=bool)
    except (pa.ArrowException, OSError) as exc:
        raise ExportError(f"{info.path}: cannot be read ({exc})") from exc


def _wide_blocks(index, info: FileInfo) -> Iterator[Rows]:
    """A wide file melted to rows: one per non-empty cell (an empty cell is not a sample)."""
    src = info.source
    tags = sorted(info.tags)
    repeated = RepeatedHour()
    for raw, rows, malformed in _raw_blocks(info, [src.time_column, *tags]):
        if info.fmt == "parquet" and info.timestamp_typed:  # as the loader's fast path
            col = raw.column(src.time_column).cast(pa.timestamp("ns", tz="UTC"))
            ok = np.asarray(col.is_valid().to_numpy(zero_copy_only=False), dtype=bool)
            times = col.cast(pa.int64()).fill_null(0).to_numpy(zero_copy_only=False)
            frame = raw.drop_columns([src.time_column]).to_pandas()
        else:
            frame = raw.to_pandas() if info.fmt == "parquet" else raw
            times, ok = parse_times(
                frame[src.time_column], index.timezone, None, src.date_order, repeated=repeated
            )
        yield _melt(frame, tags, times, ok, rows, malformed, src.decimal)


def _melt(frame, tags, times, ok, rows, malformed, decimal: str) -> Rows:
    """One block of a wide file as rows, tag by tag."""
    parts: dict[str, list] = {k: [] for k in ("codes", "t", "ok", "v", "x", "r", "m")}
    for i, tag in enumerate(tags):
        raw = frame[tag]
        present = raw.notna().to_numpy() | malformed  # a malformed row: a bad sample of each tag
        values, text = _numbers(raw[present], decimal, malformed[present])
        parts["codes"].append(np.full(int(present.sum()), i, dtype=np.int32))
        parts["t"].append(times[present])
        parts["ok"].append(ok[present])
        parts["v"].append(values)
        parts["x"].append(text)
        parts["r"].append(rows[present])
        parts["m"].append(malformed[present])
    cat = {k: np.concatenate(v) if v else np.zeros(0) for k, v in parts.items()}
    return Rows(tags, cat["codes"].astype(np.int32), cat["t"].astype(np.int64),
                cat["ok"].astype(bool), cat["v"].astype(np.float64), cat["x"].astype(object),
                None, cat["r"].astype(np.int64), cat["m"].astype(bool))  # fmt: skip


def _long_blocks(index, info: FileInfo, notes: FileNotes) -> Iterator[Rows]:
    """A long file's rows; a row without a tag is counted, and not kept."""
    src = info.source
    repeated = RepeatedHour()
    for raw, rows, malformed in _raw_blocks(info, long_columns(src)):
        if info.fmt == "parquet":
            frame = raw.to_pandas()
            tag = frame[src.tag_column].astype("string")
        else:
            frame = raw
            tag = frame[src.tag_column].astype("string").str.strip()
        has_tag = (tag.notna() & (tag != "")).fillna(False).to_numpy(dtype=bool)
        if not has_tag.all():
            notes.add("no tag", ~has_tag, np.zeros(len(rows), np.int32), rows)
            frame, rows, tag = frame[has_tag].reset_index(drop=True), rows[has_tag], tag[has_tag]
            malformed = malformed[has_tag]
        tag = tag.reset_index(drop=True)
        times, ok = parse_times(
            frame[src.time_column], index.timezone, tag, src.date_order, repeated=repeated
        )
        values, text = _numbers(frame[src.value_column], src.decimal, malformed)
        qual = frame[src.quality_column].to_numpy(dtype=object) if src.quality_column else None
        codes, names = pd.factorize(tag.to_numpy(dtype=object))
        yield Rows(list(names), codes.astype(np.int32), times, ok, values, text, qual, rows,
                   malformed, by_tag=False)  # fmt: skip


def _numbers(raw: pd.Series, decimal: str, malformed: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Numbers [tag unit] and, where a value is not a number, its text (as the loader reads:
    booleans are 1 and 0; the cell of a malformed row is not a text value)."""
    if raw.dtype.kind in "fiub":
        values = raw.to_numpy(dtype=np.float64, na_value=np.nan)
        return values, np.full(len(values), None, dtype=object)
    try:
        text = raw.astype("string").str.strip()
    except (UnicodeDecodeError, TypeError, ValueError):
        text = pd.Series([as_text(v) for v in raw], dtype="string").str.strip()
    if decimal != ".":
        text = text.str.replace(decimal, ".", regex=False)
    values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=np.float64, na_value=np.nan)
    is_text = np.isnan(values) & text.notna().to_numpy() & ~malformed
    words = np.full(len(values), None, dtype=object)
    words[is_text] = text[is_text].to_numpy(dtype=object)
    return values, words
