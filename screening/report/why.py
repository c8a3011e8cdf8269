"""Why a pump ranks where it does, in one line of the overview.

The worst time's inputs: in the plot bucket holding the pump's worst margin, each input's
value on the side that lowers the margin (the least suction pressure or vessel level, the
highest temperature, flow and speed) is set against the pump's running median (the median of
the running buckets' mid values) and measured in the input's usual spread (the 10th to 90th
percentile range of those mid values). The input furthest from its median in that direction
is named as the one that drove the worst margin: a screening pointer, not a split of the
margin (``pumpscreen onset`` splits the lost margin by input). Then the hours that the
ranking alone hides: below minimum flow, bad data (naming tags with frozen or impossible
values), no data, off the vendor curve, speed outside the scaling.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from screening.base.text import hours_text

#: Plot inputs and the side of each that lowers the margin: (column, label, kind, low side).
INPUTS = (
    ("suction_pressure_abs_pa", "suction pressure", "pressure", True),
    ("level_m", "vessel level", "length", True),
    ("temperature_k", "temperature", "temperature", False),
    ("flow_m3_s", "flow", "flow", False),
    ("speed_rpm", "speed", "speed", False),
)
#: Least spread of an input, as a fraction of its median's size (a steady input moved by a
#: hair is not a driver).
MIN_SPREAD = 0.01
#: Least hours of a count to name in the line [h].
MIN_HOURS = 0.05


@dataclass(frozen=True)
class WorstInput:
    """One input at a pump's worst time against its running median (SI values)."""

    input: str
    kind: str
    at_worst: float
    running_median: float
    spread: float
    score: float


def _candidates(plot: pd.DataFrame | None, worst_time) -> list[tuple]:
    """Each input of ``plot`` at the bucket holding ``worst_time``: (label, kind, low side,
    value on the side that lowers the margin, running buckets' mid values without NaN);
    empty without plot data or a worst time."""
    if plot is None or not len(plot) or worst_time is None or pd.isna(worst_time):
        return []
    # numpy arrays of the columns (pandas' indexing per value cost 4 ms a pump)
    times = plot["time"].to_numpy(dtype="datetime64[ns]")  # UTC
    when = np.datetime64(pd.Timestamp(worst_time).tz_convert("UTC").tz_localize(None), "ns")
    at = int(np.searchsorted(times, when, "right"))
    if at == 0:
        return []
    running = ~np.isnan(plot["npsha_m_min"].to_numpy(dtype=np.float64))
    out = []
    for col, label, kind, low_side in INPUTS:
        if f"{col}_min" not in plot:
            continue
        lo = plot[f"{col}_min"].to_numpy(dtype=np.float64)
        hi = plot[f"{col}_max"].to_numpy(dtype=np.float64)
        mid = ((lo + hi) / 2)[running]
        mid = mid[~np.isnan(mid)]
        value = lo[at - 1] if low_side else hi[at - 1]
        if len(mid) and not np.isnan(value):
            out.append((label, kind, low_side, value, mid))
    return out


def median_and_deciles(groups: list[np.ndarray]) -> np.ndarray:
    """``np.median`` and ``np.percentile(g, [10, 90])`` of each non-empty array ``g`` of
    ``groups`` (no NaN) at once, as rows (median, p10, p90), with numpy's own arithmetic: the
    groups sorted side by side, the median the middle value or the mean of the middle two,
    the percentiles numpy's default ("linear", Hyndman & Fan 1996 method 7) interpolation
    between neighbours (two calls per group and input cost 0.3 s on a 500-pump plant)."""
    n = np.array([len(g) for g in groups], dtype=np.intp)
    table = np.full((len(groups), int(n.max(initial=1))), np.nan)
    for i, g in enumerate(groups):
        table[i, : len(g)] = g
    table.sort(axis=1)  # the NaN padding last
    rows = np.arange(len(groups))
    half = n // 2
    middle = table[rows, half]
    below = table[rows, np.maximum(half - 1, 0)]
    median = np.where(n % 2 == 1, middle, (below + middle) / 2)
    # numpy's _quantile: virtual index (n - 1) q, its floor and the next; at or past the last
    # value both are the last (numpy's index -1, whose gamma is then the index + 1)
    q = np.true_divide(np.array([10, 90]), 100)
    virtual = (n[:, None] - 1) * q[None, :]
    past = virtual >= (n[:, None] - 1)
    prev = np.where(past, -1, np.floor(virtual)).astype(np.intp)
    gamma = virtual - prev
    prev = np.where(past, n[:, None] - 1, prev)
    nxt = np.where(past, n[:, None] - 1, prev + 1)
    a, b = table[rows[:, None], prev], table[rows[:, None], nxt]
    diff = b - a
    deciles = np.where(gamma >= 0.5, b - diff * (1 - gamma), a + diff * gamma)  # numpy's _lerp
    return np.column_stack([median, deciles])


def _ranked(candidates: list[tuple], stats: np.ndarray) -> list[WorstInput]:
    """The candidates of one pump with their (median, p10, p90), by score, largest first."""
    out = []
    for (label, kind, low_side, value, _), (median, p10, p90) in zip(
        candidates, stats, strict=True
    ):
        median = float(median)
        spread = max(float(p90 - p10), MIN_SPREAD * abs(median), 1e-12)
        toward = (median - value) if low_side else (value - median)
        out.append(WorstInput(label, kind, float(value), median, spread, float(toward / spread)))
    return sorted(out, key=lambda w: -w.score)


def worst_inputs(plot: pd.DataFrame | None, worst_time) -> list[WorstInput]:
    """Each input of ``plot`` at the bucket holding ``worst_time`` against its running
    median, by score (distance from the median toward less margin, in spreads), largest
    first; empty without plot data or a worst time."""
    found = _candidates(plot, worst_time)
    if not found:
        return []
    return _ranked(found, median_and_deciles([c[-1] for c in found]))


def _input_text(w: WorstInput, units) -> str:
    unit = units.label(w.kind)
    value = float(units.convert(w.at_worst, w.kind))
    median = float(units.convert(w.running_median, w.kind))
    digits = 0 if abs(median) >= 100 else 1 if abs(median) >= 10 else 2
    return f"{w.input} {value:.{digits}f} {unit} (median {median:.{digits}f})"


def _bad_rows(quality: pd.DataFrame) -> pd.DataFrame:
    """Rows of the quality table of tags with frozen or impossible values, or bad-quality or
    text samples."""
    bad = quality[["frozen", "out_of_range", "bad_quality", "text_values"]].sum(axis=1) > 0
    return quality[bad]


def problem_tags(quality: pd.DataFrame, pump_id: str) -> list[str]:
    """Tags of a pump with frozen or impossible values, or bad-quality or text samples."""
    return [str(t) for t in _bad_rows(quality[quality["pump_id"] == pump_id])["tag"]]


def problem_tags_by_pump(quality: pd.DataFrame) -> dict[str, list[str]]:
    """:func:`problem_tags` of every pump at once (pump id -> tags; pumps without any left
    out)."""
    bad = _bad_rows(quality)
    return {str(pid): [str(t) for t in g["tag"]] for pid, g in bad.groupby("pump_id", sort=False)}


def why_text(
    row: dict, plot: pd.DataFrame | None, quality: pd.DataFrame, units, ranked=None
) -> str:
    """The overview's one-line reason for a pump's place (see the module docstring);
    ``ranked``: the pump's :func:`worst_inputs` where already known."""
    parts = []
    below = row["below_guidance_hours"] > 0 or (
        pd.notna(row["worst_margin_to_guidance_m"]) and row["worst_margin_to_guidance_m"] < 0
    )
    if below and pd.notna(row.get("worst_time")):
        when = pd.Timestamp(row["worst_time"]).strftime("%d %b %H:%M")
        if ranked is None:
            ranked = worst_inputs(plot, row["worst_time"])
        if ranked and ranked[0].score > 0:
            parts.append(f"worst {when}: {_input_text(ranked[0], units)}")
        else:
            parts.append(f"worst {when}")
    counts = (
        ("below_min_flow_hours", "below minimum flow"),
        ("bad_data_hours", "bad data"),
        ("no_data_hours", "no data"),
        ("off_curve_hours", "off the vendor curve"),
        ("speed_outside_scaling_hours", "speed outside the scaling"),
    )
    for col, label in counts:
        h = float(row.get(col, 0.0) or 0.0)
        if h >= MIN_HOURS:
            text = f"{hours_text(h, True)} {label}"
            if col == "bad_data_hours":
                tags = problem_tags(quality, row["pump_id"])
                text += f" ({', '.join(tags[:2])})" if tags else ""
            parts.append(text)
    return "; ".join(parts)


def worst_inputs_by_pump(summary: pd.DataFrame, plots: dict) -> dict[str, list[WorstInput]]:
    """Every pump's :func:`worst_inputs`, by pump id (worked out once for the table and the
    overview, the medians and spreads of every pump and input in one go)."""
    times = summary["worst_time"] if "worst_time" in summary else [None] * len(summary)
    found = {
        pid: _candidates(plots.get(pid), when)
        for pid, when in zip(summary["pump_id"], times, strict=True)
    }
    groups = [c[-1] for cs in found.values() for c in cs]
    stats = median_and_deciles(groups) if groups else np.empty((0, 3))
    out, at = {}, 0
    for pid, cs in found.items():
        out[pid] = _ranked(cs, stats[at : at + len(cs)]) if cs else []
        at += len(cs)
    return out


def worst_inputs_table(result, pages_plots: dict, ranked: dict | None = None) -> pd.DataFrame:
    """Every pump's inputs at its worst time against their running medians (SI), the tidy
    table behind the overview's reasons; ``ranked``: :func:`worst_inputs_by_pump` where
    already known."""
    if ranked is None:
        ranked = worst_inputs_by_pump(result.summary, pages_plots)
    rows = []
    for row in result.summary.to_dict("records"):
        for w in ranked[row["pump_id"]]:
            rows.append({
                "pump_id": row["pump_id"], "worst_time": str(row["worst_time"]),
                "input": w.input, "unit": _SI_UNITS[w.kind], "at_worst": w.at_worst,
                "running_median": w.running_median, "spread_p10_p90": w.spread,
                "spreads_toward_less_margin": w.score,
            })  # fmt: skip
    cols = ["pump_id", "worst_time", "input", "unit", "at_worst", "running_median",
            "spread_p10_p90", "spreads_toward_less_margin"]  # fmt: skip
    return pd.DataFrame(rows, columns=cols)


_SI_UNITS = {"pressure": "Pa abs", "length": "m", "temperature": "K", "flow": "m3/s",
             "speed": "rpm"}  # fmt: skip
