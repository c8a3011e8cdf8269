"""One pump through the engine: its tags read, checked and converted to SI, then calculated.

Shared by every place that runs pumps (this process, a worker process, a Dask worker).
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pandas as pd

from screening.engine.calculator import Settings, calculate_pump
from screening.engine.field_head import FieldInputs
from screening.engine.prepare import prepare_tag
from screening.inputs.plant import Plant
from screening.inputs.quality import sample_gaps
from screening.inputs.tagdata import ExportError, TagQuality
from screening.inputs.units import UnitError, to_si
from screening.physics.properties import fluid_table
from screening.physics.viscosity import viscosity_table


def settings_for(plant: Plant) -> Settings:
    """The calculator's settings from the plant file."""
    s = plant.settings
    return Settings(
        stale_limit=s.data.stale_limit,
        frozen_after=s.data.frozen_after,
        min_flow_fraction=s.running.min_flow_fraction,
        min_speed_fraction=s.running.min_speed_fraction,
        ample_ratio=s.policy.ample_ratio,
        site_elevation=s.site.elevation,
        barometer_stale_limit=s.site.barometer_stale_limit,
        speed_scaling_range=tuple(s.running.speed_scaling_range),
        barometer_tolerance=s.site.barometer_tolerance,
        min_stable_flow_fraction=s.running.min_stable_flow_fraction,
        settle_after_start=s.running.settle_after_start,
    )


#: The register flag saying whether each pressure role reads gauge.
_GAUGE_FLAG = {
    "suction": "gauge", "vessel_pressure": "vessel_gauge", "discharge_pressure": "discharge_gauge",
}  # fmt: skip


def check_range(role: str, pump, table):
    """Physically impossible values of a role (SI): flagged as bad data."""
    if role == "temperature":
        line = pump.suction_line
        if line is not None and line.k is None:  # Darcy-Weisbach: the viscosity is needed too
            mu = viscosity_table(pump.fluid)
            return lambda v: ~(table.in_range(v) & mu.in_range(v))
        return lambda v: ~table.in_range(v)
    if role in _GAUGE_FLAG:  # a pressure: gauge or absolute, as its register row says
        if getattr(pump, _GAUGE_FLAG[role]):
            return lambda v: v < -110_000.0  # a gauge reading below full vacuum
        return lambda v: v <= 0.0
    if role in ("speed", "vibration"):
        return lambda v: v < 0.0
    return None


def read_barometer(plant, index, settings, span):
    """The site barometer tag read over ``span`` [ns] and converted to Pa, with its quality."""
    site = plant.settings.site
    if not site.barometer_tag:
        return None, None
    series, _ = index.read([site.barometer_tag], span)
    s = series.get(site.barometer_tag)
    if s is None:
        return None, None
    values = to_si(s.values, site.barometer_unit or "Pa", "pressure")
    s.values = values
    return s, s.quality


def _files_not_read(messages: list[str], most: int = 3) -> str:
    """The messages of files that could not be read, at most ``most`` of them, as one text."""
    shown = "; ".join(messages[:most])
    more = len(messages) - most
    return shown + (f"; and {more} more (see files_not_read)" if more > 0 else "")


def screen_pump(
    plant, pump, index, raw, barometer, settings, start_ns, end_ns, edges, keep, buckets,
    read_problems=None, chunk=None,
):  # fmt: skip
    """Read, check and calculate one pump; returns its result, tag quality and samples.
    ``read_problems`` (path -> message) are the files that failed while the tags were read:
    a tag that could not be read is reported with its files' reasons. ``chunk``: one time
    chunk of the pump's window [start_ns, end_ns) (:mod:`screening.engine.chunked`)."""
    roles = pump.tags()
    known = index.known_tags()
    missing = [f"{spec.tag} ({role})" for role, spec in roles.items() if spec.tag not in known]
    if missing:
        message = f"tag(s) not found in any export file: {', '.join(missing)}"
        unread = [m for p, m in index.file_problems.items() if Path(p).is_file()]
        if unread:
            # the tags may be in a file that could not be read: say which and why
            message += (
                f"; {len(unread)} export file(s) could not be read and may hold them: "
                + _files_not_read(unread)
            )
        raise ExportError(message)
    table = fluid_table(pump.fluid, pump.vapour_pressure)
    prepared = {}
    n = 0
    for role, spec in roles.items():
        s = raw.get(spec.tag)
        if s is None:
            files = [str(f) for f in index.files_for(spec.tag)]
            why = [(read_problems or {}).get(f) for f in files]
            raise ExportError(
                f"tag {spec.tag} ({role}) could not be read from {', '.join(files)}"
                + (f": {_files_not_read([w for w in why if w])}" if any(why) else "")
            )
        s = _drawn(s, spec, index)
        try:
            prepared[role] = prepare_tag(
                s, spec, settings, role, check_range(role, pump, table), chunk, role
            )
        except UnitError as exc:
            raise ExportError(f"tag {spec.tag} ({role}): {exc}") from exc
        n += int(np.searchsorted(s.times, end_ns) - np.searchsorted(s.times, start_ns))
        limit = _gap_limit(spec, settings, s.max_interval)
        if chunk is None:
            _count_gaps(prepared[role], spec, settings, start_ns, end_ns, s.max_interval)
        else:
            chunk.add_gaps(role, prepared[role].times, limit)
    prepared.update(_peer_tags(pump, index, raw, settings, chunk))
    field = None if chunk is not None else _field_inputs(pump, raw, settings, table, start_ns,
                                                          end_ns)  # fmt: skip
    result = calculate_pump(
        pump, plant.curves[pump.curve_id], plant.guidance[pump.pump_id], table, prepared,
        barometer if pump.needs_barometer else None, settings, start_ns, end_ns, edges, keep,
        buckets, field,
    )  # fmt: skip
    quality = {role: prepared[role].quality for role in roles}
    if field is not None:
        quality.update({role: s.quality for role, s in field.tags.items()})
    return result, quality, n


def _count_gaps(series, spec, settings, start_ns: int, end_ns: int, max_interval=None) -> None:
    """Gaps longer than the tag's stale limit [s] (a compressed record's longest interval
    [s]) in the window [ns], into its quality."""
    q = series.quality
    q.gaps, missing, q.longest_gaps = sample_gaps(
        series.times, start_ns, end_ns, _gap_limit(spec, settings, max_interval)
    )
    q.gap_hours = missing / 3.6e12


def _gap_limit(spec, settings, max_interval=None) -> int:
    """The gap limit of a tag [ns]: its stale limit, a compressed record's longest interval."""
    limit = spec.stale_limit if spec.stale_limit is not None else settings.stale_limit
    if max_interval is not None:  # a compressed record: gaps beyond the longest interval
        limit = max_interval
    return int(round(limit * 1e9))


def _field_inputs(pump, raw, settings, table, start_ns: int, end_ns: int):
    """The pump's field-evidence tags (discharge pressure, vibration) prepared in SI, or
    None for a pump without them (no cost). A tag that is missing or in a wrong unit leaves
    only the evidence out, with a note: the pump is screened all the same."""
    specs = pump.field_tags()
    if not specs:
        return None
    out = FieldInputs({}, {})
    for role, spec in specs.items():
        s = raw.get(spec.tag)
        if s is None:
            out.notes.append(f"tag {spec.tag} ({role}) not found or not read: no {role} evidence")
            continue
        try:
            out.tags[role] = prepare_tag(s, spec, settings, role, check_range(role, pump, table))
        except UnitError as exc:
            out.notes.append(f"tag {spec.tag} ({role}): {exc}")
            continue
        _count_gaps(out.tags[role], spec, settings, start_ns, end_ns)
        limit = spec.stale_limit if spec.stale_limit is not None else settings.stale_limit
        out.stale_ns[role] = int(round(limit * 1e9))
    return out


def _drawn(series, spec, index):
    """``series`` marked with how it is drawn between samples: run status always as steps,
    analog tags as their export family (or the register) says (see
    :meth:`ExportIndex.max_interval_of`)."""
    if spec.kind == "status":
        return series
    interval = index.max_interval_of(spec.tag, spec.reconstruction)
    return series if interval is None else dataclasses.replace(series, max_interval=interval)


def _peer_tags(pump, index, raw, settings, chunk=None) -> dict:
    """The other members' flow, run and speed tags of a pump's shared suction line, in SI
    (counted under their own pumps, not here); a tag that cannot be read leaves the line's
    flow unknown, so the pump cannot be screened."""
    out = {}
    for key, spec in pump.peer_tags().items():
        s = raw.get(spec.tag)
        if s is None:
            raise ExportError(
                f"suction line {pump.suction_line_id!r}: tag {spec.tag} ({key}) of a pump on "
                "the same line was not found in any export file; the line's total flow is "
                "unknown"
            )
        role = key.rpartition(":")[2]
        s = _drawn(s, spec, index)
        try:
            out[key] = prepare_tag(
                s, spec, settings, role, check_range(role, pump, None), chunk, key
            )
        except UnitError as exc:
            raise ExportError(f"tag {spec.tag} ({key}): {exc}") from exc
    return out


QUALITY_COLUMNS = [
    "pump_id", "role", "tag", "samples", "text_values", "bad_quality", "not_finite", "frozen",
    "out_of_range", "bad_timestamps", "duplicates", "out_of_order", "malformed_rows", "words",
    "first_problem", "gaps", "gap_hours", "longest_gaps", "flags",
]  # fmt: skip

#: The flag of a pump whose absolute suction pressure fell below the vapour pressure.
BELOW_VAPOUR_FLAG = "suction pressure below vapour pressure: check transmitter and temperature"


def quality_flags(result, role: str) -> str:
    """Engineering flags of a pump's tag in the quality table: the suction (or vessel
    pressure) tag of a pump that ran with p_abs below p_v, with hours [h] and first time."""
    if role not in ("suction", "vessel_pressure") or not result.below_vapour_hours:
        return ""
    return (
        f"{BELOW_VAPOUR_FLAG} ({result.below_vapour_hours:.2f} h running, first at "
        f"{result.below_vapour_first.isoformat()})"
    )


def quality_row(pid: str, role: str, q: TagQuality, flags: str = "") -> dict:
    """One row of the quality table (``flags``: see :func:`quality_flags`)."""
    return {
        "pump_id": pid,
        "role": role,
        "tag": q.tag,
        "samples": q.samples,
        "text_values": q.text_values,
        "bad_quality": q.bad_quality,
        "not_finite": q.not_finite,
        "frozen": q.frozen,
        "out_of_range": q.out_of_range,
        "bad_timestamps": q.bad_timestamps,
        "duplicates": q.duplicates,
        "out_of_order": q.out_of_order,
        "malformed_rows": q.malformed_rows,
        "words": "; ".join(f"{w} ({c})" for w, c in sorted(q.words.items())),
        "first_problem": "; ".join(f"{k}: {v}" for k, v in q.first_problem.items()),
        "gaps": q.gaps,
        "gap_hours": q.gap_hours,
        "longest_gaps": "; ".join(
            f"{pd.Timestamp(a, tz='UTC'):%Y-%m-%dT%H:%MZ} for {n / 3.6e12:.1f} h"
            for a, n in q.longest_gaps
        ),
        "flags": flags,
    }
