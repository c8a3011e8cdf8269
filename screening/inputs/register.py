"""The pump register and the NPSH3 curves: tables (CSV), one row per pump or curve point.

A column header may carry the unit of its plain numbers in brackets, ``tap_elevation [m]``; a
cell may carry its own unit, ``3.5 ft``, which then wins. A number with no unit anywhere is an
error: units are never guessed. Errors name the file, the line, the column and what would be
valid. A bad row concerns only its pump: it is reported and the rest of the register is used.
"""

from __future__ import annotations

import csv
import functools
import io
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from screening.inputs.config import ConfigError
from screening.inputs.field_register import FIELD_COLUMNS, curve_heads, field_fields
from screening.inputs.lines import join_lines
from screening.inputs.pumpspec import PumpSpec, SuctionLine, TagSpec
from screening.inputs.register_fields import (
    datum_fields,
    line_fields,
    plausible,
    positive_length,
    speed_fields,
    transmitter_fields,
    vessel_fields,
)
from screening.inputs.units import UnitError, parse_quantity, parse_unit
from screening.physics.curves import CurveError, Npsh3Curve

REQUIRED = (
    "pump_id",
    "fluid",
    "application",
    "temperature_tag",
    "temperature_unit",
    "flow_tag",
    "flow_unit",
    "rated_speed",
    "bep_flow",
    "curve_id",
)
OPTIONAL = (
    "vapour_pressure",
    "suction_source",
    "suction_pressure_tag",
    "suction_pressure_unit",
    "suction_pressure_reference",
    "tap_elevation",
    "pressure_reference_point",
    "pressure_point_elevation",
    "orientation",
    "npsh3_datum",
    "can_loss_head",
    "can_loss_flow",
    "tap_bore",
    "level_tag",
    "level_unit",
    "level_zero_elevation",
    "level_span_low",
    "level_span_high",
    "vessel_surface",
    "vessel_pressure_tag",
    "vessel_pressure_unit",
    "vessel_pressure_reference",
    "line_loss_head",
    "line_loss_flow",
    "line_length",
    "line_bore",
    "line_roughness",
    "line_fittings_k",
    "suction_line_id",
    "header_flow_tag",
    "header_flow_unit",
    "service",
    "area",
    "speed_tag",
    "speed_unit",
    "speed_signal",
    "rated_frequency",
    "run_tag",
    "npsh3_exponent",
    "impeller_eyes",
    "impeller_eye_diameter",
    "stale_limit",
    "reconstruction",
    "suction_specific_speed",
    "guidance_ratio",
    "guidance_margin",
    "min_stable_flow",
    "thermal_min_flow",
    "preferred_low",
    "preferred_high",
    "allowable_max_flow",
    "low_pressure_setpoint",
    "low_level_setpoint",
    "high_temperature_setpoint",
    *FIELD_COLUMNS,
)
#: Longest stale limit a register row may give [s]: a sample held for a year is no sample.
MAX_STALE_LIMIT = 366 * 86400.0
_HEADER = re.compile(r"^\s*([A-Za-z0-9_]+)\s*(?:\[(.*)\])?\s*$")


@dataclass(frozen=True)
class RowProblem:
    """A register row or curve that could not be used, and why."""

    pump_id: str
    message: str


def _read_table(
    path: Path,
) -> tuple[pd.DataFrame, dict[str, str | None], list[tuple[int, str | None]]]:
    """Read a register table: its rows (text), the unit of each column from its header, and
    per row its line number [-] and what is wrong with the row as a whole (None if nothing).

    A row with more or fewer fields than the header, or with bytes that are not UTF-8 text
    (a Latin-1 "°C" typed in another editor), is a problem of that row only; the header must
    be sound, or the whole table is refused.
    """
    try:
        data = path.read_bytes()
    except FileNotFoundError as exc:
        raise ConfigError(f"{path}: file not found") from exc
    except OSError as exc:
        raise ConfigError(f"{path}: cannot be read ({exc})") from exc
    # undecodable bytes become U+FFFD here and are reported with their row below
    text = data.decode("utf-8-sig", errors="replace")
    reader = csv.reader(io.StringIO(text, newline=""))
    records: list[tuple[int, list[str]]] = []
    line = 1
    try:
        for record in reader:
            if any(cell.strip() for cell in record):
                records.append((line, record))
            line = reader.line_num + 1
    except csv.Error as exc:
        raise ConfigError(f"{path} line {reader.line_num}: cannot be read as CSV ({exc})") from exc
    if not records:
        raise ConfigError(f"{path}: empty file (no header line)")
    header_line, header = records[0]
    units: dict[str, str | None] = {}
    names: list[str] = []
    for number, col in enumerate(header, start=1):
        if "\ufffd" in col:
            raise ConfigError(
                f"{path} line {header_line}, column {number}: the header is not UTF-8 text "
                "(a Latin-1 character such as '°'?); save the file as UTF-8"
            )
        match = _HEADER.match(col)
        if not match:
            what = "has no name; write" if not col.strip() else f"{col.strip()!r} is not"
            hint = " (the delimiter must be a comma)" if ";" in col or "\t" in col else ""
            raise ConfigError(
                f"{path}: column header {number} {what} 'name' or 'name [unit]'{hint}"
            )
        name = match.group(1)
        if name in units:
            raise ConfigError(
                f"{path}: column {name!r} appears twice (columns {names.index(name) + 1} and "
                f"{number})"
            )
        names.append(name)
        units[name] = (match.group(2) or "").strip() or None
    rows: list[list[str]] = []
    lines: list[tuple[int, str | None]] = []
    for line, record in records[1:]:
        fault = None
        if len(record) != len(names):
            fault = (
                f"{path} line {line}: the row has {len(record)} fields and the header "
                f"{len(names)} (a stray or missing delimiter, or a truncated line)"
            )
            record = (record + [""] * len(names))[: len(names)]
        else:
            bad = [names[i] for i, cell in enumerate(record) if "\ufffd" in cell]
            if bad:
                fault = (
                    f"{path} line {line}, column {bad[0]!r}: not UTF-8 text (a Latin-1 "
                    "character such as '°'?); save the file as UTF-8"
                )
        rows.append([cell.strip() for cell in record])
        lines.append((line, fault))
    frame = pd.DataFrame(rows, columns=names, dtype=object)
    return frame, units, lines


class _Row:
    """Reads the cells of one register row, raising errors that name the column."""

    def __init__(self, path: Path, line: int, row: pd.Series, units: dict[str, str | None]):
        # a plain dict: a pandas look-up per cell costs more than the whole row's parsing
        cells = row.to_dict() if isinstance(row, pd.Series) else dict(row)
        self.path, self.line, self.row, self.units = path, line, cells, units

    def fail(self, column: str, message: str):
        pump = self.row.get("pump_id", "") or "?"
        raise ConfigError(
            f"{self.path} line {self.line} (pump {pump}), column '{column}': {message}"
        )

    def text(self, column: str, required: bool = True) -> str | None:
        value = self.row.get(column, "")
        if value == "" or value is None:
            if required:
                self.fail(column, "is empty; a value is required")
            return None
        return str(value)

    def quantity(self, column: str, kind: str, required: bool = True) -> float | None:
        value = self.text(column, required)
        if value is None:
            return None
        try:
            number = parse_quantity(value, kind, self.units.get(column))
        except UnitError as exc:
            self.fail(column, str(exc))
        if not np.isfinite(number):
            self.fail(column, f"{value!r} is not a finite number")
        return number

    def number(self, column: str, default: float | None, low: float, high: float):
        value = self.text(column, required=False)
        if value is None:
            return default
        try:
            number = float(value)
        except ValueError:
            self.fail(column, f"{value!r} is not a number")
        if not (low <= number <= high):
            self.fail(column, f"{value} is outside the valid range {low} to {high}")
        return number

    def unit(self, column: str, kind: str, required: bool = True) -> str | None:
        value = self.text(column, required)
        if value is not None:
            try:
                parse_unit(value, kind)
            except UnitError as exc:
                self.fail(column, str(exc))
        return value


#: Cells a row needs besides :data:`REQUIRED`, by how its suction is measured.
_NEEDED_BY_SOURCE = {
    "transmitter": ("suction_pressure_tag", "suction_pressure_unit",
                    "suction_pressure_reference", "tap_bore"),
    "vessel": ("level_tag", "level_unit", "level_zero_elevation", "vessel_surface"),
}  # fmt: skip


def _empty_cells(r: _Row) -> None:
    """Every empty cell the row needs, named in one message (not one per run)."""
    source = (r.row.get("suction_source") or "transmitter").strip().lower()
    needed = REQUIRED + _NEEDED_BY_SOURCE.get(source, ())
    if source == "vessel" and str(r.row.get("vessel_surface", "")).strip().lower() == "pressure":
        needed += ("vessel_pressure_tag", "vessel_pressure_unit", "vessel_pressure_reference")
    empty = [c for c in needed if r.row.get(c) in ("", None)]
    if len(empty) > 1:
        raise ConfigError(
            f"{r.path} line {r.line} (pump {r.row.get('pump_id') or '?'}): columns "
            f"{', '.join(repr(c) for c in empty)} are empty; each needs a value"
        )


def _reconstruction(r) -> dict[str, str]:
    """The ``reconstruction`` cell: one word for all the row's analog tags ("step" or
    "linear"), or ``role=word`` pairs separated by ';' (``temperature=step; flow=linear``);
    role "" stands for all."""
    text = r.text("reconstruction", required=False)
    if not text:
        return {}
    out = {}
    for part in text.split(";"):
        role, _, word = part.rpartition("=")
        role, word = role.strip().lower(), word.strip().lower()
        if word not in ("step", "linear") or (role and role not in _ANALOG_ROLES):
            r.fail(
                "reconstruction",
                f"{part.strip()!r} is not 'step', 'linear' or role=step|linear with a role of "
                f"{', '.join(_ANALOG_ROLES)}",
            )
        out[role] = word
    return out


#: Roles whose tags may be drawn as lines (run status is always a step).
_ANALOG_ROLES = (
    "suction", "temperature", "flow", "speed", "level", "vessel_pressure", "header_flow",
)  # fmt: skip


def _reference(r: _Row, column: str) -> bool:
    """A pressure's reference column: True for gauge, False for absolute."""
    value = r.text(column)
    if value.lower() not in ("gauge", "absolute"):
        r.fail(column, f"{value!r} is not 'gauge' or 'absolute'")
    return value.lower() == "gauge"


def _suction_fields(r: _Row, tag) -> tuple[str, dict]:
    """How the suction is measured (``transmitter`` or ``vessel``) and its register fields."""
    reference = functools.partial(_reference, r)
    source = (r.text("suction_source", required=False) or "transmitter").lower()
    if source not in ("transmitter", "vessel"):
        r.fail("suction_source", f"{source!r} is not 'transmitter' or 'vessel'")
    if source == "transmitter":
        return source, transmitter_fields(r, tag, reference)
    fields = {"suction": None, "gauge": False, "tap_elevation": 0.0, "tap_bore": 1.0}
    fields.update(vessel_fields(r, tag, reference))
    return source, fields


def _pump_from_row(path, line, row, units, default_stale) -> PumpSpec:
    r = _Row(path, line, row, units)
    _empty_cells(r)
    stale = r.quantity("stale_limit", "duration", required=False)
    if stale is not None and not 0 < stale <= MAX_STALE_LIMIT:
        r.fail("stale_limit", "must be a positive duration up to 366 days, such as '15 min'")
    recon = _reconstruction(r)

    def tag(role: str, kind: str, required: bool = True) -> TagSpec | None:
        name = r.text(f"{role}_tag", required)
        if name is None:
            return None
        key = "suction" if role == "suction_pressure" else role
        drawn = recon.get(key, recon.get(""))
        if kind == "percent":  # per cent of a span, scaled by the caller
            return TagSpec(name, "%", kind, stale, reconstruction=drawn)
        unit = r.unit(f"{role}_unit", kind)
        return TagSpec(name, unit, kind, stale, reconstruction=drawn)

    source, suction_fields = _suction_fields(r, tag)
    run_name = r.text("run_tag", required=False)
    rated = r.quantity("rated_speed", "speed")
    if rated <= 0:
        r.fail("rated_speed", "must be a positive speed")
    bep = r.quantity("bep_flow", "flow")
    if bep <= 0:
        r.fail("bep_flow", "must be a positive flow")
    plausible(r, "rated_speed", rated)
    plausible(r, "bep_flow", bep)
    por_low = r.number("preferred_low", 0.70, 0.1, 1.0)
    por_high = r.number("preferred_high", 1.20, 1.0, 2.0)
    eyes = r.number("impeller_eyes", 1, 1, 2)
    if eyes != int(eyes):
        r.fail("impeller_eyes", "must be 1 (single suction) or 2 (double suction)")
    return PumpSpec(
        pump_id=r.text("pump_id"),
        service=r.text("service", required=False) or "",
        area=r.text("area", required=False) or "",
        fluid=r.text("fluid"),
        application=r.text("application"),
        temperature=tag("temperature", "temperature"),
        flow=tag("flow", "flow"),
        **speed_fields(r, tag("speed", "speed", required=False), rated),
        run=TagSpec(run_name, "", "status", stale) if run_name else None,
        rated_speed=rated,
        bep_flow=bep,
        curve_id=r.text("curve_id"),
        npsh3_exponent=r.number("npsh3_exponent", None, 0.5, 3.0),
        impeller_eyes=int(eyes),
        impeller_eye_diameter=positive_length(r, "impeller_eye_diameter"),
        suction_specific_speed=r.number("suction_specific_speed", None, 1.0, 1e5),
        guidance_ratio=r.number("guidance_ratio", None, 1.0, 10.0),
        guidance_margin=r.quantity("guidance_margin", "length", required=False),
        min_stable_flow=r.quantity("min_stable_flow", "flow", required=False),
        thermal_min_flow=r.quantity("thermal_min_flow", "flow", required=False),
        preferred_low=por_low,
        preferred_high=por_high,
        allowable_max_flow=r.quantity("allowable_max_flow", "flow", required=False),
        vapour_pressure=r.text("vapour_pressure", required=False),
        source=source,
        line=line,
        low_pressure_setpoint=r.quantity("low_pressure_setpoint", "pressure", required=False),
        low_level_setpoint=r.quantity("low_level_setpoint", "length", required=False),
        high_temperature_setpoint=r.quantity(
            "high_temperature_setpoint", "temperature", required=False
        ),
        **suction_fields,
        **line_fields(r, tag, source),
        **datum_fields(r),
        **field_fields(r, tag, functools.partial(_reference, r)),
    )


def read_pump_register(
    path: str | Path, default_stale: float = 300.0
) -> tuple[dict[str, PumpSpec], list[RowProblem]]:
    """Read the pump register (CSV).

    Parameters
    ----------
    path : str or Path
        The register file.
    default_stale : float
        Plant default stale limit [s] (kept for rows that give none).

    Returns
    -------
    (pumps, problems)
        Usable pumps by id, and one :class:`RowProblem` per row that could not be used.

    Raises
    ------
    ConfigError
        If the file cannot be read, or a required column is missing or unknown.
    """
    path = Path(path)
    frame, units, lines = _read_table(path)
    missing = [c for c in REQUIRED if c not in frame.columns]
    if missing:
        raise ConfigError(f"{path}: missing required column(s) {', '.join(missing)}")
    unknown = [c for c in frame.columns if c not in REQUIRED + OPTIONAL]
    if unknown:
        raise ConfigError(
            f"{path}: unknown column(s) {', '.join(unknown)}; valid columns are "
            f"{', '.join(REQUIRED + OPTIONAL)}"
        )
    pumps: dict[str, PumpSpec] = {}
    problems: list[RowProblem] = []
    failed: dict[str, list[tuple[int, str]]] = {}  # shared line -> rows naming it, not read
    # rows as plain dicts of text: iterrows made a Series per row (with pandas' string
    # dtype, read back cell by cell), most of the plant file's loading time
    for row, (line, fault) in zip(frame.to_dict("records"), lines, strict=True):
        pid = row.get("pump_id", "") or f"(line {line})"
        if fault is None:
            try:
                spec = _pump_from_row(path, line, row, units, default_stale)
                if spec.pump_id in pumps:
                    fault = (
                        f"{path} line {line}, column 'pump_id': {pid!r} already used on line "
                        f"{pumps[spec.pump_id].line}"
                    )
            except ConfigError as exc:
                fault = str(exc)
        if fault is not None:
            problems.append(RowProblem(pid, fault))
            if row.get("suction_line_id"):
                failed.setdefault(row["suction_line_id"], []).append((line, pid))
            continue
        pumps[spec.pump_id] = spec
    problems += [RowProblem(pid, msg) for pid, msg in join_lines(path, pumps, failed)]
    return pumps, problems


def read_curves(path: str | Path) -> tuple[dict[str, Npsh3Curve], dict[str, str]]:
    """Read the NPSH3 curves (CSV: curve_id, flow, flow_unit, npsh3, npsh3_unit).

    Units may instead be in the headers (``flow [m3/h]``) or in the cells (``120 gpm``).

    Returns
    -------
    (curves, problems)
        Usable curves by id [SI: m³/s and m], and a message per curve that could not be used.
    """
    path = Path(path)
    frame, units, lines = _read_table(path)
    for col in ("curve_id", "flow", "npsh3"):
        if col not in frame.columns:
            raise ConfigError(f"{path}: missing required column {col!r}")
    curves: dict[str, Npsh3Curve] = {}
    problems: dict[str, str] = {}
    flows: dict[str, list[float]] = {}
    heads: dict[str, list[float]] = {}
    developed: dict[str, list[float | None]] = {}  # the vendor's developed head, optional
    # rows as plain dicts of text: iterrows made a Series per row (with pandas' string
    # dtype, read back cell by cell), most of the plant file's loading time
    for row, (line, fault) in zip(frame.to_dict("records"), lines, strict=True):
        cid = row["curve_id"]
        if not cid:
            raise ConfigError(f"{path} line {line}, column 'curve_id': is empty")
        if fault is not None:
            problems.setdefault(cid, fault)
            continue
        try:
            q = parse_quantity(row["flow"], "flow", row.get("flow_unit") or units.get("flow"))
        except UnitError as exc:
            problems.setdefault(cid, f"{path} line {line}, column 'flow': {exc}")
            continue
        try:
            h = parse_quantity(row["npsh3"], "length", row.get("npsh3_unit") or units.get("npsh3"))
        except UnitError as exc:
            problems.setdefault(cid, f"{path} line {line}, column 'npsh3': {exc}")
            continue
        flows.setdefault(cid, []).append(q)
        heads.setdefault(cid, []).append(h)
        try:
            developed.setdefault(cid, []).append(curve_heads(path, line, row, units))
        except ConfigError as exc:
            problems.setdefault(cid, str(exc))
    for cid in flows:
        if cid in problems:
            continue
        try:
            vendor = developed.get(cid, [])
            known = [v for v in vendor if v is not None]
            if known and len(known) != len(vendor):
                raise CurveError(
                    f"curve {cid!r}: the head column is given on some rows only; give the "
                    "vendor's head at every flow of the curve or at none"
                )
            curves[cid] = Npsh3Curve(
                cid, np.array(flows[cid]), np.array(heads[cid]), np.array(known) if known else None
            )
        except CurveError as exc:
            problems[cid] = f"{path}: {exc}"
    return curves, problems


__all__ = ["PumpSpec", "RowProblem", "SuctionLine", "TagSpec", "read_curves", "read_pump_register"]
