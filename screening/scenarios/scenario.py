"""What-if scenario files: changes to the recorded suction conditions, per pump or group.

A scenario file is TOML, validated with pydantic (no code is ever executed)::

    [[scenario]]
    name = "hotwell low level raised to 0.9 m"
    description = "raise the low-level setpoint of both condensate pumps"

      [[scenario.change]]
      pumps = ["CD-411", "CD-412"]     # pump ids; shell-style patterns such as "CW-*" allowed
      level_floor = "0.9 m"

      [[scenario.change]]
      areas = ["cooling water"]        # or select by area and/or service (any match selects)
      temperature_cap = "28 degC"

Each ``[[scenario.change]]`` selects pumps (``pumps``, ``areas``, ``services``: a pump is
selected when any of them matches) and lists one or more actions, applied in the order of
:data:`ACTIONS` to the recorded samples. Values carry their unit. Pressure floors need
``reference = "gauge"`` or ``"absolute"``.
"""

from __future__ import annotations

import fnmatch
from dataclasses import dataclass
from pathlib import Path

from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator

from screening.inputs.config import ConfigError, read_toml, validation_error
from screening.inputs.register import PumpSpec
from screening.inputs.units import UnitError, parse_difference, parse_quantity

#: Action key -> (input changed, operation, quantity kind, is a difference). Inputs are the
#: driver names of :mod:`screening.engine.drivers`; ``surface_pressure`` is a vessel's pressure.
ACTIONS: dict[str, tuple[str, str, str, bool]] = {
    "suction_pressure_add": ("suction_pressure", "add", "pressure", True),
    "suction_pressure_floor": ("suction_pressure", "floor", "pressure", False),
    "vessel_pressure_add": ("surface_pressure", "add", "pressure", True),
    "vessel_pressure_floor": ("surface_pressure", "floor", "pressure", False),
    "level_add": ("level", "add", "length", True),
    "level_floor": ("level", "floor", "length", False),
    "temperature_subtract": ("temperature", "subtract", "temperature", True),
    "temperature_cap": ("temperature", "cap", "temperature", False),
    "flow_cap": ("flow", "cap", "flow", False),
    "speed_cap": ("speed", "cap", "speed", False),
}


@dataclass(frozen=True)
class Change:
    """One action on one input, in SI.

    ``value`` is [Pa], [m], [K], [m³/s] or [rpm]; for ``add`` and ``subtract`` a difference.
    ``gauge`` tells whether a pressure floor is gauge (True) or absolute (False).
    """

    key: str
    input: str
    operation: str
    value: float
    text: str
    gauge: bool = False

    @property
    def label(self) -> str:
        """The action as the user wrote it, e.g. ``level_floor = 0.9 m``."""
        return f"{self.key} = {self.text}"


@dataclass(frozen=True)
class ChangeEntry:
    """One ``[[scenario.change]]``: a selection of pumps and the changes applied to them."""

    pumps: tuple[str, ...]
    areas: tuple[str, ...]
    services: tuple[str, ...]
    changes: tuple[Change, ...]

    def selects(self, pump: PumpSpec) -> bool:
        """True when the pump id, area or service matches one of the patterns."""
        return (
            any(fnmatch.fnmatchcase(pump.pump_id, p) for p in self.pumps)
            or any(fnmatch.fnmatchcase(pump.area, a) for a in self.areas)
            or any(fnmatch.fnmatchcase(pump.service, s) for s in self.services)
        )


@dataclass(frozen=True)
class Scenario:
    """A named set of changes."""

    name: str
    description: str
    entries: tuple[ChangeEntry, ...]

    def changes_for(self, pump: PumpSpec) -> list[Change]:
        """The changes that apply to a pump, in file order."""
        return [c for e in self.entries if e.selects(pump) for c in e.changes]


class _ChangeModel(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)

    pumps: tuple[str, ...] = ()
    areas: tuple[str, ...] = ()
    services: tuple[str, ...] = ()
    reference: str | None = Field(None, description="'gauge' or 'absolute' (pressure floors)")
    suction_pressure_add: str | None = None
    suction_pressure_floor: str | None = None
    vessel_pressure_add: str | None = None
    vessel_pressure_floor: str | None = None
    level_add: str | None = None
    level_floor: str | None = None
    temperature_subtract: str | None = None
    temperature_cap: str | None = None
    flow_cap: str | None = None
    speed_cap: str | None = None

    @model_validator(mode="after")
    def _complete(self) -> _ChangeModel:
        if not (self.pumps or self.areas or self.services):
            raise ValueError("select pumps with 'pumps', 'areas' or 'services'")
        given = [k for k in ACTIONS if getattr(self, k) is not None]
        if not given:
            raise ValueError(f"no change given (one or more of: {', '.join(ACTIONS)})")
        floors = [k for k in given if k.endswith("pressure_floor")]
        if floors and self.reference not in ("gauge", "absolute"):
            raise ValueError(f"{floors[0]} needs reference = 'gauge' or 'absolute'")
        if self.reference is not None and self.reference not in ("gauge", "absolute"):
            raise ValueError(f"reference {self.reference!r} is not 'gauge' or 'absolute'")
        return self


class _ScenarioModel(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)

    name: str = Field(min_length=1)
    description: str = ""
    change: tuple[_ChangeModel, ...] = Field(min_length=1)


class _FileModel(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)

    scenario: tuple[_ScenarioModel, ...] = Field(min_length=1)


def _convert(path: Path, where: str, key: str, text: str, gauge: bool) -> Change:
    inp, op, kind, difference = ACTIONS[key]
    try:
        value = parse_difference(text, kind) if difference else parse_quantity(text, kind, None)
    except UnitError as exc:
        raise ConfigError(f"{path}: [{where}.{key}] {exc}") from None
    if op == "subtract":
        op, value = "add", -value
    if kind in ("flow", "speed") and value <= 0:
        raise ConfigError(f"{path}: [{where}.{key}] must be greater than zero")
    if op == "floor" and kind == "pressure" and not gauge and value <= 0:
        raise ConfigError(f"{path}: [{where}.{key}] an absolute pressure must be above zero")
    return Change(key, inp, op, value, text, gauge)


def read_scenarios(path: str | Path) -> list[Scenario]:
    """Read and validate a scenario file.

    Parameters
    ----------
    path : str or Path
        The TOML file.

    Returns
    -------
    list of Scenario, values in SI.

    Raises
    ------
    ConfigError
        Naming the file, the scenario and key, and what would be valid.
    """
    path = Path(path)
    raw = read_toml(path, "scenario file")
    try:
        model = _FileModel.model_validate(raw)
    except ValidationError as exc:
        raise validation_error(path, exc, "the README's what-if section") from None
    names = [s.name for s in model.scenario]
    twice = sorted({n for n in names if names.count(n) > 1})
    if twice:
        raise ConfigError(f"{path}: scenario name(s) used twice: {', '.join(twice)}")
    scenarios = []
    for i, s in enumerate(model.scenario, start=1):
        entries = []
        for j, c in enumerate(s.change, start=1):
            where = f"scenario[{i}].change[{j}]"
            gauge = c.reference == "gauge"
            changes = tuple(
                _convert(path, where, k, getattr(c, k), gauge)
                for k in ACTIONS
                if getattr(c, k) is not None
            )
            entries.append(ChangeEntry(c.pumps, c.areas, c.services, changes))
        scenarios.append(Scenario(s.name, s.description, tuple(entries)))
    return scenarios
