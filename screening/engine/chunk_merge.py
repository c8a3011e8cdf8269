"""The time chunks of one pump (:mod:`screening.engine.chunked`) joined into the result of the
whole window, to the last bit as if it had been screened in one piece.

Hours per day are the chunks' days one after the other (a chunk holds whole local days); the
window's hours are their sum as in one piece. Other hours [h] of a chunk are exact whole
nanoseconds divided once (a chunk is shorter than 2**50 ns), so they are summed as
nanoseconds and divided once. Worst values are the least over the chunks, the first on a tie.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from screening.engine.calculator import NS_PER_HOUR, PumpResult
from screening.engine.severity import Severity
from screening.inputs.quality import gaps_summary
from screening.inputs.tagdata import TagQuality


def _ns(hours: float) -> int:
    """The whole nanoseconds behind a chunk's hours [h] (exact below 2**50 ns)."""
    return round(hours * NS_PER_HOUR)


def _hours(ns: int) -> float:
    """Hours [h] of a sum of nanoseconds, divided as the calculator divides its sums."""
    return float(np.int64(ns) / NS_PER_HOUR)


def merge_results(pump_id: str, parts: list[PumpResult], start_ns: int, end_ns: int,
                  keep: bool) -> PumpResult:  # fmt: skip
    """One :class:`PumpResult` of the window [start_ns, end_ns) [ns] from its chunks' (in
    time order); ``keep``: join their per-piece series too."""
    daily = np.concatenate([p.daily for p in parts])
    out = PumpResult(pump_id, daily.sum(axis=0), daily, (end_ns - start_ns) / NS_PER_HOUR)
    out.region_daily = np.concatenate([p.region_daily for p in parts])
    out.region_hours = out.region_daily.sum(axis=0)
    for p in parts:
        if p.worst_time is not None and (out.worst_time is None or p.worst_ratio < out.worst_ratio):
            out.worst_ratio, out.worst_time = p.worst_ratio, p.worst_time
        for name in ("worst_margin_m", "worst_guidance_margin_m"):
            value = getattr(p, name)
            if not np.isnan(value) and not getattr(out, name) <= value:
                setattr(out, name, value)
        if out.below_vapour_first is None:
            out.below_vapour_first = p.below_vapour_first
    for name in ("speed_outside_hours", "below_vapour_hours", "baro_fallback_hours"):
        total = sum(_ns(getattr(p, name)) for p in parts)
        if any(getattr(p, name) for p in parts):
            setattr(out, name, _hours(total))
    out.severity = merge_severity([p.severity for p in parts])
    plots = [p.plot for p in parts if p.plot is not None]
    if plots:
        out.plot = merge_plots(plots)
    if keep:
        series = [p.series for p in parts if p.series is not None]
        out.series = pd.concat(series, ignore_index=True) if len(series) > 1 else series[0]
    return out


def merge_severity(parts: list[Severity]) -> Severity:
    """The severity of the whole window from its chunks': depth integrals summed over the
    quarter hours of all chunks, stretches below NPSH3 joined across the chunk edges."""
    out = Severity()
    found = [p.parts for p in parts if p.parts is not None]
    if not found:
        return out
    out.below_npsh3_m_h = float(np.sum(np.concatenate([f.npsh3_blocks for f in found])))
    out.below_guidance_m_h = float(np.sum(np.concatenate([f.guidance_blocks for f in found])))
    runs: list[float] = []
    starts: list[int] = []
    open_run = False
    for p in parts:
        f = p.parts
        if f is None or len(f.run_ns) == 0:
            open_run = False
            continue
        ns, st = list(f.run_ns), list(f.run_start)
        if open_run and f.head:  # the stretch goes on over the chunk edge
            runs[-1] += ns.pop(0)
            st.pop(0)
        runs += ns
        starts += st
        open_run = f.tail
    if runs:
        best = int(np.argmax(runs))
        out.longest_below_npsh3_h = float(runs[best] / NS_PER_HOUR)
        out.longest_start = pd.Timestamp(int(starts[best]), tz="UTC")
    return out


def merge_plots(plots: list[pd.DataFrame]) -> pd.DataFrame:
    """Plot buckets of the chunks as one frame: a bucket across a chunk edge keeps the least
    minimum and the greatest maximum of its two parts."""
    frame = pd.concat(plots, ignore_index=True)
    if not frame["time"].duplicated().any():
        return frame
    how = {c: ("min" if c.endswith("_min") else "max") for c in frame.columns if c != "time"}
    return frame.groupby("time", sort=False, as_index=False).agg(how)[list(frame.columns)]


#: The kinds of problem the readers note, in the order they note them in one file
#: (:func:`screening.inputs.tagdata.add_chunk`), then the duplicates (noted when the files
#: are merged) and the kinds noted in SI (:func:`screening.engine.prepare.prepare_tag`).
_READER_KINDS = (
    "bad timestamp", "text value", "row with a wrong number of fields",
    "missing or infinite value", "bad quality", "out of order",
)  # fmt: skip
_LATER_KINDS = ("duplicate time", "not_finite", "out_of_range")
_COUNTS = ("samples", "text_values", "bad_quality", "not_finite", "bad_timestamps",
           "duplicates", "out_of_order", "frozen", "out_of_range", "malformed_rows")  # fmt: skip


def merge_quality(parts: list[dict], gaps: dict, start_ns: int, index) -> dict:
    """Each role's :class:`TagQuality` over the window from its chunks' (in time order):
    counts summed, the first place of each problem as the readers meet them over the whole
    files (the first file in the index's order, then the first chunk), the gaps of the
    stretches found chunk by chunk (``gaps``: role -> list of stretches)."""
    position = {str(f.path): i for i, f in enumerate(index.files)}
    for ds in {id(d): d for d in index._datasets.values()}.values():  # the raw files ingested
        position.update({str(src["path"]): len(position) + j for j, src in enumerate(ds.sources)})
    out = {}
    for role in parts[0]:
        qs = [p[role] for p in parts if role in p]
        q = TagQuality(qs[0].tag)
        for name in _COUNTS:
            setattr(q, name, sum(getattr(x, name) for x in qs))
        for x in qs:
            for word, n in x.words.items():
                q.words[word] = q.words.get(word, 0) + n
        q.first_problem = _first_places(qs, position)
        found = gaps.get(role, [])
        if found:
            stretches = tuple(np.concatenate([f[k] for f in found]) for k in range(4))
            q.gaps, missing, q.longest_gaps = gaps_summary(stretches, start_ns)
            q.gap_hours = missing / NS_PER_HOUR
        out[role] = q
    return out


def _first_places(qs: list[TagQuality], position: dict) -> dict:
    """The first place of each kind of problem over the chunks, in the order of one read."""

    def file_of(where: str) -> int:
        hits = [i for path, i in position.items() if where.startswith(path + " ")]
        return min(hits, default=len(position))

    chosen: dict[str, tuple] = {}
    for x in qs:
        for kind, where in x.first_problem.items():
            rank = file_of(where) if kind in _READER_KINDS else 0
            if kind not in chosen or rank < chosen[kind][0]:
                chosen[kind] = (rank, where)

    def order(kind: str):
        if kind in _READER_KINDS:
            return (0, chosen[kind][0], _READER_KINDS.index(kind))
        return (1, 0, _LATER_KINDS.index(kind) if kind in _LATER_KINDS else 99)

    return {k: chosen[k][1] for k in sorted(chosen, key=order)}
