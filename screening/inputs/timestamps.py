"""Timestamps from historian exports to UTC nanoseconds.

Policy (documented in the README):
- A timestamp with an offset (``2026-10-25T02:30:00+01:00``, ``...Z``) or a time-zone-aware
  Parquet column is honoured as written.
- A timestamp without one is local time of the site's time zone.
- When clocks go back, local times in the repeated hour happen twice. Within one file (and, for
  the long layout, one tag) the first appearance of such a clock time is read as the earlier
  instant (summer time) and any later appearance as the later instant (winter time). A file that
  holds only the second pass of the repeated hour would be misread: export with offsets or UTC
  where the historian allows it.
- When clocks go forward, the skipped local hour does not exist. Such a timestamp cannot be
  placed in time: it is counted as a bad timestamp with its file and row, never moved.
- A timestamp that cannot be parsed at all is counted the same way.
- ISO 8601 is read as it is. A date whose day and month are both numbers ahead of the year
  (``03.04.2026``, ``03/04/2026``, ``03-04-2026``, with or without a time) can be read two
  ways, so it is read only with the order declared for its file (``date_order = "day_first"``
  or ``"month_first"`` in the ``[[exports]]`` block). Without a declared order such rows are
  not placed in time (counted as bad timestamps and the file named, with both readings of an
  example); rows that are no date in the declared order (a 13th month) are bad timestamps too.
  Two-digit years are 2000-2099. Other layouts that name the month in words or put the year
  first (``Oct 1 2026``, ``2026/10/01``) are read as written.
- A trailing ``UTC`` or ``GMT`` is an offset of zero; any other zone name (``CET``, ``EST``:
  abbreviations are ambiguous) cannot be placed and is a bad timestamp.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd

_OFFSET = r"(?:[Zz]|[+-]\d\d:?\d\d)\s*$"
_ZERO_ZONE = r"\s*(?:UTC|GMT)\s*$"
#: Day and month as numbers ahead of the year, one separator, an optional time of day.
_DAY_MONTH = (
    r"^\s*(?P<a>\d{1,2})(?P<sep>[./-])(?P<b>\d{1,2})(?P=sep)(?P<y>\d{4}|\d{2})"
    r"(?:(?:[ T]+)(?P<H>\d{1,2}):(?P<M>\d{2})(?::(?P<S>\d{2})(?:[.,](?P<f>\d{1,9}))?)?"
    r"\s*(?P<ampm>[AaPp][Mm])?)?\s*$"
)
#: Declared orders of day and month (``date_order`` of an ``[[exports]]`` block).
DATE_ORDERS = ("day_first", "month_first")


@dataclass
class RepeatedHour:
    """The clock times of the repeated hour already met in a file (with their tag, for the long
    layout), carried from one block of a file's rows to the next so that a file read in blocks
    resolves the repeated hour exactly as when it is read whole."""

    keys: pd.Index | None = None


@dataclass
class DateNotes:
    """Rows whose day-month dates could not be placed, by why (positions in the column)."""

    undeclared: int = 0  # day-month dates in a file without a declared order
    undeclared_first: int = -1
    undeclared_example: str = ""
    contradicting: int = 0  # no date in the declared order (a 13th month, a 31 April)
    contradicting_first: int = -1
    contradicting_example: str = ""

    def message(self, path, label: str, rows, order: str | None) -> str | None:
        """One line naming the file, the first row and an example (both readings when
        undeclared); None when nothing was refused. ``rows`` maps positions to rows."""
        if self.undeclared:
            return (
                f"{path}: dates like {self.undeclared_example!r} "
                f"(first at {label} {rows[self.undeclared_first]}) read as "
                f'{two_readings(self.undeclared_example)}; set date_order = "day_first" or '
                '"month_first" in its [[exports]] block. Until then these rows are not placed '
                "in time (bad timestamps), never guessed"
            )
        if self.contradicting:
            return (
                f"{path}: rows such as {self.contradicting_example!r} (first at {label} "
                f"{rows[self.contradicting_first]}) are no date read {order.replace('_', ' ')} "
                "(the declared date_order): bad timestamps"
            )
        return None


def two_readings(text: str) -> str:
    """Both readings of a day-month date, e.g. "3 April 2026 (day first) or 4 March 2026
    (month first)"; a reading that is no date says so."""
    m = pd.Series([text]).str.extract(_DAY_MONTH).iloc[0]
    out = []
    for order in DATE_ORDERS:
        day, month = (m["a"], m["b"]) if order == "day_first" else (m["b"], m["a"])
        try:
            d = pd.Timestamp(year=_year(int(m["y"])), month=int(month), day=int(day))
            out.append(f"{d.day} {d.strftime('%B %Y')} ({order.replace('_', ' ')})")
        except (ValueError, TypeError):
            out.append(f"no date ({order.replace('_', ' ')})")
    return " or ".join(out)


def _year(y: int) -> int:
    return y + 2000 if y < 100 else y


def parse_times(
    raw: pd.Series,
    timezone: str,
    groups: pd.Series | None = None,
    date_order: str | None = None,
    notes: DateNotes | None = None,
    repeated: RepeatedHour | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Parse a column of timestamps to UTC.

    Parameters
    ----------
    raw : pandas.Series
        Strings, or datetime64 values (naive or tz-aware), in file order.
    timezone : str
        IANA name of the site time zone, applied to timestamps that carry no offset.
    groups : pandas.Series, optional
        Tag of each row in a long-layout file: the repeated hour is resolved per tag.
    date_order : {None, "day_first", "month_first"}
        The declared order of day-month dates (``03/04/2026``); without one they are not
        placed (see the module notes).
    notes : DateNotes, optional
        Filled with the day-month rows that could not be placed and why.
    repeated : RepeatedHour, optional
        The repeated hour's clock times met in earlier blocks of the same file (updated):
        given when a file is parsed a block of rows at a time.

    Returns
    -------
    (times, ok)
        ``times``: int64 nanoseconds since the Unix epoch, UTC (0 where not ok);
        ``ok``: bool, False where the timestamp could not be placed in time.
    """
    n = len(raw)
    raw = raw.reset_index(drop=True)  # positions, for the notes
    if n == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=bool)
    if isinstance(raw.dtype, pd.DatetimeTZDtype):
        utc = raw.dt.tz_convert("UTC")
        return _to_ns(utc)
    if pd.api.types.is_datetime64_dtype(raw.dtype):
        return _localise(pd.Series(raw.to_numpy()), timezone, groups, repeated)
    text = raw.astype("string").str.strip().str.replace(_ZERO_ZONE, "+00:00", regex=True)
    has_offset = text.str.contains(_OFFSET, regex=True, na=False).to_numpy()
    times = np.zeros(n, dtype=np.int64)
    ok = np.zeros(n, dtype=bool)
    if has_offset.any():
        parsed = pd.to_datetime(text[has_offset], utc=True, errors="coerce", format="ISO8601")
        t, k = _to_ns(parsed)
        times[has_offset], ok[has_offset] = t, k
    naive = ~has_offset
    if naive.any():
        parsed = _parse_naive(text[naive], date_order, notes)
        sub = None if groups is None else groups[naive].reset_index(drop=True)
        t, k = _localise(parsed, timezone, sub, repeated)
        times[naive], ok[naive] = t, k
    return times, ok


def _parse_naive(
    text: pd.Series, date_order: str | None = None, notes: DateNotes | None = None
) -> pd.Series:
    """Naive timestamps: ISO 8601 first, then day-month dates in the declared order only,
    then other layouts (month in words, year first)."""
    parsed = _ns(pd.to_datetime(text, errors="coerce", format="ISO8601"))
    missing = (parsed.isna() & text.notna()).to_numpy()
    if missing.any():
        rest = text[missing]
        parts = rest.str.extract(_DAY_MONTH)
        day_month = parts["a"].notna().to_numpy()
        if day_month.any():
            dm = rest[day_month]
            if date_order is None:
                if notes is not None:
                    _note(notes, "undeclared", dm, _ambiguous_example(parts[day_month]))
                parsed[dm.index] = pd.NaT  # never guessed
            else:
                placed = _parse_day_month(parts[day_month], date_order)
                parsed[dm.index] = placed.to_numpy()
                wrong = placed.isna().to_numpy()
                if notes is not None and wrong.any():
                    _note(notes, "contradicting", dm[wrong], 0)
        other = rest[~day_month]
        if len(other):
            parsed[other.index] = _parse_other(other, False).to_numpy()
    return parsed.reset_index(drop=True)


def _note(notes: DateNotes, kind: str, rows: pd.Series, example: int) -> None:
    if getattr(notes, kind) == 0:
        setattr(notes, f"{kind}_first", int(rows.index[0]))
        setattr(notes, f"{kind}_example", str(rows.iloc[example]))
    setattr(notes, kind, getattr(notes, kind) + len(rows))


def _ambiguous_example(parts: pd.DataFrame) -> int:
    """Position of the first date both of whose readings are dates (else the first)."""
    a = pd.to_numeric(parts["a"]).to_numpy()
    b = pd.to_numeric(parts["b"]).to_numpy()
    both = np.flatnonzero((a >= 1) & (a <= 12) & (b >= 1) & (b <= 12) & (a != b))
    return int(both[0]) if len(both) else 0


def _parse_day_month(parts: pd.DataFrame, date_order: str) -> pd.Series:
    """Day-month dates (groups of :data:`_DAY_MONTH`) in the declared order; NaT where that
    order gives no date or the time of day is impossible."""
    if date_order not in DATE_ORDERS:
        raise ValueError(f"date_order {date_order!r} is not one of {', '.join(DATE_ORDERS)}")
    a, b = pd.to_numeric(parts["a"]), pd.to_numeric(parts["b"])
    day, month = (a, b) if date_order == "day_first" else (b, a)
    year = pd.to_numeric(parts["y"])
    year = year.where(year >= 100, year + 2000)
    hour = pd.to_numeric(parts["H"]).fillna(0)
    ampm = parts["ampm"].fillna("").str.lower()
    bad_12h = (ampm != "") & ((hour < 1) | (hour > 12))
    hour = hour.where(~(ampm == "am") | (hour != 12), 0)
    hour = hour.where(~(ampm == "pm") | (hour == 12), hour + 12)
    fields = pd.DataFrame(
        {
            "year": year, "month": month, "day": day, "hour": hour,
            "minute": pd.to_numeric(parts["M"]).fillna(0),
            "second": pd.to_numeric(parts["S"]).fillna(0),
        }
    )  # fmt: skip
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        out = pd.to_datetime(fields, errors="coerce")
    fraction = parts["f"].fillna("").str.ljust(9, "0").replace("000000000", "0")
    out = out + pd.to_timedelta(pd.to_numeric(fraction.where(fraction != "", "0")), unit="ns")
    out[bad_12h.to_numpy()] = pd.NaT
    return _ns(out)


def _parse_other(text: pd.Series, dayfirst: bool) -> pd.Series:
    """Layouts other than ISO 8601, e.g. "25.10.2026 02:30" or "10/25/2026 02:30"; NaT where
    the text cannot be read or names a time zone (mixed zones make pandas raise)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # pandas warns when it infers a layout per element
        try:
            out = pd.to_datetime(text, errors="coerce", format="mixed", dayfirst=dayfirst)
            if out.dt.tz is None:
                return _ns(out)
        except (ValueError, OverflowError, TypeError):
            pass
        return pd.Series([_parse_one(t, dayfirst) for t in text], index=text.index,
                         dtype="datetime64[ns]")  # fmt: skip


def _parse_one(text, dayfirst: bool):
    try:
        ts = pd.to_datetime(text, errors="coerce", dayfirst=dayfirst)
    except (ValueError, OverflowError, TypeError):
        return pd.NaT
    if ts is pd.NaT or ts.tzinfo is not None:
        return pd.NaT  # a zone name other than UTC/GMT: cannot be placed
    if not (pd.Timestamp.min <= ts <= pd.Timestamp.max):
        return pd.NaT  # beyond what nanoseconds since 1970 in 64 bits can hold
    return ts.as_unit("ns")


def _ns(parsed: pd.Series) -> pd.Series:
    """Datetimes in nanoseconds; those beyond 1677-2262 (int64 nanoseconds) become NaT."""
    try:
        return parsed.dt.as_unit("ns")
    except (pd.errors.OutOfBoundsDatetime, OverflowError):
        lo, hi = pd.Timestamp.min, pd.Timestamp.max
        if parsed.dt.tz is not None:
            lo, hi = lo.tz_localize("UTC"), hi.tz_localize("UTC")
        return parsed.where((parsed >= lo) & (parsed <= hi)).dt.as_unit("ns")


def _to_ns(parsed: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    parsed = _ns(parsed)
    values = parsed.dt.tz_convert("UTC") if parsed.dt.tz is not None else parsed
    ok = values.notna().to_numpy()
    ns = values.to_numpy(dtype="datetime64[ns]", na_value=np.datetime64(0, "ns"))
    return ns.view(np.int64).copy(), ok


def _localise(
    naive: pd.Series,
    timezone: str,
    groups: pd.Series | None = None,
    repeated: RepeatedHour | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Localise naive local times (file order kept) to UTC; see the module notes."""
    naive = pd.Series(pd.to_datetime(naive.to_numpy(), errors="coerce"))
    # Which local times are ambiguous: localise both ways and compare.
    early = naive.dt.tz_localize(timezone, ambiguous=True, nonexistent="NaT")
    late = naive.dt.tz_localize(timezone, ambiguous=False, nonexistent="NaT")
    ambiguous = ((early != late) & early.notna()).to_numpy()
    if ambiguous.any():
        clock = naive.to_numpy()[ambiguous]
        if groups is None:
            keys = pd.Index(clock)
        else:
            keys = pd.MultiIndex.from_arrays([groups.to_numpy()[ambiguous], clock])
        first = ~keys.duplicated(keep="first")
        if repeated is not None:
            if repeated.keys is not None:
                first &= ~keys.isin(repeated.keys)
            met = keys[first]
            repeated.keys = met if repeated.keys is None else repeated.keys.append(met)
        choice = np.ones(len(naive), dtype=bool)
        choice[ambiguous] = first
        local = early.where(~ambiguous | choice, late)
    else:
        local = early
    return _to_ns(local)
