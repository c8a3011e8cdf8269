"""The columnar dataset written by ``pumpscreen ingest`` and read back by the loader.

Layout (version 1)::

    <dataset>/manifest.json
    <dataset>/<folder>/month=YYYY-MM/part-0.parquet     samples of that UTC month
    <dataset>/<folder>/month=unplaced/part-0.parquet    rows whose timestamp could not be placed

``<folder>`` is ``pump=<safe id>`` for the tags of a pump (a tag shared by several pumps is kept
once, with the first pump of the register that uses it), ``site`` for the site barometer and
``other`` for tags no pump uses. The manifest maps every tag to its folder.

Each part is Parquet (zstd), sorted by tag, then time, source and row (each tag's series
is one run in time order), with the columns

- ``time`` timestamp [ns, UTC] (null in ``month=unplaced``), ``tag`` string,
- ``value`` float64: the number read (NaN for a text value),
- ``text`` string: the text of a value that is not a number (null otherwise),
- ``quality`` string: the quality word, stripped and lower case (null when empty or absent),
- ``source`` int32: index of the export file in the manifest's ``sources``,
- ``row`` int64: the row (Parquet, from 0) or line (CSV) in that file,
- ``malformed`` bool: a CSV row with more or fewer fields than the header (a bad sample).

Judging the samples (good quality words, non-finite numbers, duplicates, out-of-order rows) is
left to read time, exactly as for the raw exports, so a changed ``good_quality`` applies without
ingesting again and every problem is still named by its original file and row.
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from screening.inputs.tagdata import count_part, count_samples

LAYOUT_VERSION = 1
MANIFEST = "manifest.json"
UNPLACED = "unplaced"
SITE_FOLDER = "site"
OTHER_FOLDER = "other"
COLUMNS = ("time", "tag", "value", "text", "quality", "source", "row", "malformed")
SCHEMA = pa.schema(
    [
        ("time", pa.timestamp("ns", tz="UTC")),
        ("tag", pa.string()),
        ("value", pa.float64()),
        ("text", pa.string()),
        ("quality", pa.string()),
        ("source", pa.int32()),
        ("row", pa.int64()),
        ("malformed", pa.bool_()),
    ]
)
_FOLDER = re.compile(r"^(pump=[A-Za-z0-9._-]+|site|other)$")
_MONTH = re.compile(r"^month=(\d{4}-\d{2}|unplaced)$")


class DatasetError(ValueError):
    """A dataset folder that cannot be used; the message names the folder or file."""


def month_name(month: np.datetime64) -> str:
    """Folder name of a month (``month=YYYY-MM``)."""
    return f"month={np.datetime_as_string(month, unit='M')}"


@dataclass(frozen=True)
class Dataset:
    """An opened dataset: its root folder and what its manifest says.

    Attributes
    ----------
    root : Path
    tags : dict
        tag -> folder name.
    sources : list of dict
        The export files ingested (``path``, ``label``, ``bytes``, ``sha256``, ...).
    kept : (int or None, int or None)
        Times kept [ns since epoch, UTC]: from (inclusive), to (exclusive); None: unbounded.
    files_not_read : dict
        Export files that could not be read at ingest: path -> message.
    tag_files : dict
        tag -> the export files it was ingested from, in the loader's order.
    """

    root: Path
    tags: dict[str, str]
    sources: list[dict]
    kept: tuple[int | None, int | None]
    files_not_read: dict[str, str]
    tag_files: dict[str, list[Path]]

    def folders(self) -> dict[str, list[str]]:
        """Folder name -> the tags kept there."""
        out: dict[str, list[str]] = {}
        for tag, folder in self.tags.items():
            out.setdefault(folder, []).append(tag)
        return out


def open_dataset(root: str | Path) -> Dataset:
    """Read and check a dataset's manifest.

    Parameters
    ----------
    root : str or Path
        The dataset folder.

    Raises
    ------
    DatasetError
        No manifest, another layout version, or a folder name that would leave the dataset.
    """
    root = Path(root)
    path = root / MANIFEST
    try:
        manifest = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise DatasetError(
            f"{root}: not a dataset (no {MANIFEST}); write one with 'pumpscreen ingest'"
        ) from None
    except (OSError, ValueError) as exc:
        raise DatasetError(f"{path}: cannot be read as JSON ({exc})") from exc
    version = manifest.get("layout_version") if isinstance(manifest, dict) else None
    if version != LAYOUT_VERSION:
        raise DatasetError(
            f"{path}: layout_version {version!r}, this pumpscreen reads version "
            f"{LAYOUT_VERSION}; ingest the exports again"
        )
    try:
        tags = {str(t): str(f) for t, f in manifest["tags"].items()}
        sources = list(manifest["sources"])
        kept = manifest["window"]["kept_from_ns"], manifest["window"]["kept_to_ns"]
        not_read = {str(k): str(v) for k, v in manifest.get("files_not_read", {}).items()}
        tag_files: dict[str, list[Path]] = {}
        for src in sources:
            for tag in src["tags"]:
                tag_files.setdefault(str(tag), []).append(Path(src["path"]))
    except (KeyError, TypeError, AttributeError) as exc:
        raise DatasetError(f"{path}: incomplete manifest (missing {exc})") from None
    for folder in set(tags.values()):
        if not _FOLDER.match(folder):
            raise DatasetError(f"{path}: folder name {folder!r} is not one this layout writes")
    return Dataset(root, tags, sources, kept, not_read, tag_files)


def partitions(folder: Path, span: tuple[int, int] | None) -> list[tuple[Path, bool]]:
    """Part files of a folder whose month overlaps ``span``, and whether each is unplaced."""
    out = []
    if not folder.is_dir():
        raise DatasetError(f"{folder}: folder named in the manifest is missing")
    for sub in sorted(folder.iterdir()):
        m = _MONTH.match(sub.name)
        if not m or not sub.is_dir():
            continue
        unplaced = m.group(1) == UNPLACED
        if not unplaced and span is not None:
            lo = np.datetime64(m.group(1), "M")
            first = lo.astype("datetime64[ns]").astype(np.int64)
            after = (lo + 1).astype("datetime64[ns]").astype(np.int64)
            if after <= span[0] or first >= span[1]:
                continue  # the month is outside the span: not opened
        out += [(p, unplaced) for p in sorted(sub.glob("part-*.parquet"))]
    return out


def read_rows(ds: Dataset, folder: str, tags: list[str], span: tuple[int, int] | None) -> pa.Table:
    """The rows of ``tags`` in one folder, reading only the months that overlap ``span``.

    Parameters
    ----------
    ds : Dataset
    folder : str
        Folder name (``pump=...``, ``site`` or ``other``).
    tags : list of str
    span : (int, int), optional
        [ns since epoch, UTC], end exclusive; rows of unplaced times are always read.

    Raises
    ------
    DatasetError
        The span reaches outside the times kept at ingest, or a part cannot be read.
    """
    if span is not None:
        lo, hi = ds.kept
        if (lo is not None and span[0] < lo) or (hi is not None and span[1] > hi):
            raise DatasetError(
                f"{ds.root}: the dataset keeps {_iso(lo)} to {_iso(hi)}, the scan needs "
                f"{_iso(span[0])} to {_iso(span[1])} (window and look-back); ingest again "
                "with a wider window"
            )
    target = (ds.root / folder).resolve()
    if not target.is_relative_to(ds.root.resolve()):
        raise DatasetError(f"{ds.root}: folder {folder!r} leaves the dataset")
    tables = []
    for path, unplaced in partitions(ds.root / folder, span):
        filters = [("tag", "in", list(tags))]
        if span is not None and not unplaced:
            t = pa.timestamp("ns", tz="UTC")
            filters += [("time", ">=", pa.scalar(span[0], t)), ("time", "<", pa.scalar(span[1], t))]
        try:
            tables.append(pq.read_table(path, columns=list(COLUMNS), filters=filters))
        except (pa.ArrowException, OSError) as exc:
            raise DatasetError(f"{path}: cannot be read ({exc})") from exc
    if not tables:
        return SCHEMA.empty_table()
    return pa.concat_tables([t.cast(SCHEMA) for t in tables])


def _iso(ns: int | None) -> str:
    return "(open)" if ns is None else pd.Timestamp(ns, tz="UTC").isoformat()


def add_chunks(
    ds: Dataset,
    table: pa.Table,
    tags: list[str],
    chunks: dict,
    quality: dict,
    good: set[str],
    status_words: dict[str, dict[str, float]] | None = None,
    count: tuple[int, int] | None = None,
    unplaced: bool = True,
) -> None:
    """Turn a folder's rows into the loader's per-file chunks and quality counts.

    Mirrors what the loader does with the raw files: one chunk per tag and export file, in the
    order of the files and of the rows within each file, with the same counts and the first
    place of each problem named by the original file and row.

    Parameters
    ----------
    ds : Dataset
    table : pyarrow.Table
        Rows from :func:`read_rows`.
    tags : list of str
    chunks : dict
        tag -> list of (times [ns, UTC], values [tag unit], bad flags), appended to.
    quality : dict
        tag -> TagQuality, updated.
    good : set of str
        Quality words (lower case) meaning good.
    status_words : dict, optional
        tag -> run-status words and their values (1 running, 0 stopped), for run tags.
    count : (int, int), optional
        Count only the samples in this span [ns] (a time chunk's own part, see
        :func:`screening.inputs.tagdata.add_chunk`); ``unplaced``: count the rows without a
        placeable time (in the first chunk only).
    """
    status_words = status_words or {}
    if table.num_rows == 0:
        return
    time = table.column("time").cast(pa.int64())
    ok = pc.is_valid(time).to_numpy(zero_copy_only=False)
    times = pc.fill_null(time, 0).to_numpy(zero_copy_only=False)
    tag_codes = table.column("tag").combine_chunks().dictionary_encode()
    codes = tag_codes.indices.to_numpy(zero_copy_only=False)
    names = tag_codes.dictionary.to_pylist()
    values = table.column("value").to_numpy(zero_copy_only=False)
    text_col = table.column("text")
    is_text = pc.is_valid(text_col).to_numpy(zero_copy_only=False)
    text = text_col.to_numpy(zero_copy_only=False)
    qual = table.column("quality")
    good_words = pa.array(sorted(good), pa.string())
    bad_q = pc.and_(pc.is_valid(qual), pc.invert(pc.fill_null(pc.is_in(qual, good_words), False)))
    bad_q = bad_q.to_numpy(zero_copy_only=False)
    source = table.column("source").to_numpy(zero_copy_only=False)
    rows = table.column("row").to_numpy(zero_copy_only=False)
    malformed = pc.fill_null(table.column("malformed"), False).to_numpy(zero_copy_only=False)
    order = np.lexsort((rows, source, codes))  # by tag, then file, then row: file order
    codes, source = codes[order], source[order]
    cuts = np.flatnonzero((np.diff(codes) != 0) | (np.diff(source) != 0)) + 1
    for a, b in zip(np.r_[0, cuts], np.r_[cuts, len(order)], strict=True):
        tag = names[codes[a]]
        if tag not in quality:
            continue
        sel = order[a:b]
        src = ds.sources[int(source[a])]
        where = f"{src['path']} {src['label']} "
        _count(quality[tag], chunks[tag], where, ok[sel], times[sel], values[sel],
               is_text[sel], text[sel], bad_q[sel], rows[sel], malformed[sel],
               status_words.get(tag), count, unplaced)  # fmt: skip


def _count(q, chunk_list, where, ok, times, values, is_text, text, bad_q, rows, malformed,
           words=None, count=None, unplaced=True):  # fmt: skip
    """One file's samples of one tag: the loader's counts (see ``tagdata.add_chunk``)."""
    if not ok.all():
        if unplaced:
            q.bad_timestamps += int((~ok).sum())
            q.note("bad timestamp", where + str(rows[~ok][0]))
        times, values, is_text, text, bad_q, rows, malformed = (
            x[ok] for x in (times, values, is_text, text, bad_q, rows, malformed)
        )
    values = values.astype(np.float64, copy=False)
    if count is None:
        bad = count_samples(q, where, times, values, is_text, text, bad_q, rows, malformed, words)
    else:
        bad, values = count_part(q, where, times, values, is_text, text, bad_q, rows, malformed,
                                 words, count)  # fmt: skip
    chunk_list.append((times, values, bad, (where, rows)))
