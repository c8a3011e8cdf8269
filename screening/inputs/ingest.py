"""Convert a plant's raw exports once into the columnar dataset of :mod:`screening.inputs.dataset`.

``screening.inputs.ingest.ingest(config, out_dir)`` reads every export file the plant file names
(wide or long, CSV, CSV.gz or Parquet), places every timestamp in UTC with the loader's rules,
reads the numbers and keeps the text of values that are not numbers, and writes one folder per
pump (``pump=<safe id>``), the site barometer (``site``) and tags no pump uses (``other``), one
Parquet part per UTC month. Nothing is judged or dropped here: text values, non-finite numbers
and quality words are kept and judged when the dataset is read, so a scan of the dataset gives
the same tables as a scan of the raw exports. Rows whose time cannot be placed are kept in
``month=unplaced``; a long-layout row without a tag cannot belong to any series and is counted
and named in the summary.

Memory stays bounded by a block of rows and one tag's month: each file is read a block at a
time (:mod:`screening.inputs.ingest_blocks`) and staged per folder, month and tag, and each
partition is then sorted and written tag by tag.
"""

from __future__ import annotations

import hashlib
import json
import shutil
import time
from contextlib import ExitStack
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from screening.base.files import (
    FolderRefused,
    atomic_folder,
    check_out,
    claimed_folder,
    clear_leftovers,
    page_names,
)
from screening.base.version import __version__
from screening.inputs import dataset as ds
from screening.inputs.export_files import FileInfo
from screening.inputs.ingest_blocks import FileNotes, Rows, file_blocks
from screening.inputs.loader import ExportIndex
from screening.inputs.plant import Plant, load_plant
from screening.inputs.tagdata import ExportError
from screening.inputs.window import window_bounds

#: Rows per Parquet row group of a partition (a month of one pump is one or a few groups).
ROW_GROUP = 1 << 18


class IngestError(ValueError):
    """An ingest that cannot be done; the message names the file or folder."""


@dataclass
class IngestSummary:
    """What ``ingest`` wrote and found.

    Attributes
    ----------
    out_dir : Path
        The dataset folder.
    rows : int
        Rows written (samples, text values and rows of unplaced times alike).
    partitions : int
        Parquet parts written (one per folder and month).
    bytes_written, bytes_read : int
        Size of the dataset and of the export files read [bytes].
    sources : int
        Export files read.
    files_not_read : dict
        path -> message, for export files that could not be read (they are not in the dataset).
    bad_rows : dict
        Kind of problem -> number of rows kept but marked (``bad timestamp``, ``text value``,
        ``missing or infinite value``, ``bad quality``) or not kept (``no tag``).
    first_bad : dict
        Kind -> first file and row or line where it was seen.
    outside_window : int
        Rows outside the window (and its look-back), not kept.
    other_tags : list of str
        Tags no pump of the register uses, kept in the ``other`` folder.
    elapsed_s : float
        Wall time [s].
    """

    out_dir: Path
    rows: int = 0
    partitions: int = 0
    bytes_written: int = 0
    bytes_read: int = 0
    sources: int = 0
    files_not_read: dict[str, str] = field(default_factory=dict)
    bad_rows: dict[str, int] = field(default_factory=dict)
    first_bad: dict[str, str] = field(default_factory=dict)
    outside_window: int = 0
    other_tags: list[str] = field(default_factory=list)
    elapsed_s: float = 0.0

    def note(self, kind: str, count: int, where: str) -> None:
        """Count ``count`` rows of a kind of problem; remember where it was first seen."""
        if count:
            self.bad_rows[kind] = self.bad_rows.get(kind, 0) + int(count)
            self.first_bad.setdefault(kind, where)


def ingest(
    config: str | Path | Plant,
    out_dir: str | Path,
    start=None,
    end=None,
) -> IngestSummary:
    """Convert a plant's raw exports into a dataset partitioned by pump and month.

    Parameters
    ----------
    config : str, Path or Plant
        The plant file (its ``[[exports]]`` name the raw files) or a loaded plant.
    out_dir : str or Path
        The dataset folder; written beside itself and moved in place when complete. An existing
        dataset there is replaced; any other non-empty folder is refused.
    start, end : str or Timestamp, optional
        Window [start, end) to keep (dates without an offset in the site time zone, as for
        ``scan``); samples are kept from ``start`` minus the longest hold of any tag, so a scan
        of the same window reads the same samples. Both omitted: everything.

    Returns
    -------
    IngestSummary

    Raises
    ------
    IngestError
        A dataset source in the plant file, a folder that is not a dataset, or no readable file.
    """
    t0 = time.perf_counter()
    plant = config if isinstance(config, Plant) else load_plant(config)
    out = Path(out_dir)
    for i, source in enumerate(plant.settings.exports, start=1):
        if source.layout == "dataset":
            raise IngestError(
                f"{plant.path}: [exports[{i}]] is a dataset; ingest reads raw exports only "
                "(give a plant file whose [[exports]] name the historian files)"
            )
    try:
        out = check_out(out, "dataset")
    except FolderRefused as exc:
        raise IngestError(str(exc)) from None
    kept, window = _kept_span(plant, start, end)
    index = ExportIndex(plant.settings, plant.base)
    homes = _homes(plant, index)
    summary = IngestSummary(out, files_not_read={**index.file_problems, **index.partly_read})
    summary.other_tags = sorted(t for t, f in homes.items() if f == ds.OTHER_FOLDER)
    sources: list[dict] = []
    prefix = f".{out.name}.staging-"
    clear_leftovers(_parent(out), prefix)  # the staging folders of killed runs
    with ExitStack() as stack:
        staging = stack.enter_context(claimed_folder(out.parent, prefix, "staging"))
        stack.callback(shutil.rmtree, staging, ignore_errors=True)
        stage = _Staging(staging, homes)
        for info in index.files:
            try:
                label = _read_file(
                    index, info, len(sources), kept, summary, stage.start(len(sources))
                )
            except ExportError as exc:
                summary.files_not_read[str(info.path)] = str(exc)
                continue
            sources.append(_file_record(info, label))
        if not sources:
            raise IngestError(
                "no export file could be read: "
                + "; ".join(f"{k}: {v}" for k, v in summary.files_not_read.items())
            )
        with atomic_folder(out, "dataset") as tmp:
            for part in sorted(stage.parts):
                rows = _write_partition(stage.parts[part], tmp / part.parent.name / part.name)
                summary.rows += rows
                summary.partitions += 1
            manifest = _manifest(plant, sources, homes, summary, kept, window)
            (tmp / ds.MANIFEST).write_text(json.dumps(manifest, indent=1), encoding="utf-8")
    summary.sources = len(sources)
    summary.bytes_read = sum(s["bytes"] for s in sources)
    summary.bytes_written = sum(p.stat().st_size for p in out.rglob("*") if p.is_file())
    summary.elapsed_s = time.perf_counter() - t0
    return summary


def _parent(out: Path) -> Path:
    out.parent.mkdir(parents=True, exist_ok=True)
    return out.parent


def _kept_span(plant: Plant, start, end) -> tuple[tuple[int | None, int | None], tuple]:
    """Times to keep [ns, UTC]: the window and, before it, the longest hold of any tag."""
    if start is None and end is None:
        return (None, None), (None, None)
    a, b = window_bounds(plant, start, end)
    s = plant.settings
    holds = [s.data.stale_limit, s.data.frozen_after or 0.0, s.site.barometer_stale_limit]
    holds += [t.stale_limit or 0.0 for p in plant.pumps.values() for t in p.all_tags()]
    # the scan reads from start - longest hold - 1 ns (screening.scan)
    return (a.value - int(max(holds) * 1e9) - 1, b.value), (a, b)


def _homes(plant: Plant, index: ExportIndex) -> dict[str, str]:
    """Folder of every tag found: its first pump in register order, the site, or other."""
    names = page_names(list(plant.pumps))
    found = index.known_tags()  # a register tag no export holds stays "not found"
    homes: dict[str, str] = {}
    baro = plant.settings.site.barometer_tag
    if baro in found:
        homes[baro] = ds.SITE_FOLDER
    for pid, pump in plant.pumps.items():
        folder = "pump=" + names[pid].removesuffix(".html")
        for spec in [*pump.tags().values(), *pump.field_tags().values()]:
            if spec.tag in found:
                homes.setdefault(spec.tag, folder)
    for tag in sorted(found):
        homes.setdefault(tag, ds.OTHER_FOLDER)
    return homes


def _read_file(index: ExportIndex, info: FileInfo, ordinal: int, kept, summary: IngestSummary,
               stage: _Staging) -> str:  # fmt: skip
    """Every row of one export file as dataset rows, staged a block at a time; the label of
    its rows (row or line). Nothing of a file that fails part-way is kept or counted."""
    notes = FileNotes()
    blocks, label = file_blocks(index, info, notes)
    try:
        for block in blocks:
            stage.add(_block_table(index, block, ordinal, kept, notes))
    except BaseException:
        stage.discard()
        raise
    stage.keep()
    where = f"{info.path} {label} "
    for kind, count, row in notes.places():
        summary.note(kind, count, where + str(row))
    summary.outside_window += notes.outside_window
    return label


def _block_table(index: ExportIndex, rows: Rows, ordinal: int, kept, notes: FileNotes):
    """One block's rows as a table of the dataset's columns (tag codes as a dictionary);
    its problems counted in ``notes``."""
    if rows.quality is not None:
        words = pd.Series(rows.quality, dtype=object).astype("string").str.strip().str.lower()
        rows.quality = words.where(words != "", None).to_numpy(dtype=object, na_value=None)
    if kept != (None, None):
        inside = ~rows.ok | ((rows.times >= kept[0]) & (rows.times < kept[1]))
        notes.outside_window += int((~inside).sum())
        rows = rows.take(inside)
    ok, qual = rows.ok, rows.quality
    is_text = ok & ~pd.isna(rows.text)
    flags = {
        "bad timestamp": ~ok,
        "text value": is_text,
        "row with a wrong number of fields": ok & rows.malformed,
        "missing or infinite value": ok & ~is_text & ~rows.malformed & ~np.isfinite(rows.values),
    }
    if qual is not None:
        good = pd.Series(qual).isin(index.good_quality).to_numpy()
        flags["bad quality"] = ok & ~pd.isna(qual) & ~good
    keys = rows.keys()
    for kind, mask in flags.items():
        notes.add(kind, mask, keys, rows.rows)
    n = len(rows.times)
    tag = pa.DictionaryArray.from_arrays(pa.array(rows.codes, pa.int32()),
                                         pa.array(rows.tags, pa.string()))  # fmt: skip
    return pa.table(
        {
            "time": pa.array(rows.times, pa.int64(), mask=~ok).cast(ds.SCHEMA.field("time").type),
            "tag": tag,
            "value": pa.array(rows.values, pa.float64()),
            "text": _strings(rows.text, n),
            "quality": _strings(qual, n),
            "source": pa.array(np.full(n, ordinal, np.int32)),
            "row": pa.array(rows.rows.astype(np.int64)),
            "malformed": pa.array(rows.malformed.astype(bool)),
        }
    )


def _strings(words: np.ndarray | None, n: int) -> pa.Array:
    """Words as a string column; all null without a Python list when there are none."""
    if words is None or not pd.notna(words).any():
        return pa.nulls(n, pa.string())
    return pa.array(words, pa.string())


class _Staging:
    """The staged rows: one Parquet file per export file, folder and month, one row group per
    tag and block, and the list of each folder-month's row groups by tag."""

    def __init__(self, root: Path, homes: dict[str, str]):
        self.root, self.homes = root, homes
        self.parts: dict[Path, dict[str, list[tuple[Path, int]]]] = {}
        self._open: dict[Path, list] = {}  # staged file -> [writer, row groups written]
        self._new: list[tuple[Path, str, Path, int]] = []
        self.ordinal = 0

    def start(self, ordinal: int) -> _Staging:
        self.ordinal, self._open, self._new = ordinal, {}, []
        return self

    def add(self, table: pa.Table) -> None:
        """Stage one block's rows by folder, month and tag."""
        if table.num_rows == 0:
            return
        tag = table.column("tag").combine_chunks()
        names = tag.dictionary.to_pylist()
        folders = np.array([self.homes.get(t, ds.OTHER_FOLDER) for t in names], dtype=object)
        codes = tag.indices.to_numpy(zero_copy_only=False)
        t = table.column("time").cast(pa.int64())
        ok = t.is_valid().to_numpy(zero_copy_only=False)
        ns = t.fill_null(0).to_numpy(zero_copy_only=False).astype("datetime64[ns]")
        month = np.where(ok, ns.astype("datetime64[M]").astype(np.int64), -1)
        table = table.set_column(1, "tag", tag.cast(pa.string()))
        groups = pd.DataFrame({"c": codes, "m": month}).groupby(["c", "m"], sort=True).indices
        for (c, m), idx in groups.items():
            name = f"month={ds.UNPLACED}" if m < 0 else ds.month_name(np.datetime64(int(m), "M"))
            part = self.root / folders[c] / name
            path = part / f"{self.ordinal:06d}.parquet"
            if path not in self._open:
                part.mkdir(parents=True, exist_ok=True)
                self._open[path] = [pq.ParquetWriter(path, STAGED, compression="none"), 0]
            writer = self._open[path]
            sub = table.take(pa.array(idx))
            writer[0].write_table(sub, row_group_size=sub.num_rows)
            self._new.append((part, names[c], path, writer[1]))
            writer[1] += 1

    def keep(self) -> None:
        """The export file is read: its staged rows join the dataset's."""
        self._close()
        for part, tag, path, group in self._new:
            self.parts.setdefault(part, {}).setdefault(tag, []).append((path, group))
        self._new = []

    def discard(self) -> None:
        """The export file failed part-way: its staged rows are removed."""
        self._close()
        for path in {p for _, _, p, _ in self._new}:
            path.unlink(missing_ok=True)
        self._new = []

    def _close(self) -> None:
        for writer, _ in self._open.values():
            writer.close()
        self._open = {}


#: The schema of staged rows (the dataset's; tags as strings).
STAGED = ds.SCHEMA


def _write_partition(groups: dict[str, list[tuple[Path, int]]], final: Path) -> int:
    """Sort one folder-month's staged rows by tag, time, source and row; write it (zstd).

    The tags are taken one at a time in order (each staged row group holds one tag). A tag
    whose staged rows are already in order (blocks of a file in time order: the usual case)
    is passed through a staged row group at a time, so memory is bounded by a row group;
    another is read whole and sorted (memory: that tag's month). The row groups written are
    those of the partition sorted whole (:data:`ROW_GROUP` rows each, then the rest). Each
    tag's series is one run in time order, so the times and row numbers delta-encode to a few
    bits each and the values (historians round them) dictionary-encode.
    """
    final.mkdir(parents=True, exist_ok=True)
    writer = pq.ParquetWriter(
        final / "part-0.parquet",
        ds.SCHEMA,
        compression="zstd",
        use_dictionary=["tag", "value", "text", "quality", "source"],
        column_encoding={"time": "DELTA_BINARY_PACKED", "row": "DELTA_BINARY_PACKED"},
    )
    out = _RowGroups(writer)
    with writer:
        for tag in sorted(groups):
            pieces = _staged_pieces(groups[tag])
            if _in_order(pieces):
                for piece in pieces:
                    out.add(piece())
            else:
                table = pa.concat_tables([piece() for piece in pieces])
                out.add(table.sort_by([("time", "ascending"), ("source", "ascending"),
                                       ("row", "ascending")]))  # fmt: skip
        out.flush()
    return out.total


class _RowGroups:
    """Rows given in order, written in row groups of :data:`ROW_GROUP` rows."""

    def __init__(self, writer: pq.ParquetWriter):
        self.writer, self.pending, self.waiting, self.total = writer, [], 0, 0

    def add(self, table: pa.Table) -> None:
        self.pending.append(table)
        self.waiting += table.num_rows
        self.total += table.num_rows
        if self.waiting >= ROW_GROUP:
            rest = pa.concat_tables(self.pending)
            full = (self.waiting // ROW_GROUP) * ROW_GROUP
            self.writer.write_table(rest.slice(0, full), row_group_size=ROW_GROUP)
            self.pending, self.waiting = [rest.slice(full)], self.waiting - full

    def flush(self) -> None:
        if self.waiting:
            self.writer.write_table(pa.concat_tables(self.pending), row_group_size=ROW_GROUP)
        self.pending, self.waiting = [], 0


def _staged_pieces(groups: list[tuple[Path, int]]) -> list:
    """One tag's staged row groups, file by file, as functions that read them."""
    files: dict[Path, pq.ParquetFile] = {}
    pieces = []
    for path, group in sorted(groups):
        pf = files.setdefault(path, pq.ParquetFile(path))
        pieces.append(lambda pf=pf, group=group, columns=None: pf.read_row_group(group, columns))
    return pieces


def _in_order(pieces: list) -> bool:
    """Whether the rows of ``pieces`` are in (time, source, row) order (a null time last)."""
    last = None
    for piece in pieces:
        keys = piece(columns=["time", "source", "row"])
        t = keys.column("time").cast(pa.int64()).fill_null(np.iinfo(np.int64).max)
        k = [np.asarray(c.to_numpy()) for c in (t, keys.column("source"), keys.column("row"))]
        if last is not None:
            k = [np.concatenate(([a], b)) for a, b in zip(last, k, strict=True)]
        (gt_t, eq_t), (gt_s, eq_s), (gt_r, _) = ((x[1:] > x[:-1], x[1:] == x[:-1]) for x in k)
        if not (gt_t | (eq_t & (gt_s | (eq_s & gt_r)))).all():
            return False
        last = [x[-1] for x in k]
    return True


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _file_record(info: FileInfo, label: str) -> dict:
    src = info.source
    return {
        "path": str(info.path),
        "absolute": str(info.path.resolve()),
        "bytes": info.path.stat().st_size,
        "sha256": _sha256(info.path),
        "layout": src.layout,
        "format": info.fmt,
        "label": label,
        "tags": sorted(info.tags),
    }


def _manifest(plant, sources, homes, summary, kept, window) -> dict:
    reg = plant.settings.register_files
    inputs = [plant.path, plant.base / reg.pumps, plant.base / reg.curves]
    return {
        "layout_version": ds.LAYOUT_VERSION,
        "written_utc": datetime.now(UTC).isoformat(timespec="seconds"),
        "pumpscreen": _tool_version(),
        "plant_file": _record(plant.path),
        "register": [_record(p) for p in inputs[1:]],
        "window": {
            "start": window[0].isoformat() if window[0] is not None else None,
            "end": window[1].isoformat() if window[1] is not None else None,
            "kept_from_ns": kept[0],
            "kept_to_ns": kept[1],
        },
        "partitioning": "<folder>/month=YYYY-MM (UTC) or month=unplaced/part-0.parquet",
        "sorted_by": ["tag", "time", "source", "row"],
        "columns": list(ds.COLUMNS),
        "sources": sources,
        "files_not_read": summary.files_not_read,
        "tags": dict(sorted(homes.items())),
        "rows": summary.rows,
        "bad_rows": summary.bad_rows,
        "first_bad": summary.first_bad,
    }


def _record(path: Path) -> dict:
    return {"path": str(path), "bytes": path.stat().st_size, "sha256": _sha256(path)}


def _tool_version() -> str:
    return __version__
