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
- Besides ISO 8601, a date written with dots is day first (``01.10.2026 03:00`` is the first of
  October) and one written with slashes month first (``10/01/2026``). A trailing ``UTC`` or
  ``GMT`` is an offset of zero; any other zone name (``CET``, ``EST``: abbreviations are
  ambiguous) cannot be placed and is a bad timestamp.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd

_OFFSET = r"(?:[Zz]|[+-]\d\d:?\d\d)\s*$"
_ZERO_ZONE = r"\s*(?:UTC|GMT)\s*$"
_DOTTED = r"^\s*\d{1,2}\.\d{1,2}\.\d{2,4}"


def parse_times(
    raw: pd.Series, timezone: str, groups: pd.Series | None = None
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

    Returns
    -------
    (times, ok)
        ``times``: int64 nanoseconds since the Unix epoch, UTC (0 where not ok);
        ``ok``: bool, False where the timestamp could not be placed in time.
    """
    n = len(raw)
    if n == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=bool)
    if isinstance(raw.dtype, pd.DatetimeTZDtype):
        utc = raw.dt.tz_convert("UTC")
        return _to_ns(utc)
    if pd.api.types.is_datetime64_dtype(raw.dtype):
        return _localise(pd.Series(raw.to_numpy()), timezone, groups)
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
        parsed = _parse_naive(text[naive])
        sub = None if groups is None else groups[naive].reset_index(drop=True)
        t, k = _localise(parsed, timezone, sub)
        times[naive], ok[naive] = t, k
    return times, ok


def _parse_naive(text: pd.Series) -> pd.Series:
    """Naive timestamps: ISO 8601 first, then dotted dates day first, then other layouts."""
    parsed = _ns(pd.to_datetime(text, errors="coerce", format="ISO8601"))
    missing = (parsed.isna() & text.notna()).to_numpy()
    if missing.any():
        rest = text[missing]
        dotted = rest.str.match(_DOTTED).fillna(False).to_numpy(dtype=bool)
        # "01.10.2026" is the first of October: dotted dates are day first, always
        for part, dayfirst in ((rest[dotted], True), (rest[~dotted], False)):
            if len(part):
                parsed[part.index] = _parse_other(part, dayfirst).to_numpy()
    return parsed.reset_index(drop=True)


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
    naive: pd.Series, timezone: str, groups: pd.Series | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Localise naive local times (file order kept) to UTC; see the module notes."""
    naive = pd.Series(pd.to_datetime(naive.to_numpy(), errors="coerce"))
    # Which local times are ambiguous: localise both ways and compare.
    early = naive.dt.tz_localize(timezone, ambiguous=True, nonexistent="NaT")
    late = naive.dt.tz_localize(timezone, ambiguous=False, nonexistent="NaT")
    ambiguous = (early != late) & early.notna()
    if ambiguous.any():
        if groups is None:
            first = ~naive[ambiguous].duplicated(keep="first")
        else:
            keys = pd.DataFrame({"g": groups.to_numpy(), "t": naive.to_numpy()})[ambiguous]
            first = ~keys.duplicated(keep="first")
        choice = pd.Series(True, index=naive.index)
        choice[ambiguous] = first.to_numpy()
        local = early.where(~ambiguous | choice, late)
    else:
        local = early
    return _to_ns(local)
