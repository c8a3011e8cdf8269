"""The screening window: its bounds as UTC instants and the edges of its local days."""

from __future__ import annotations

import numpy as np
import pandas as pd

from screening.inputs.plant import Plant


class WindowError(ValueError):
    """A screening window that cannot be used."""


def window_bounds(plant: Plant, start=None, end=None) -> tuple[pd.Timestamp, pd.Timestamp]:
    """The window [start, end) as UTC timestamps; dates without offset are site-local.

    Parameters
    ----------
    plant : Plant
    start, end : str, date or Timestamp, optional
        Window bounds; default to the plant file's ``[window]``.
    """
    start = start if start is not None else plant.settings.window.start
    end = end if end is not None else plant.settings.window.end
    if start is None or end is None:
        raise WindowError("no window: give --from and --to, or [window] start and end")
    out = []
    for name, value in (("start", start), ("end", end)):
        try:
            ts = pd.Timestamp(value)
        except (ValueError, TypeError) as exc:
            raise WindowError(f"window {name} {value!r} is not a date such as 2026-10-01") from exc
        if ts.tzinfo is None:
            try:
                ts = ts.tz_localize(plant.timezone, ambiguous="raise", nonexistent="raise")
            except Exception as exc:
                raise WindowError(
                    f"window {name} {value} is not a single instant in {plant.timezone} "
                    "(a clock change); give it with an offset"
                ) from exc
        out.append(ts.tz_convert("UTC"))
    if out[1] <= out[0]:
        raise WindowError(f"window end {end} is not after its start {start}")
    return out[0], out[1]


def day_edges(start: pd.Timestamp, end: pd.Timestamp, tz: str) -> np.ndarray:
    """Edges of the window's local days [ns since the epoch, UTC]: the window start, every
    local midnight inside the window and the window end."""
    local_start = start.tz_convert(tz)
    first = local_start.normalize()
    days = pd.date_range(first, end.tz_convert(tz).normalize() + pd.Timedelta(days=1), freq="D")
    edges = days.tz_convert("UTC").as_unit("ns").asi8
    inner = edges[(edges > start.value) & (edges < end.value)]
    return np.concatenate(([start.value], inner, [end.value])).astype(np.int64)
