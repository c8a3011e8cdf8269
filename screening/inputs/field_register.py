"""Register columns of the field evidence: a discharge pressure transmitter (for the developed
head), the baseline the head is compared with, and an optional vibration transmitter; and the
optional ``head`` column of the curve table (the vendor's developed head at rated speed).

All optional: a pump without them is screened exactly as before, at no extra cost. Errors name
the file, line, pump and column (see :mod:`screening.inputs.register`).
"""

from __future__ import annotations

from pathlib import Path

from screening.inputs.config import ConfigError
from screening.inputs.units import UnitError, parse_quantity

#: The register's field-evidence columns (all optional).
FIELD_COLUMNS = (
    "discharge_pressure_tag",
    "discharge_pressure_unit",
    "discharge_pressure_reference",
    "discharge_elevation",
    "discharge_bore",
    "head_baseline",
    "vibration_tag",
    "vibration_unit",
)
#: How the developed head's baseline is found: fitted on the pump's own running time at ample
#: margin (default), or the vendor's head curve (``head`` column of the curve table).
HEAD_BASELINES = ("fitted", "vendor")


def field_fields(r, tag, reference) -> dict:
    """The field-evidence fields of a register row (see :class:`PumpSpec`): the discharge
    pressure tag [Pa], its reference (gauge or absolute), the elevation of the point whose
    pressure it reads above the NPSH datum [m] and the pipe bore at its tap [m]; the head
    baseline; the vibration tag (a velocity, such as mm/s RMS [m/s])."""
    out: dict = {}
    discharge = r.text("discharge_pressure_tag", required=False)
    if discharge is None:
        for column in ("discharge_pressure_unit", "discharge_pressure_reference",
                       "discharge_elevation", "discharge_bore", "head_baseline"):  # fmt: skip
            if r.text(column, required=False) is not None:
                r.fail(column, "is given but the row has no discharge_pressure_tag")
    else:
        out["discharge"] = tag("discharge_pressure", "pressure")
        out["discharge_gauge"] = reference("discharge_pressure_reference")
        out["discharge_elevation"] = r.quantity("discharge_elevation", "length")
        if not -500.0 <= out["discharge_elevation"] <= 500.0:
            r.fail("discharge_elevation", "is outside the valid range -500 to 500 m")
        bore = r.quantity("discharge_bore", "length")
        if not 1e-3 <= bore <= 10.0:
            r.fail("discharge_bore", "must be a pipe bore from 1 mm to 10 m")
        out["discharge_bore"] = bore
        baseline = (r.text("head_baseline", required=False) or "fitted").lower()
        if baseline not in HEAD_BASELINES:
            r.fail("head_baseline", f"{baseline!r} is not 'fitted' or 'vendor'")
        out["head_baseline"] = baseline
    if r.text("vibration_tag", required=False) is not None:
        out["vibration"] = tag("vibration", "velocity")
    elif r.text("vibration_unit", required=False) is not None:
        r.fail("vibration_unit", "is given but the row has no vibration_tag")
    return out


def curve_heads(path: Path, line: int, row, units: dict) -> float | None:
    """The vendor's developed head [m] on one row of the curve table (optional ``head``
    column, unit from ``head_unit``, the header or the cell), or None where the cell is
    empty."""
    cell = (row.get("head") or "").strip() if "head" in row else ""
    if not cell:
        return None
    try:
        value = parse_quantity(cell, "length", row.get("head_unit") or units.get("head"))
    except UnitError as exc:
        raise ConfigError(f"{path} line {line}, column 'head': {exc}") from exc
    if not value > 0:
        raise ConfigError(f"{path} line {line}, column 'head': must be a positive head")
    return value
