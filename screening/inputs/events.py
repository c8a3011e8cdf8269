"""Known events: what people did to a pump or an area, and when it failed.

An optional CSV table named in the plant file (``[register] events = "events.csv"``), one event
a row, columns:

* ``pump_id`` or ``area`` (one of the two; an area's event belongs to every pump whose register
  row names that area);
* ``time``: ISO 8601, site time unless it carries an offset (``2026-06-02T07:30``,
  ``2026-06-02``);
* ``kind``: one of :data:`KINDS`; a failure, a piece of maintenance (which changes the pump: the
  onset of a later trouble is sought after it) or a note that changes nothing;
* ``note``: free text (optional).

Errors name the file, the line and the column (:class:`screening.inputs.config.ConfigError`).
"""

from __future__ import annotations

import re
from pathlib import Path

import pandas as pd

from screening.inputs.config import ConfigError

FAILURE = "failure"
#: Work that changes the pump or its suction: the baseline of an onset starts after it.
MAINTENANCE = (
    "strainer_cleaned", "impeller_replaced", "seal_replaced", "bearing_replaced",
    "pump_overhauled", "other_maintenance",
)  # fmt: skip
#: Events worth showing that change nothing in the analysis.
NOTES = ("setpoint_changed", "process_upset", "inspection", "note")
KINDS = (FAILURE, *MAINTENANCE, *NOTES)
COLUMNS = ["pump_id", "area", "time", "kind", "note"]
#: ISO 8601-1:2019 calendar date, optionally with a time and an offset (the window's rule).
_ISO = re.compile(
    r"^\d{4}-\d{2}-\d{2}(?:[T ]\d{2}:\d{2}(?::\d{2}(?:\.\d{1,9})?)?)?(?:Z|[+-]\d{2}:?\d{2})?$"
)


def empty_events() -> pd.DataFrame:
    """An events table without rows (UTC times)."""
    return pd.DataFrame(
        {
            "pump_id": pd.Series(dtype=str),
            "area": pd.Series(dtype=str),
            "time": pd.Series(dtype="datetime64[ns, UTC]"),
            "kind": pd.Series(dtype=str),
            "note": pd.Series(dtype=str),
        }
    )


def _time(text: str, timezone: str, where: str) -> pd.Timestamp:
    """An ISO 8601 text as a UTC instant (site time when it has no offset)."""
    try:
        if not _ISO.match(text):
            raise ValueError(text)
        ts = pd.Timestamp(text)
    except ValueError:
        raise ConfigError(
            f"{where}: time {text!r} is not ISO 8601 (e.g. 2026-06-02T07:30)"
        ) from None
    if ts is pd.NaT:
        raise ConfigError(f"{where}: time is empty")
    if ts.tzinfo is None:
        try:
            ts = ts.tz_localize(timezone, ambiguous="raise", nonexistent="raise")
        except Exception as exc:  # pytz/zoneinfo errors for a clock change
            raise ConfigError(
                f"{where}: time {text!r} does not exist or repeats at a clock change in "
                f"{timezone}; give an offset (e.g. {text}+02:00)"
            ) from exc
    return ts.tz_convert("UTC")


def read_events(path: Path, timezone: str, pump_ids: set[str], areas: set[str]) -> pd.DataFrame:
    """Read a table of known events.

    Parameters
    ----------
    path : Path
        The CSV file.
    timezone : str
        The site's IANA time zone, for times without an offset.
    pump_ids, areas : set of str
        The register's pump ids and areas: a row naming neither is an error.

    Returns
    -------
    DataFrame with ``pump_id``, ``area`` (one empty), ``time`` [UTC], ``kind``, ``note``,
    sorted by time.

    Raises
    ------
    ConfigError
        Naming the file, the line and the column of the first bad row.
    """
    try:
        raw = pd.read_csv(path, dtype=str, keep_default_na=False)
    except (OSError, pd.errors.ParserError, pd.errors.EmptyDataError) as exc:
        raise ConfigError(f"{path}: cannot read the events table: {exc}") from exc
    raw.columns = [c.strip() for c in raw.columns]
    for need in ("time", "kind"):
        if need not in raw.columns:
            raise ConfigError(f"{path}: the events table has no {need!r} column (columns: "
                              f"{', '.join(COLUMNS)})")  # fmt: skip
    if "pump_id" not in raw.columns and "area" not in raw.columns:
        raise ConfigError(f"{path}: the events table needs a 'pump_id' or an 'area' column")
    rows = []
    for i, r in enumerate(raw.to_dict("records")):
        where = f"{path} line {i + 2}"
        pid, area = r.get("pump_id", "").strip(), r.get("area", "").strip()
        if bool(pid) == bool(area):
            raise ConfigError(f"{where}: give either pump_id or area (one of the two)")
        if pid and pid not in pump_ids:
            raise ConfigError(f"{where}, column pump_id: {pid!r} is not in the pump register")
        if area and area not in areas:
            raise ConfigError(f"{where}, column area: {area!r} is no pump's area in the register")
        kind = r["kind"].strip()
        if kind not in KINDS:
            raise ConfigError(f"{where}, column kind: {kind!r} is not one of {', '.join(KINDS)}")
        when = _time(r["time"].strip(), timezone, f"{where}, column time")
        rows.append((pid, area, when, kind, r.get("note", "").strip()))
    if not rows:
        return empty_events()
    out = pd.DataFrame(rows, columns=COLUMNS)
    return out.sort_values("time", kind="stable").reset_index(drop=True)


def events_for(events: pd.DataFrame, pump_id: str, area: str, start=None, end=None) -> pd.DataFrame:
    """The events of one pump (its own and its area's) [UTC], optionally within [start, end)."""
    mine = (events["pump_id"] == pump_id) | ((events["area"] == area) & (area != ""))
    if start is not None:
        mine &= events["time"] >= start
    if end is not None:
        mine &= events["time"] < end
    return events[mine].reset_index(drop=True)
