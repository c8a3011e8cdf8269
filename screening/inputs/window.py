"""The screening window: its bounds as UTC instants and the edges of its local days."""

from __future__ import annotations

import datetime as dt
import re

import numpy as np
import pandas as pd

from screening.inputs.plant import Plant


class WindowError(ValueError):
    """A screening window that cannot be used."""


#: ISO 8601 calendar dates, optionally with a time (``T`` or, as RFC 3339 allows, a space) and
#: an offset. Nothing else is accepted for a window: ``01.10.2026`` or ``10/01/2026`` can be
#: read two ways, and a window read the wrong way screens the wrong month.
_ISO = re.compile(
    r"^\d{4}-\d{2}-\d{2}"
    r"(?:[T ]\d{2}:\d{2}(?::\d{2}(?:\.\d{1,9})?)?)?"
    r"(?:Z|[+-]\d{2}:?\d{2})?$"
)
ISO_EXAMPLES = "2026-10-01, 2026-10-01T06:00 or 2026-10-01T06:00+01:00"


def check_iso(value: str, name: str = "date") -> str:
    """``value`` unchanged when it is an ISO 8601 date or date and time; else a
    :class:`WindowError` that gives the ISO form (ISO 8601-1:2019, calendar date and time)."""
    if not _ISO.match(value.strip()):
        raise WindowError(
            f"{name} {value!r} is not an ISO 8601 date; write it as {ISO_EXAMPLES} "
            "(year-month-day, so that it cannot be read two ways)"
        )
    return value.strip()


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
        if isinstance(value, str):
            value = check_iso(value, f"window {name}")
        elif not isinstance(value, dt.date | pd.Timestamp):
            raise WindowError(f"window {name} {value!r} is not a date such as 2026-10-01")
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


def local_midnights(dates: pd.DatetimeIndex, tz: str) -> np.ndarray:
    """The instants at which local calendar days begin [ns since the epoch, UTC].

    ``dates`` are naive calendar dates (midnight wall-clock times). A day begins at its local
    midnight; where the clock jumps over midnight (a nonexistent midnight, as at the clock
    changes of America/Santiago, Atlantic/Azores, America/Havana or Africa/Cairo) it begins at
    the first instant that exists after the jump, and where midnight occurs twice (the clock
    set back over it) at the first of the two.
    """
    n = len(dates)
    if n == 0:
        return np.empty(0, dtype=np.int64)
    edges = [
        dates.tz_localize(tz, ambiguous=np.full(n, flag), nonexistent="shift_forward")
        .as_unit("ns")
        .asi8
        for flag in (True, False)
    ]
    return np.minimum(edges[0], edges[1]).astype(np.int64)


def local_day_starts(times: pd.Series, tz: str) -> pd.Series:
    """The start of each instant's local day (a time-zone-aware Series in ``tz``), by
    :func:`local_midnights`: never an error at a clock change over midnight."""
    wall = times.dt.tz_convert(tz).dt.tz_localize(None).dt.normalize()
    codes, days = pd.factorize(wall)
    starts = pd.to_datetime(local_midnights(pd.DatetimeIndex(days), tz), utc=True)
    out = starts.tz_convert(tz)[codes]
    return pd.Series(out, index=times.index)


def day_edges(start: pd.Timestamp, end: pd.Timestamp, tz: str) -> np.ndarray:
    """Edges of the window's local days [ns since the epoch, UTC]: the window start, every
    local midnight inside the window and the window end.

    Local days begin as :func:`local_midnights` says, so a window across a clock change at
    midnight has one day edge per local day, never an error.
    """
    first = start.tz_convert(tz)
    last = end.tz_convert(tz) + pd.Timedelta(days=1)
    dates = pd.date_range(first.date(), last.date(), freq="D")  # naive calendar dates
    edges = local_midnights(dates, tz)
    inner = edges[(edges > start.value) & (edges < end.value)]
    return np.concatenate(([start.value], inner, [end.value])).astype(np.int64)
