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

Memory stays bounded by one export file and one partition: each file is staged in parts per
folder and month, and each partition is then sorted and written once.
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
from screening.inputs.export_files import FileInfo, long_columns, read_csv_rows
from screening.inputs.loader import ExportIndex
from screening.inputs.plant import Plant, load_plant
from screening.inputs.tagdata import ExportError, as_text
from screening.inputs.timestamps import parse_times
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
        for info in index.files:
            try:
                table, label = _read_file(index, info, len(sources), kept, summary)
            except ExportError as exc:
                summary.files_not_read[str(info.path)] = str(exc)
                continue
            sources.append(_file_record(info, label))
            _stage(table, homes, staging, len(sources) - 1)
        if not sources:
            raise IngestError(
                "no export file could be read: "
                + "; ".join(f"{k}: {v}" for k, v in summary.files_not_read.items())
            )
        with atomic_folder(out, "dataset") as tmp:
            for part in sorted(staging.glob("*/*")):
                summary.rows += _write_partition(part, tmp / part.parent.name / part.name)
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


def _read_file(
    index: ExportIndex, info: FileInfo, ordinal: int, kept, summary: IngestSummary
) -> tuple[pa.Table, str]:
    """Every row of one export file as dataset rows; the label of its rows (row or line)."""
    src = info.source
    tags = sorted(info.tags)
    if src.layout == "wide":
        parts, label = _wide_columns(index, info, tags)
    else:
        parts, label = _long_rows(index, info, tags, summary)
    where = f"{info.path} {label} "
    tag, times, ok, values, text, qual, rows, malformed = parts
    if qual is not None:
        words = qual.astype("string").str.strip().str.lower()
        qual = words.where(words != "", None).to_numpy(dtype=object, na_value=None)
    if kept != (None, None):
        inside = ~ok | ((times >= kept[0]) & (times < kept[1]))
        summary.outside_window += int((~inside).sum())
        tag, times, ok, values, text, rows, malformed = (
            x[inside] for x in (tag, times, ok, values, text, rows, malformed)
        )
        qual = qual[inside] if qual is not None else None
    is_text = ok & ~pd.isna(text)
    flags = {
        "bad timestamp": ~ok,
        "text value": is_text,
        "row with a wrong number of fields": ok & malformed,
        "missing or infinite value": ok & ~is_text & ~malformed & ~np.isfinite(values),
    }
    if qual is not None:
        flags["bad quality"] = (
            ok & ~pd.isna(qual) & ~pd.Series(qual).isin(index.good_quality).to_numpy()
        )
    for kind, mask in flags.items():
        if mask.any():
            summary.note(kind, int(mask.sum()), where + str(rows[mask][0]))
    n = len(times)
    table = pa.table(
        {
            "time": pa.array(times, pa.int64(), mask=~ok).cast(ds.SCHEMA.field("time").type),
            "tag": pa.array(tag, pa.string()),
            "value": pa.array(values, pa.float64()),
            "text": pa.array(text, pa.string()),
            "quality": pa.array(qual if qual is not None else [None] * n, pa.string()),
            "source": pa.array(np.full(n, ordinal, np.int32)),
            "row": pa.array(rows.astype(np.int64)),
            "malformed": pa.array(malformed.astype(bool)),
        },
        schema=ds.SCHEMA,
    )
    return table, label


def _wide_columns(index: ExportIndex, info: FileInfo, tags: list[str]):
    """A wide file melted to rows: one per non-empty cell (an empty cell is not a sample)."""
    src = info.source
    if info.fmt == "parquet":
        try:
            table = pq.read_table(info.path, columns=[src.time_column, *tags])
        except (pa.ArrowException, OSError) as exc:
            raise ExportError(f"{info.path}: cannot be read ({exc})") from exc
        if info.timestamp_typed:  # as the loader's fast path: rows from 0
            col = table.column(src.time_column).cast(pa.timestamp("ns", tz="UTC"))
            ok = np.asarray(col.is_valid().to_numpy(zero_copy_only=False), dtype=bool)
            times = col.cast(pa.int64()).fill_null(0).to_numpy(zero_copy_only=False)
            frame = table.drop_columns([src.time_column]).to_pandas()
            rows, label = np.arange(len(times)), "row"
        else:
            frame = table.to_pandas()
            times, ok = parse_times(frame[src.time_column], index.timezone, None, src.date_order)
            rows, label = np.arange(len(frame)), "row"
        malformed = np.zeros(len(times), dtype=bool)
    else:  # line numbers, and rows with more or fewer fields than the header
        frame, rows, malformed = read_csv_rows(info.path, src, [src.time_column, *tags])
        times, ok = parse_times(frame[src.time_column], index.timezone, None, src.date_order)
        label = "line"
    keys = ("tag", "times", "ok", "values", "text", "rows", "malformed")
    out: dict[str, list] = {k: [] for k in keys}
    for tag in tags:
        raw = frame[tag]
        present = raw.notna().to_numpy() | malformed  # a malformed row: a bad sample of each tag
        values, text = _numbers(raw[present], src.decimal, malformed[present])
        out["tag"].append(np.full(int(present.sum()), tag, dtype=object))
        out["times"].append(times[present])
        out["ok"].append(ok[present])
        out["values"].append(values)
        out["text"].append(text)
        out["rows"].append(rows[present])
        out["malformed"].append(malformed[present])
    cat = {k: np.concatenate(v) if v else np.zeros(0) for k, v in out.items()}
    return (cat["tag"].astype(object), cat["times"].astype(np.int64), cat["ok"].astype(bool),
            cat["values"].astype(np.float64), cat["text"].astype(object), None,
            cat["rows"].astype(np.int64), cat["malformed"].astype(bool)), label  # fmt: skip


def _long_rows(index: ExportIndex, info: FileInfo, tags: list[str], summary: IngestSummary):
    """A long file's rows; a row without a tag is counted, and not kept."""
    src = info.source
    cols = long_columns(src)
    if info.fmt == "parquet":
        try:
            frame = pq.read_table(info.path, columns=cols).to_pandas()
        except (pa.ArrowException, OSError) as exc:
            raise ExportError(f"{info.path}: cannot be read ({exc})") from exc
        rows, label = np.arange(len(frame)), "row"
        malformed = np.zeros(len(frame), dtype=bool)
        tag = frame[src.tag_column].astype("string")
    else:
        frame, rows, malformed = read_csv_rows(info.path, src, cols)
        label = "line"
        tag = frame[src.tag_column].astype("string").str.strip()
    has_tag = (tag.notna() & (tag != "")).fillna(False).to_numpy(dtype=bool)
    if not has_tag.all():
        summary.note("no tag", int((~has_tag).sum()), f"{info.path} {label} {rows[~has_tag][0]}")
        frame, rows, tag = frame[has_tag].reset_index(drop=True), rows[has_tag], tag[has_tag]
        malformed = malformed[has_tag]
    tag = tag.reset_index(drop=True)
    times, ok = parse_times(frame[src.time_column], index.timezone, tag, src.date_order)
    values, text = _numbers(frame[src.value_column], src.decimal, malformed)
    qual = frame[src.quality_column] if src.quality_column else None
    return (tag.to_numpy(dtype=object), times, ok, values, text, qual, rows, malformed), label


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


def _stage(table: pa.Table, homes: dict[str, str], staging: Path, ordinal: int) -> None:
    """Write one file's rows into staging parts per folder and month."""
    if table.num_rows == 0:
        return
    tags = table.column("tag").to_numpy(zero_copy_only=False)
    folder = pd.Series(tags).map(homes).fillna(ds.OTHER_FOLDER).to_numpy()
    t = table.column("time").cast(pa.int64())
    ok = t.is_valid().to_numpy(zero_copy_only=False)
    ns = t.fill_null(0).to_numpy(zero_copy_only=False).astype("datetime64[ns]")
    month = np.where(ok, ns.astype("datetime64[M]").astype(np.int64), -1)
    groups = pd.DataFrame({"f": folder, "m": month}).groupby(["f", "m"]).indices
    for (f, m), idx in groups.items():
        name = f"month={ds.UNPLACED}" if m < 0 else ds.month_name(np.datetime64(int(m), "M"))
        path = staging / f / name / f"{ordinal:06d}.parquet"
        path.parent.mkdir(parents=True, exist_ok=True)
        pq.write_table(table.take(pa.array(idx)), path, compression="none")


def _write_partition(staged: Path, final: Path) -> int:
    """Sort one folder-month's staged rows by tag, time, source and row; write it (zstd).

    Each tag's series is one run in time order, so the times and row numbers delta-encode to
    a few bits each and the values (historians round them) dictionary-encode.
    """
    table = pa.concat_tables([pq.read_table(p) for p in sorted(staged.glob("*.parquet"))])
    table = table.sort_by([("tag", "ascending"), ("time", "ascending"),
                           ("source", "ascending"), ("row", "ascending")])  # fmt: skip
    final.mkdir(parents=True, exist_ok=True)
    pq.write_table(
        table,
        final / "part-0.parquet",
        compression="zstd",
        row_group_size=ROW_GROUP,
        use_dictionary=["tag", "value", "text", "quality", "source"],
        column_encoding={"time": "DELTA_BINARY_PACKED", "row": "DELTA_BINARY_PACKED"},
    )
    return table.num_rows


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
