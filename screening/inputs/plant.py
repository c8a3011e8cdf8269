"""A plant's whole configuration: the plant file, the pump register and the NPSH3 curves.

Plant-level errors (an unreadable plant file, a register without a required column) stop the
run with a :class:`ConfigError`. A problem that concerns one pump (a bad register row, an
unknown curve, an unknown fluid, no policy rule) is recorded in ``problems`` and the rest of
the plant is still screened.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from screening.inputs.config import ConfigError, PlantFile, read_plant_file
from screening.inputs.events import empty_events, read_events
from screening.inputs.policy import PolicyError, guidance_for
from screening.inputs.register import PumpSpec, read_curves, read_pump_register
from screening.physics.curves import Npsh3Curve, suction_energy, suction_specific_speed
from screening.physics.margin import Guidance
from screening.physics.properties import FluidError, fluid_table


@dataclass
class Plant:
    """Validated configuration of a plant, ready to screen."""

    path: Path
    base: Path
    settings: PlantFile
    pumps: dict[str, PumpSpec]
    curves: dict[str, Npsh3Curve]
    guidance: dict[str, Guidance]
    #: Pumps that cannot be screened: pump id -> reason.
    problems: dict[str, str] = field(default_factory=dict)
    #: Known events (``[register] events``; :mod:`screening.inputs.events`), times in UTC.
    events: pd.DataFrame = field(default_factory=empty_events)

    @property
    def name(self) -> str:
        """The site's name."""
        return self.settings.site.name

    @property
    def timezone(self) -> str:
        """IANA time zone of the site."""
        return self.settings.site.timezone


def load_plant(path: str | Path) -> Plant:
    """Read and validate a plant's configuration.

    Parameters
    ----------
    path : str or Path
        The plant file (TOML); register and curve paths in it are relative to its folder.

    Raises
    ------
    ConfigError
        For plant-level errors; per-pump problems are collected in ``Plant.problems``.
    """
    settings, base = read_plant_file(path)
    reg = settings.register_files
    pumps, row_problems = read_pump_register(base / reg.pumps, settings.data.stale_limit)
    curves, curve_problems = read_curves(base / reg.curves)
    problems = {p.pump_id: p.message for p in row_problems}
    guidance: dict[str, Guidance] = {}
    for pid, pump in list(pumps.items()):
        try:
            guidance[pid] = _check_pump(pump, curves, curve_problems, settings)
        except (ConfigError, FluidError, PolicyError) as exc:
            problems[pid] = f"{base / reg.pumps} line {pump.line} (pump {pid}): {exc}"
            del pumps[pid]
    events = empty_events()
    if reg.events:
        ids = set(pumps) | set(problems)
        areas = {p.area for p in pumps.values() if p.area}
        events = read_events(base / reg.events, settings.site.timezone, ids, areas)
    return Plant(Path(path), base, settings, pumps, curves, guidance, problems, events)


def _check_pump(pump: PumpSpec, curves, curve_problems, settings: PlantFile) -> Guidance:
    if pump.curve_id in curve_problems:
        raise ConfigError(f"its curve is unusable: {curve_problems[pump.curve_id]}")
    if pump.curve_id not in curves:
        known = ", ".join(sorted(curves)[:10])
        raise ConfigError(
            f"curve_id {pump.curve_id!r} is not in the curve table (curves there: {known})"
        )
    table = fluid_table(pump.fluid, pump.vapour_pressure)  # FluidError for an unknown fluid
    s = pump.suction_specific_speed
    if s is None:
        curve = curves[pump.curve_id]
        npsh3_bep = float(curve.at_reference_speed(pump.bep_flow))
        if not npsh3_bep == npsh3_bep:  # NaN: BEP outside the curve
            raise ConfigError(
                "bep_flow lies outside its NPSH3 curve's flow range, so the suction specific "
                "speed cannot be computed; give suction_specific_speed in the register"
            )
        s = suction_specific_speed(pump.rated_speed, pump.bep_flow, npsh3_bep, pump.impeller_eyes)
    energy = None
    if pump.impeller_eye_diameter is not None:
        energy = suction_energy(
            pump.impeller_eye_diameter, pump.rated_speed, s, specific_gravity(table)
        )
    return guidance_for(
        settings.policy, pump.application, s, pump.guidance_ratio, pump.guidance_margin,
        energy, pump.impeller_eyes,
    )  # fmt: skip


#: 60 °F [K], the reference temperature of the specific gravity (ASTM and trade convention).
T_60F = 288.7055555555556


def specific_gravity(table) -> float:
    """Specific gravity [-]: the liquid's saturated density at 60 °F over water's (CoolProp;
    water 999.0 kg/m³ by IAPWS-95). A fluid whose table does not reach 60 °F is taken at the
    nearest temperature of its table."""
    water = fluid_table("Water")
    lo, hi = float(table.t_min), float(table.t_max)
    t = min(max(T_60F, lo), hi)
    rho = float(table.properties(t)[1])
    return rho / float(water.properties(T_60F)[1])


def pump_suction_specific_speed(plant: Plant, pump_id: str) -> float:
    """Suction specific speed S (US units) of a pump: from the register, else its curve."""
    pump = plant.pumps[pump_id]
    if pump.suction_specific_speed is not None:
        return pump.suction_specific_speed
    curve = plant.curves[pump.curve_id]
    npsh3_bep = float(curve.at_reference_speed(pump.bep_flow))
    return float(
        suction_specific_speed(pump.rated_speed, pump.bep_flow, npsh3_bep, pump.impeller_eyes)
    )
