"""The ingested dataset against the raw exports: a scan of either gives the same tables.

Plants here are invented (tests/plantmaker.py); the demo plant is invented too.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from pandas.testing import assert_frame_equal
from plantmaker import make_plant, pump_row, steady_frame
from typer.testing import CliRunner

import screening
from screening.cli.main import app
from screening.inputs import dataset
from screening.inputs.config import ConfigError
from screening.inputs.ingest import IngestError, ingest

ROOT = Path(__file__).resolve().parents[1]


def dataset_plant(plant_file: Path, folder: Path, out: Path) -> Path:
    """A copy of a plant file whose exports are the dataset in ``folder``."""
    keep, skipping = [], False
    for line in plant_file.read_text().splitlines():
        stripped = line.strip()
        if stripped.startswith("[[exports]]"):
            skipping = True
            continue
        if skipping and stripped.startswith("["):
            skipping = False
        if not skipping:
            keep.append(line)
    text = re.sub(
        r'^(pumps|curves)\s*=\s*"([^"]+)"',
        lambda m: f'{m[1]} = "{(plant_file.parent / m[2]).resolve()}"',
        "\n".join(keep),
        flags=re.M,
    )
    out.write_text(text + f'\n[[exports]]\nlayout = "dataset"\npath = "{folder}"\n')
    return out


def scan_both(plant_file, tmp_path, start=None, end=None, keep=(None, None)):
    """Scan the raw exports and the dataset ingested from them; return both and the summary."""
    summary = ingest(plant_file, tmp_path / "ds", *keep)
    other = dataset_plant(plant_file, tmp_path / "ds", tmp_path / "from_dataset.toml")
    return screening.scan(plant_file, start, end), screening.scan(other, start, end), summary


def assert_same(raw, ds, quality=True):
    for name in ("hours", "summary", "daily", "problems", "file_problems"):
        assert_frame_equal(getattr(raw, name), getattr(ds, name), obj=name)
    if quality:
        assert_frame_equal(raw.quality, ds.quality, obj="quality")


def long_csv(rows: list[tuple[str, str, str, str]]) -> str:
    return "\n".join(["tag,time,value,quality"] + [",".join(r) for r in rows]) + "\n"


def test_demo_plant_scans_the_same_from_the_dataset(tmp_path):
    plant = ROOT / "configs" / "demo_plant.toml"
    raw, ds, summary = scan_both(plant, tmp_path, "2026-10-01", "2026-11-01")
    assert summary.sources == len(raw.export_files) and not summary.files_not_read
    assert len(raw.summary) > 10
    assert_same(raw, ds, quality=False)
    # The counts agree; only where a long Parquet problem was first seen may differ: the raw
    # loader counts rows of its tag-filtered read, the dataset names the row of the file.
    assert_frame_equal(raw.quality.drop(columns="first_problem"),
                       ds.quality.drop(columns="first_problem"))  # fmt: skip


@pytest.mark.parametrize("timezone", ["UTC", "Europe/Berlin"])
def test_window_across_a_month_boundary(tmp_path, timezone):
    frame = steady_frame(start="2026-10-31", periods=2 * 1440)
    frame.loc[1500:1560, "P1.PS"] = -95.0  # below NPSH3 around the turn of the month
    plant = make_plant(tmp_path, wide={"a.csv": frame}, timezone=timezone,
                       start="2026-10-31 12:00", end="2026-11-01 12:00")  # fmt: skip
    raw, ds, _ = scan_both(plant, tmp_path)
    assert_same(raw, ds)
    assert raw.hours.query("state == 'below_npsh3'").hours.sum() > 0
    folder = tmp_path / "ds" / "pump=P1"
    assert sorted(p.name for p in folder.iterdir()) == ["month=2026-10", "month=2026-11"]
    first = pq.read_table(folder / "month=2026-11" / "part-0.parquet").column("time")
    if timezone == "UTC":  # a sample exactly at the first instant of the month is in it
        assert first.to_pandas().min() == pd.Timestamp("2026-11-01", tz="UTC")


def test_only_overlapping_months_are_opened(tmp_path):
    frame = steady_frame(start="2026-09-30", periods=3 * 1440)
    plant = make_plant(tmp_path, wide={"a.csv": frame})
    ingest(plant, tmp_path / "ds")
    ds = dataset.open_dataset(tmp_path / "ds")
    oct1 = pd.Timestamp("2026-10-01", tz="UTC").value
    hour = 3600 * 10**9
    folder = tmp_path / "ds" / "pump=P1"
    opened = [p.parent.name for p, _ in dataset.partitions(folder, (oct1, oct1 + hour))]
    assert opened == ["month=2026-10"]
    opened = [p.parent.name for p, _ in dataset.partitions(folder, (oct1 - hour, oct1))]
    assert opened == ["month=2026-09"]  # the end is exclusive
    assert len(dataset.partitions(folder, None)) == 2
    assert ds.tags["P1.TT"] == "pump=P1"


def test_a_sample_at_the_first_instant_of_a_month_holds_into_the_window(tmp_path):
    # 23:58 is in the October part, 00:00 in the November part; the window starts at 00:05
    # and only the 00:00 sample (held 10 min) covers 00:05 to 00:10
    frame = pd.concat(
        [
            steady_frame(start=t, periods=n)
            for t, n in (("2026-10-31 23:58", 1), ("2026-11-01 00:00", 1), ("2026-11-01 00:10", 50))
        ]
    )
    plant = make_plant(tmp_path, wide={"a.csv": frame}, start="2026-11-01 00:05",
                       end="2026-11-01 01:00", stale="10 min")  # fmt: skip
    raw, ds, _ = scan_both(plant, tmp_path, keep=("2026-11-01 00:05", "2026-11-01 01:00"))
    assert_same(raw, ds)
    h = ds.hours.query("kind == 'margin'").set_index("state").hours
    assert h["no_data"] == 0 and h.sum() == pytest.approx(55 / 60)
    months = sorted(p.parent.name for p in (tmp_path / "ds").rglob("part-0.parquet"))
    assert months == ["month=2026-10", "month=2026-11"]


def test_a_tag_split_over_two_files_with_bad_rows(tmp_path):
    frame = steady_frame()
    first, second = frame.copy(), frame[["timestamp", "P1.TT"]].copy()
    first.loc[720:, "P1.TT"] = None  # the second half of the temperature is in b.csv
    second = second.iloc[719:].astype({"P1.TT": object})  # 11:59 in both files: a duplicate
    second.loc[719, "P1.TT"] = 25.0
    second.loc[800, "P1.TT"] = "Comm Fail"
    second.loc[801, "timestamp"] = "not a time"
    rows = [("P1.RUN", "2026-10-01T00:00:00+00:00", "1", "ok")]
    rows += [("P1.FT", f"2026-10-01T{h:02d}:{m:02d}:00Z", "80", "ok" if h != 3 else "suspect")
             for h in range(24) for m in range(0, 60, 5)]  # fmt: skip
    rows.insert(5, rows.pop(8))  # out of order
    rows.append(("", "2026-10-01T05:00:00Z", "80", "ok"))  # no tag
    plant = make_plant(
        tmp_path,
        wide={"a.csv": first.drop(columns=["P1.FT", "P1.RUN"]), "b.csv": second},
        long={"t.csv": long_csv(rows)},
        stale="1 day",
    )
    with open(tmp_path / "exports" / "a.csv", "a") as fh:
        fh.write("2026-10-01 12:00:30,100\n")  # too few fields: a bad sample of each tag
    raw, ds, summary = scan_both(plant, tmp_path)
    assert_same(raw, ds)  # CSV rows: even the first place of each problem is the same
    q = ds.quality.set_index("role")
    assert q.loc["temperature", "duplicates"] == 1 and q.loc["temperature", "text_values"] == 1
    assert q.loc["temperature", "bad_timestamps"] == 1
    assert q.loc["flow", "bad_quality"] == 12 and q.loc["flow", "out_of_order"] == 1
    assert "b.csv line 83" in q.loc["temperature", "first_problem"]
    assert "row with a wrong number of fields: " in q.loc["suction", "first_problem"]
    assert summary.bad_rows == {"bad timestamp": 1, "text value": 1, "bad quality": 12,
                                "no tag": 1, "row with a wrong number of fields": 2}  # fmt: skip
    assert "t.csv line" in summary.first_bad["no tag"]


def test_unsafe_pump_ids_stay_inside_the_folder(tmp_path):
    ids = ["../../escape", "a/b", "a_b", ".."]
    frames = [steady_frame(pid) for pid in ids]
    frame = frames[0]
    for f in frames[1:]:
        frame = frame.merge(f, on="timestamp")
    plant = make_plant(tmp_path, wide={"a.csv": frame}, rows=[pump_row(p) for p in ids])
    raw, ds, _ = scan_both(plant, tmp_path)
    assert_same(raw, ds)
    root = (tmp_path / "ds").resolve()
    written = [p.resolve() for p in tmp_path.rglob("*") if p.is_file()]
    outside = [p for p in written if not p.is_relative_to(root) and p.suffix == ".parquet"]
    assert outside == []
    folders = sorted(p.name for p in root.iterdir() if p.is_dir())
    assert len(folders) == len(ids) and all(f.startswith("pump=") for f in folders)


def test_shared_tag_and_site_barometer(tmp_path):
    frame = steady_frame("P1").merge(steady_frame("P2"), on="timestamp")
    frame["SITE.BARO"] = 1013.0
    frame["COMMON.TT"] = 30.0
    rows = [
        pump_row("P1", temperature_tag="COMMON.TT"),
        pump_row("P2", temperature_tag="COMMON.TT"),
    ]
    baro = 'barometer_tag = "SITE.BARO"\nbarometer_unit = "hPa"'
    plant = make_plant(tmp_path, wide={"a.csv": frame}, rows=rows, barometer=baro)
    raw, ds, _ = scan_both(plant, tmp_path)
    assert_same(raw, ds)
    tags = json.loads((tmp_path / "ds" / "manifest.json").read_text())["tags"]
    assert tags["SITE.BARO"] == "site" and tags["COMMON.TT"] == "pump=P1"
    assert tags["P1.TT"] == "other"  # in the export, used by no pump: kept, not lost


def test_a_register_tag_no_export_holds_is_not_found_either_way(tmp_path):
    plant = make_plant(tmp_path, wide={"a.csv": steady_frame()},
                       rows=[pump_row("P1", speed_tag="P1.SPEED", speed_unit="rpm")])  # fmt: skip
    raw, ds, _ = scan_both(plant, tmp_path)
    assert_same(raw, ds)
    assert ds.problems.message.str.contains("P1.SPEED").all() and ds.summary.empty


def test_unreadable_file_is_reported_and_carried_to_the_scan(tmp_path):
    plant = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    (tmp_path / "exports" / "broken.csv").write_bytes(b"\x00\x01 no header here\n")
    raw, ds, summary = scan_both(plant, tmp_path)
    assert "broken.csv" in next(iter(summary.files_not_read))
    assert_same(raw, ds)
    manifest = json.loads((tmp_path / "ds" / "manifest.json").read_text())
    assert [Path(s["path"]).name for s in manifest["sources"]] == ["a.csv"]
    assert len(manifest["sources"][0]["sha256"]) == 64 and manifest["layout_version"] == 1


def test_no_readable_file_is_an_error(tmp_path):
    plant = make_plant(tmp_path)
    with pytest.raises(IngestError, match="no export file could be read"):
        ingest(plant, tmp_path / "ds")


def test_a_window_wider_than_the_dataset_is_named(tmp_path):
    plant = make_plant(tmp_path, wide={"a.csv": steady_frame(periods=3 * 1440)})
    ingest(plant, tmp_path / "ds", "2026-10-01", "2026-10-02")
    other = dataset_plant(plant, tmp_path / "ds", tmp_path / "d.toml")
    r = screening.scan(other, "2026-10-01", "2026-10-03")
    assert r.summary.empty
    assert r.file_problems.message.str.contains("ingest again with a wider window").all()


def test_output_folder_rules(tmp_path):
    plant = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    (tmp_path / "busy").mkdir()
    (tmp_path / "busy" / "notes.txt").write_text("keep me")
    with pytest.raises(IngestError, match="busy: exists and was not written by pumpscreen"):
        ingest(plant, tmp_path / "busy")
    assert (tmp_path / "busy" / "notes.txt").read_text() == "keep me"
    ingest(plant, tmp_path / "ds")
    again = ingest(plant, tmp_path / "ds", "2026-10-01 06:00", "2026-10-01 12:00")  # replaced
    assert again.outside_window > 0
    assert json.loads((tmp_path / "ds" / "manifest.json").read_text())["window"]["start"]
    other = dataset_plant(plant, tmp_path / "ds", tmp_path / "d.toml")
    with pytest.raises(IngestError, match=r"exports\[1\]\] is a dataset"):
        ingest(other, tmp_path / "ds2")


@pytest.mark.parametrize(
    ("block", "message"),
    [
        ('layout = "dataset"', "needs 'path'"),
        ('layout = "dataset"\npath = "ds"\nfiles = "x/*.csv"', r"key\(s\) files.* do not apply"),
        ('layout = "wide"\npath = "ds"', "'path' applies only to layout 'dataset'"),
        ('layout = "long"', "needs 'files'"),
    ],
)
def test_export_source_keys_are_checked(tmp_path, block, message):
    plant = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    text = plant.read_text().replace('files = "exports/*.csv"\nlayout = "wide"', block)
    plant.write_text(text)
    with pytest.raises(ConfigError, match=message):
        screening.load_plant(plant)


def test_missing_dataset_is_a_file_problem(tmp_path):
    plant = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    other = dataset_plant(plant, tmp_path / "nowhere", tmp_path / "d.toml")
    r = screening.scan(other)
    assert r.file_problems.message.str.contains("not a dataset").all()
    assert r.problems.message.str.contains("not found in any export").all()


def test_ingest_command(tmp_path):
    plant = make_plant(tmp_path, wide={"a.csv": steady_frame()})
    (tmp_path / "exports" / "broken.csv").write_text("")
    res = CliRunner().invoke(app, ["ingest", str(plant), "--out", str(tmp_path / "ds")])
    assert res.exit_code == 3, res.output  # a file not read: partial
    assert "file not read" in res.output and str((tmp_path / "ds").resolve()) in res.output
    res = CliRunner().invoke(app, ["ingest", str(tmp_path / "missing.toml")])
    assert res.exit_code == 1 and "plant file not found" in res.output
    assert np.isfinite(screening.scan(plant).summary.coverage).all()


# --- reading export files in blocks of rows ------------------------------------------------
PARQUET_EXPORTS = """
[[exports]]
files = "pq/wide_*.parquet"
layout = "wide"
time_column = "timestamp"

[[exports]]
files = "pq/long_*.parquet"
layout = "long"
tag_column = "tag"
time_column = "time"
value_column = "value"
quality_column = "quality"
"""


def fall_back_plant(tmp_path: Path) -> Path:
    """An invented plant in Europe/Berlin over the day clocks go back (25 October 2026), its
    exports in every layout and format: local text times without an offset (the hour from
    02:00 comes twice), typed UTC times, malformed CSV rows, text values, bad timestamps, rows
    without a tag and bad quality words."""
    local = pd.date_range("2026-10-25 00:00", periods=6 * 60, freq="1min").strftime(
        "%Y-%m-%d %H:%M:%S"
    )
    # the local clock as the historian writes it: 02:00-02:59 twice (summer, then winter time)
    clock = list(local[:180]) + list(local[120:300])
    frame = steady_frame(start="2026-10-25", periods=len(clock))
    frame["timestamp"] = clock
    frame["P1.PS"] = np.linspace(90.0, 110.0, len(clock))
    frame = frame.astype({"P1.TT": object, "timestamp": object})
    frame.loc[7, "P1.TT"] = "Comm Fail"
    frame.loc[11, "timestamp"] = "not a time"
    frame.loc[13, "P1.FT"] = None
    rows = []
    for i, t in enumerate(clock):
        word = "suspect" if i % 50 == 3 else "ok"
        rows.append(("P2.FT", t, f"{70 + i % 7}", word))
        if i % 3 == 0:
            # the first bad quality word is on the file's second tag (line 3)
            rows.append(("P2.RUN", t, "1", "suspect" if i == 0 else "OK " if i % 2 else "ok"))
    rows.insert(60, rows.pop(64))  # out of order: its tag's rows are sorted when written
    rows.insert(40, ("", clock[40], "80", "ok"))  # no tag
    rows.insert(90, ("  ", clock[90], "80", "ok"))
    plant = make_plant(
        tmp_path,
        wide={"a.csv": frame},
        long={"t.csv": long_csv(rows)},
        rows=[pump_row("P1"), pump_row("P2"), pump_row("P3")],
        start="2026-10-25",
        end="2026-10-26",
        timezone="Europe/Berlin",
    )
    with open(tmp_path / "exports" / "a.csv", "a") as fh:
        fh.write("2026-10-25 06:00:00,100\n")  # too few fields: a bad sample of each tag
        fh.write("2026-10-25 06:01:00,100,20,80,1,9\n")  # too many
    (tmp_path / "pq").mkdir()
    typed = steady_frame("P3", start="2026-10-24 22:00", periods=300, freq="1min")
    typed["timestamp"] = pd.to_datetime(typed["timestamp"]).dt.tz_localize("UTC")
    typed.loc[17, "P3.PS"] = np.inf
    typed.loc[19:23, "P3.TT"] = np.nan
    typed.to_parquet(tmp_path / "pq" / "wide_typed.parquet", row_group_size=64)
    text = steady_frame("P1", periods=len(clock)).rename(columns=lambda c: c.replace("P1", "X1"))
    text["timestamp"] = clock
    text.to_parquet(tmp_path / "pq" / "wide_text.parquet", row_group_size=100)
    long_pq = pd.DataFrame(rows, columns=["tag", "time", "value", "quality"])
    long_pq["tag"] = long_pq["tag"].str.replace("P2", "X2")
    long_pq.to_parquet(tmp_path / "pq" / "long_a.parquet", row_group_size=77)
    with open(plant, "a") as fh:
        fh.write(PARQUET_EXPORTS)
    return plant


def ingested(plant: Path, out: Path, monkeypatch, cells: int, keep=(None, None)):
    """The dataset written with blocks of ``cells`` cells: every part's table and row group
    sizes, the manifest without its time, and the summary without its duration."""
    from screening.inputs import ingest_blocks

    monkeypatch.setattr(ingest_blocks, "BLOCK_CELLS", cells)
    summary = ingest(plant, out, *keep)
    parts = {}
    for path in sorted(out.rglob("*.parquet")):
        meta = pq.ParquetFile(path).metadata
        groups = [meta.row_group(i).num_rows for i in range(meta.num_row_groups)]
        parts[str(path.relative_to(out))] = (pq.read_table(path), groups)
    manifest = json.loads((out / dataset.MANIFEST).read_text())
    manifest.pop("written_utc")
    found = {k: v for k, v in vars(summary).items() if k not in ("elapsed_s", "out_dir")}
    return parts, manifest, found


@pytest.mark.parametrize("keep", [(None, None), ("2026-10-25 01:30", "2026-10-25 04:10")])
def test_a_file_read_in_tiny_blocks_gives_the_same_dataset(tmp_path, monkeypatch, keep):
    from screening.inputs import ingest as ingest_module

    plant = fall_back_plant(tmp_path)
    monkeypatch.setattr(ingest_module, "ROW_GROUP", 97)  # several row groups per part
    whole = ingested(plant, tmp_path / "whole", monkeypatch, 1 << 40, keep)
    tiny = ingested(plant, tmp_path / "tiny", monkeypatch, 23, keep)
    assert list(whole[0]) == list(tiny[0])
    for name, (table, groups) in whole[0].items():
        assert tiny[0][name][0].schema.equals(table.schema, check_metadata=True), name
        assert_frame_equal(tiny[0][name][0].to_pandas(), table.to_pandas(), check_exact=True)
        order = [(k, "ascending") for k in ("tag", "time", "source", "row")]
        assert_frame_equal(table.sort_by(order).to_pandas(), table.to_pandas(), check_exact=True)
        assert tiny[0][name][1] == groups, name
        # the row groups of the partition sorted whole: ROW_GROUP rows each, then the rest
        assert groups == [97] * (table.num_rows // 97) + [table.num_rows % 97] * bool(
            table.num_rows % 97
        )
    assert tiny[1] == whole[1]
    assert tiny[2] == whole[2]
    assert list(tiny[2]["bad_rows"]) == list(whole[2]["bad_rows"])  # the order of the notes
    first = whole[2]["first_bad"]
    if keep == (None, None):
        assert first["no tag"].endswith("t.csv line 42")  # header, 40 rows, then the row
        assert first["bad timestamp"].endswith("a.csv line 13")
        assert first["text value"].endswith("a.csv line 9")
        assert first["row with a wrong number of fields"].endswith("a.csv line 362")
        assert first["missing or infinite value"].endswith("wide_typed.parquet row 17")
        assert first["bad quality"].endswith("t.csv line 3")
        # two in the CSV file; one in the Parquet file, which does not strip "  " (a tag)
        assert whole[2]["bad_rows"]["no tag"] == 3
        assert whole[2]["outside_window"] == 0
    else:
        assert whole[2]["outside_window"] > 0


def test_the_repeated_hour_across_block_edges(tmp_path, monkeypatch):
    # EU summer time ends at 01:00 UTC on the last Sunday of October (Directive 2000/84/EC):
    # local 02:00-02:59 is 00:00-00:59 UTC on its first pass, 01:00-01:59 UTC on its second
    plant = fall_back_plant(tmp_path)
    for cells in (1 << 40, 7 * 5, 61 * 5):  # one block; blocks of 7 or 61 rows
        parts = ingested(plant, tmp_path / f"ds{cells}", monkeypatch, cells)[0]
        table = parts["pump=P1/month=2026-10/part-0.parquet"][0].to_pandas()
        ps = table[table.tag == "P1.PS"].set_index("row")["time"]
        # CSV line 2 is local 00:00 (22:00 UTC the day before); lines 122-181 the first pass
        # of 02:00-02:59, lines 182-241 the second
        assert ps[2] == pd.Timestamp("2026-10-24 22:00", tz="UTC")
        assert ps[122] == pd.Timestamp("2026-10-25 00:00", tz="UTC")
        assert ps[181] == pd.Timestamp("2026-10-25 00:59", tz="UTC")
        assert ps[182] == pd.Timestamp("2026-10-25 01:00", tz="UTC")
        assert ps[241] == pd.Timestamp("2026-10-25 01:59", tz="UTC")
        assert ps.drop(12).is_monotonic_increasing and ps.drop(12).is_unique
        long = parts["pump=P2/month=2026-10/part-0.parquet"][0].to_pandas()
        ft = long[long.tag == "P2.FT"]
        assert ft.time.is_unique and len(ft) == 360


def test_export_files_are_read_in_blocks(tmp_path, monkeypatch):
    from screening.inputs import ingest_blocks
    from screening.inputs.loader import ExportIndex

    plant = screening.load_plant(fall_back_plant(tmp_path))
    index = ExportIndex(plant.settings, plant.base)
    monkeypatch.setattr(ingest_blocks, "BLOCK_CELLS", 5 * 50)  # 50 rows of the wide files
    for info in index.files:
        width = 1 + len(info.tags) if info.source.layout == "wide" else 4
        size = ingest_blocks.block_rows(width)
        notes = ingest_blocks.FileNotes()
        blocks, label = ingest_blocks.file_blocks(index, info, notes)
        blocks = list(blocks)
        rows = np.unique(np.concatenate([b.rows for b in blocks]))
        assert label == ("row" if info.fmt == "parquet" else "line")
        assert len(blocks) >= 3, info.path.name
        spans = [np.unique(b.rows) for b in blocks]
        assert all(len(s) <= size for s in spans), info.path.name
        assert all(a[-1] < b[0] for a, b in zip(spans, spans[1:], strict=False))  # file order
        if info.fmt == "parquet":  # the file's own row numbers, from 0
            n = pq.ParquetFile(info.path).metadata.num_rows
            assert rows.tolist() == list(range(n)) or info.source.layout == "long"


def test_a_file_failing_part_way_leaves_nothing(tmp_path, monkeypatch):
    from screening.inputs import ingest_blocks
    from screening.inputs.tagdata import ExportError

    plant = fall_back_plant(tmp_path)
    real = ingest_blocks._raw_blocks

    def failing(info, columns):
        for i, block in enumerate(real(info, columns)):
            if i == 2 and info.path.name == "t.csv":
                raise ExportError(f"{info.path}: cannot be read (test)")
            yield block

    monkeypatch.setattr(ingest_blocks, "_raw_blocks", failing)
    parts, manifest, summary = ingested(plant, tmp_path / "ds", monkeypatch, 4 * 10)
    assert any(k.endswith("t.csv") for k in summary["files_not_read"])
    sources = [Path(s["path"]).name for s in manifest["sources"]]
    assert "t.csv" not in sources
    table = pa.concat_tables([t for t, _ in parts.values()])
    assert "P2.FT" not in table.column("tag").to_pylist()  # not a row of t.csv kept
    assert not any("t.csv" in v for v in summary["first_bad"].values())
    assert summary["bad_rows"]["no tag"] == 1  # only that of the long Parquet file
