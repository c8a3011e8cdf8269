"""A pump screened in time chunks (screening/engine/chunked.py) gives the tables of one piece.

The plant: invented pumps sampled every 10 s over six local days across the end of summer
time in Europe/Berlin, in time-zone-aware Parquet files (wide, and long with quality words,
text values, duplicates and rows out of order; one family drawn by lines). Suction sags below
NPSH3 that run over local midnights (the chunk edges), gaps and frozen stretches across them,
a stop, bad samples. A tiny ``chunk_samples`` forces one chunk per local day (and two), and
every table must equal the unchunked run's exactly.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

import screening
from screening.engine import chunked
from screening.inputs.loader import open_exports
from tests.plantmaker import CURVES, PUMP_HEADER, pump_row

TOML = """
[site]
name = "Chunk test plant (invented)"
elevation = "0 m"
timezone = "Europe/Berlin"

[register]
pumps = "pumps.csv"
curves = "curves.csv"

[data]
stale_limit = "1 min"
frozen_after = "20 min"
good_quality = ["ok"]
max_interval = "30 min"
chunk_samples = {chunk}

[running]
min_flow_fraction = 0.05
min_speed_fraction = 0.2

[window]
start = "2026-10-22 06:00"
end = "2026-10-28"

[[exports]]
files = "wide/*.parquet"
layout = "wide"
time_column = "timestamp"

[[exports]]
files = "long/*.parquet"
layout = "long"
tag_column = "tag"
time_column = "time"
value_column = "value"
quality_column = "quality"

[[exports]]
files = "lines/*.parquet"
layout = "long"
tag_column = "tag"
time_column = "time"
value_column = "value"
reconstruction = "linear"

[policy]
ample_ratio = 2.0
[[policy.rules]]
application = "water"
ratio = 1.1
margin = "0.6 m"
"""

START = pd.Timestamp("2026-10-21 22:00", tz="UTC")
ROW_GROUP = 2_000  # rows of P1's file per row group (5.6 h at 10 s)
END = pd.Timestamp("2026-10-28 02:00", tz="UTC")


def _signals(rng, n, t):
    """Suction [kPa g], temperature [degC], flow [m3/h], run [-] with sags over midnights."""
    hours = (t - START).total_seconds().to_numpy() / 3600
    ps = 60 + 15 * np.sin(hours / 5) + rng.normal(0, 0.5, n)
    local = t.tz_convert("Europe/Berlin")
    near_midnight = (local.hour == 23) & (local.minute >= 40) | (local.hour == 0) & (
        local.minute < 30
    )
    ps[near_midnight] = -89 + rng.normal(0, 1.5, near_midnight.sum())  # below NPSH3
    tt = 30 + 5 * np.sin(hours / 7) + rng.normal(0, 0.1, n)
    ft = 80 + 25 * np.sin(hours / 3) + rng.normal(0, 1, n)
    run = np.ones(n)
    run[(hours > 50) & (hours < 53)] = 0  # a stop
    return ps, tt, ft, run


def _write(folder, chunks):
    rng = np.random.default_rng(20261022)
    t = pd.date_range(START, END, freq="10s", inclusive="left")
    n = len(t)
    ps, tt, ft, run = _signals(rng, n, t)
    local = t.tz_convert("Europe/Berlin")

    def between(a, b):
        return (local >= pd.Timestamp(a, tz="Europe/Berlin")) & (
            local < pd.Timestamp(b, tz="Europe/Berlin")
        )

    # frozen from 22:00, with no sample from 23:20 to just before midnight: the run began
    # before the next chunk's look-back, so only the carried run start flags it right
    ps[between("2026-10-24 22:00", "2026-10-25 01:10")] = 55.0
    keep = ~between("2026-10-25 23:00", "2026-10-26 00:20")  # longer than the look-back
    keep &= ~between("2026-10-24 23:20", "2026-10-24 23:59:50")
    ps[rng.random(n) < 0.001] = np.nan  # missing values
    tt[rng.random(n) < 0.0005] = 500.0  # impossible? no: counted as a reading
    ps[[5_000, 30_000, 30_001]] = 1e306  # kPa: finite, but too large to convert to SI
    (folder / "wide").mkdir(parents=True)
    wide = pa.table({
        "timestamp": pa.array(t[keep].as_unit("ns"), pa.timestamp("ns", tz="UTC")),
        "P1.PS": ps[keep], "P1.TT": tt[keep], "P1.FT": ft[keep], "P1.RUN": run[keep],
    })  # fmt: skip
    pq.write_table(wide, folder / "wide" / "p1.parquet", row_group_size=ROW_GROUP)
    # P2 in a long file with quality words, text values, duplicates and rows out of order
    ps2, tt2, ft2, run2 = _signals(rng, n, t)
    rows = []
    for tag, v in (("P2.PS", ps2), ("P2.TT", tt2), ("P2.FT", ft2), ("P2.RUN", run2)):
        vals = np.round(v, 3).astype(object)
        q = np.full(n, "ok", dtype=object)
        q[rng.random(n) < 0.002] = "bad"
        rows.append(pd.DataFrame({"tag": tag, "time": t, "value": vals.astype(str),
                                  "quality": q}))  # fmt: skip
    frame = pd.concat(rows, ignore_index=True)
    frame.loc[rng.choice(len(frame), 50, replace=False), "value"] = "Shutdown"
    again = np.sort(rng.choice(len(frame), 40, replace=False))  # a sample given twice
    frame = frame.iloc[np.sort(np.concatenate([np.arange(len(frame)), again]))]
    frame = frame.reset_index(drop=True)
    swap = rng.choice(len(frame) - 1, 30, replace=False)
    idx = np.arange(len(frame))
    idx[swap], idx[swap + 1] = idx[swap + 1], idx[swap]  # neighbours out of order
    frame = frame.iloc[idx].reset_index(drop=True)
    (folder / "long").mkdir()
    pq.write_table(pa.Table.from_pandas(frame, preserve_index=False),
                   folder / "long" / "p2.parquet", row_group_size=50_000)  # fmt: skip
    # P3 drawn by lines from a compressed record: points every 1-20 min
    (folder / "lines").mkdir()
    at = np.sort(rng.choice(n, n // 40, replace=False))
    ps3, tt3, ft3, _ = _signals(rng, n, t)
    parts = [pd.DataFrame({"tag": tag, "time": t[at], "value": v[at]})
             for tag, v in (("P3.PS", ps3), ("P3.TT", tt3), ("P3.FT", ft3))]  # fmt: skip
    pq.write_table(pa.Table.from_pandas(pd.concat(parts), preserve_index=False),
                   folder / "lines" / "p3.parquet", row_group_size=5_000)  # fmt: skip
    rows = [pump_row("P1"), pump_row("P2"), pump_row("P3", run_tag="")]
    (folder / "pumps.csv").write_text(PUMP_HEADER + "\n" + "\n".join(rows) + "\n")
    (folder / "curves.csv").write_text(CURVES)
    out = []
    for name, chunk in zip(("whole", "daily", "twice"), chunks, strict=True):
        (folder / f"{name}.toml").write_text(TOML.format(chunk=chunk))
        out.append(folder / f"{name}.toml")
    return out


@pytest.fixture(scope="module")
def plants(tmp_path_factory):
    """One plant, three plant files: in one piece, one chunk per local day, two days."""
    return _write(tmp_path_factory.mktemp("chunks"), (0, 100, 8640 * 2))


def _scan(path, monkeypatch=None):
    return screening.scan(path, keep_series=True, plot_buckets=300, processes=1)


def _same(a, b):
    for name in ("hours", "summary", "daily", "quality", "problems"):
        x, y = getattr(a, name), getattr(b, name)
        x = x.drop(columns=[c for c in x.columns if c == "file"], errors="ignore")
        pd.testing.assert_frame_equal(x, y, check_exact=True, obj=name)
    assert a.series.keys() == b.series.keys()
    for pid in a.series:
        pd.testing.assert_frame_equal(a.series[pid], b.series[pid], check_exact=True)
        pd.testing.assert_frame_equal(a.plots[pid], b.plots[pid], check_exact=True)
        for k in ("flow_edges", "npsha_edges", "hours"):
            np.testing.assert_array_equal(a.points[pid][k], b.points[pid][k])
    assert a.samples == b.samples


def test_chunks_are_used(plants, monkeypatch):
    """The tiny bound cuts each pump into one chunk per local day (six local days)."""
    whole, daily, twice = plants
    calls = []
    real = chunked.screen_pump
    monkeypatch.setattr(chunked, "screen_pump", lambda *a, **k: calls.append(a[6]) or real(*a, **k))
    screening.scan(daily, processes=1)
    assert len(calls) == 3 * 6  # 3 pumps, 6 local days (the first from 06:00)
    calls.clear()
    screening.scan(whole, processes=1)
    assert calls == []


@pytest.mark.parametrize("which", [1, 2])
def test_chunked_tables_equal_whole(plants, which):
    whole = _scan(plants[0])
    part = _scan(plants[which])
    # the test data must exercise what crosses a chunk edge
    q = whole.quality.set_index(["pump_id", "role"])
    assert q.loc[("P1", "suction"), "frozen"] > 0
    assert q.loc[("P1", "suction"), "gaps"] > 0
    assert q.loc[("P1", "suction"), "not_finite"] == 3  # the readings too large for SI
    assert q.loc[("P2", "suction"), "duplicates"] > 0
    assert q.loc[("P2", "suction"), "text_values"] > 0
    assert whole.quality["out_of_order"].sum() > 0
    s = whole.summary.set_index("pump_id")
    assert (s["longest_below_npsh3_hours"] > 0.5).all()  # across a local midnight
    _same(whole, part)


def test_chunk_reads_only_its_span(plants, monkeypatch):
    """A chunk decodes only the row groups that overlap its span (look-back and look-ahead
    included) and keeps only the rows inside it: the file is never read whole at once."""
    decoded = []
    real = pq.ParquetFile.read_row_groups

    def counting(self, groups, *a, **k):
        table = real(self, groups, *a, **k)
        decoded.append(table.num_rows)
        return table

    monkeypatch.setattr(pq.ParquetFile, "read_row_groups", counting)
    seen = []
    from screening.inputs import export_reader

    def recording(info, cols, span, tags=None):
        n = len(decoded)
        table, rows = real_rows(info, cols, span, tags)
        if info.path.name == "p1.parquet":
            t = table.column("timestamp").cast(pa.int64()).to_numpy()
            assert t.min() >= span[0] and t.max() < span[1]
            seen.append((span, decoded[n], table.num_rows))
        return table, rows

    real_rows = export_reader.read_parquet_rows
    monkeypatch.setattr(export_reader, "read_parquet_rows", recording)
    screening.scan(plants[1], pumps=["P1"], processes=1)
    assert len(seen) == 6  # one read per chunk
    rows_in_file = pq.ParquetFile(plants[1].parent / "wide" / "p1.parquet").metadata.num_rows
    for span, n_decoded, n_kept in seen:
        assert n_decoded <= n_kept + 2 * ROW_GROUP  # at most the two edge row groups' rest
        assert n_kept <= (span[1] - span[0]) / 10e9 + 1  # 10 s samples in the span
    assert sum(n for _, n, _ in seen) < 1.5 * rows_in_file


def test_whatif_sees_the_whole_pump_when_chunked(plants, tmp_path):
    """The what-if hook is given the whole pump's series (the chunks joined): same tables."""
    scenarios = tmp_path / "scenarios.toml"
    scenarios.write_text(
        '[[scenario]]\nname = "higher suction"\n  [[scenario.change]]\n  pumps = ["P*"]\n'
        '  suction_pressure_add = "20 kPa"\n  temperature_cap = "30 degC"\n'
    )
    a = screening.whatif(plants[0], scenarios)
    b = screening.whatif(plants[1], scenarios)
    assert not a.hours.empty and (a.hours["change_h"] != 0).any()
    for name in ("hours", "moves", "changes", "setpoints", "sensitivity"):
        pd.testing.assert_frame_equal(getattr(a, name), getattr(b, name), check_exact=True)


@pytest.mark.parametrize("failed_on", [None, "2026-10-27 03:00"])
def test_onset_is_the_same_when_chunked(plants, monkeypatch, failed_on):
    """``onset`` on a chunked pump, built chunk by chunk without the whole series: the same
    hours, episodes (with their drivers), drivers per day, daily residuals and finding."""
    from screening.onset import streamed

    a = screening.investigate(plants[0], "P1", "2026-10-22 06:00", "2026-10-28", failed_on)
    calls = []
    real = streamed.investigate_in_chunks
    monkeypatch.setattr(streamed, "investigate_in_chunks", lambda *x: calls.append(1) or real(*x))
    b = screening.investigate(plants[1], "P1", "2026-10-22 06:00", "2026-10-28", failed_on)
    assert calls == [1]
    assert len(a.episodes) > 1 and a.episodes["temperature_m"].notna().all()
    for name in ("hours", "episodes", "drivers", "daily"):
        pd.testing.assert_frame_equal(getattr(a, name), getattr(b, name), check_exact=True)
    assert a.onset == b.onset and a.ramp == b.ramp and a.finding == b.finding
    assert a.notes == b.notes


def test_an_ingested_dataset_is_chunked_too(plants, tmp_path):
    """The same plant ingested (``pumpscreen ingest``) and scanned from the dataset: chunked
    (one chunk per local day) and in one piece give the same tables."""
    from screening.inputs.ingest import ingest

    folder = plants[0].parent
    ingest(plants[0], tmp_path / "ds")
    tables = []
    for chunk in (0, 100):
        text = TOML.format(chunk=chunk)
        text = text[: text.index("[[exports]]")] + text[text.index("[policy]") :]
        text += f'\n[[exports]]\nlayout = "dataset"\npath = "{tmp_path / "ds"}"\n'
        text = text.replace('"pumps.csv"', f'"{folder / "pumps.csv"}"')
        text = text.replace('"curves.csv"', f'"{folder / "curves.csv"}"')
        (tmp_path / f"ds{chunk}.toml").write_text(text)
        plant = screening.load_plant(tmp_path / f"ds{chunk}.toml")
        index = open_exports(plant)
        win = [
            pd.Timestamp(x, tz="Europe/Berlin").value for x in ("2026-10-22 06:00", "2026-10-28")
        ]
        days = chunked.chunk_days(plant, index, plant.pumps["P1"], *win)
        assert days == (None if chunk == 0 else 1)
        tables.append(_scan(tmp_path / f"ds{chunk}.toml"))
    assert tables[0].quality["text_values"].sum() > 0
    _same(*tables)
