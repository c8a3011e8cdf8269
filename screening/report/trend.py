"""Month by month: each pump's hours below the guidance in earlier reports and in this one.

``--compare-to`` names earlier report folders, or folders holding them. Each report counts
for the month its window starts in (the site's time zone, from its ``run.json``); where two
reports start in the same month the one written last counts. The overview draws each pump's
months as a row of small bars (an inline SVG, its numbers in the tooltip) and the table
``monthly_hours`` holds them.
"""

from __future__ import annotations

import html
import json
from pathlib import Path

import pandas as pd

#: Columns kept from each report's summary [h].
COLUMNS = ("below_npsh3_hours", "below_guidance_hours")
#: Size of a month's bar and the gap after it, and the height of the trend [px].
BAR, GAP, HEIGHT = 7, 2, 18


def report_folders(paths: list[Path]) -> list[Path]:
    """The report folders named by ``paths``: each path is a report (it holds
    ``summary.parquet``) or a folder whose sub-folders are reports.

    Raises
    ------
    FileNotFoundError
        When a path is neither (its name in the message).
    """
    found: list[Path] = []
    for p in paths:
        p = Path(p)
        if (p / "summary.parquet").is_file():
            found.append(p)
            continue
        inner = sorted(q for q in p.iterdir() if (q / "summary.parquet").is_file()) if (
            p.is_dir()
        ) else []  # fmt: skip
        if not inner:
            raise FileNotFoundError(
                f"{p}: no summary.parquet in it or in its sub-folders (is it a pumpscreen "
                "report, or a folder of them?)"
            )
        found += inner
    return list(dict.fromkeys(found))


def _month(start_utc: str, tz: str) -> str:
    return pd.Timestamp(start_utc).tz_convert(tz).strftime("%Y-%m")


def history(folders: list[Path], tz: str) -> pd.DataFrame:
    """Hours below NPSH3 and below the guidance [h] per pump and month of the earlier reports
    in ``folders`` (columns ``pump_id``, ``month``, the :data:`COLUMNS`, ``report``,
    ``written_utc``), one report per month (the last written)."""
    frames = []
    for folder in folders:
        run = json.loads((folder / "run.json").read_text(encoding="utf-8"))
        summary = pd.read_parquet(folder / "summary.parquet")
        cols = [c for c in COLUMNS if c in summary]
        part = summary[["pump_id", *cols]].copy()
        part["month"] = _month(run["window_start_utc"], tz)
        part["report"] = str(folder)
        part["written_utc"] = run.get("written_utc", "")
        frames.append(part)
    if not frames:
        return pd.DataFrame(columns=["pump_id", "month", *COLUMNS, "report", "written_utc"])
    past = pd.concat(frames, ignore_index=True).sort_values("written_utc")
    last = past.groupby("month")["report"].transform("last")
    return past[past["report"] == last].reset_index(drop=True)


def monthly_table(past: pd.DataFrame, summary: pd.DataFrame, month: str) -> pd.DataFrame:
    """The earlier months and this report's ``month`` (which replaces an earlier report of
    the same month), sorted by pump and month."""
    now = summary[["pump_id", *COLUMNS]].assign(month=month, report="this report")
    past = past[past["month"] != month].drop(columns=["written_utc"], errors="ignore")
    table = pd.concat([past, now], ignore_index=True)
    return table[["pump_id", "month", *COLUMNS, "report"]].sort_values(["pump_id", "month"])


def sparkline(months: list[str], hours: dict[str, float], top: float) -> str:
    """A pump's hours below the guidance per month as small bars (inline SVG): one bar per
    month of ``months`` (a missing month as a short grey tick, a month without such hours as
    a flat blue bar), ``top`` hours at full height (the same for every pump, so bars compare
    down the table), this report's month last and outlined; the numbers in its tooltip."""
    parts, tips = [], []
    for i, m in enumerate(months):
        x = i * (BAR + GAP)
        h = hours.get(m)
        if h is None or pd.isna(h):
            parts.append(f'<rect x="{x}" y="{HEIGHT - 1}" width="{BAR}" height="1" fill="#aaa"/>')
            tips.append(f"{m}: no report")
            continue
        tall = max(1.0, (HEIGHT - 1) * min(1.0, h / max(top, 1e-9)) if h > 0 else 0.0)
        stroke = ' stroke="#1d1d1d" stroke-width="1"' if i == len(months) - 1 else ""
        fill = "#c7761c" if h > 0 else "#2d5f8f"
        parts.append(
            f'<rect x="{x}" y="{HEIGHT - tall:.1f}" width="{BAR}" height="{tall:.1f}" '
            f'fill="{fill}"{stroke}/>'
        )
        tips.append(f"{m}: {h:.1f} h")
    width = len(months) * (BAR + GAP)
    title = html.escape("hours below the guidance per month; " + ", ".join(tips))
    return (
        f'<svg class="spark" width="{width}" height="{HEIGHT}" role="img" '
        f'aria-label="{title}"><title>{title}</title>{"".join(parts)}</svg>'
    )


def trend_cells(table: pd.DataFrame) -> dict[str, str]:
    """Each pump's trend (:func:`sparkline`) over every month of ``table``, scaled to the
    most hours of any pump and month."""
    months = sorted(table["month"].unique())
    top = float(table["below_guidance_hours"].max()) if len(table) else 0.0
    out = {}
    for pid, g in table.groupby("pump_id", sort=False):
        hours = dict(zip(g["month"], g["below_guidance_hours"], strict=True))
        out[str(pid)] = sparkline(months, hours, top)
    return out
