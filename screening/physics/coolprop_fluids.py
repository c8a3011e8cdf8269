"""Fluids as CoolProp knows them: names (pure fluids, blends, mixtures, incompressible
liquids), direct evaluation of the vapour pressure and liquid density, and the temperature
range in which each can be evaluated. :mod:`screening.physics.properties` tabulates them.

Sources: CoolProp (Bell et al., Ind. Eng. Chem. Res. 53 (2014) 2498-2508), whose water model is
IAPWS-95 (Wagner and Pruss, J. Phys. Chem. Ref. Data 31 (2002) 387); its pseudo-pure blends are
Lemmon's (Int. J. Thermophys. 24 (2003) 991-1006); its incompressible solutions are fits to
published data (Melinder, Properties of Secondary Working Fluids for Indirect Systems, IIR 2010;
ASHRAE and manufacturers' data), as CoolProp's bibliography lists them.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    import CoolProp


def _coolprop():
    """CoolProp, imported on first use: a scan whose tables are all in the disk cache (see
    :mod:`screening.tablecache`) never pays the two seconds of its import."""
    import CoolProp

    return CoolProp


def PropsSI(*args):  # noqa: N802 - CoolProp's own name
    """CoolProp's ``PropsSI``, imported on first use."""
    from CoolProp.CoolProp import PropsSI as props

    return props(*args)


#: Upper end of the valid range as a fraction of the critical temperature.
CRITICAL_FRACTION = 0.98
#: Pressure at which an incompressible liquid's density is evaluated [Pa]. CoolProp's
#: incompressible density does not depend on pressure at all; a real aqueous liquid is barely
#: more dependent: water's isothermal compressibility is 4.6e-10 1/Pa at 20 °C (CoolProp,
#: IAPWS-95), so 1 MPa above this pressure raises the density by 0.05 %.
NOMINAL_PRESSURE = 101325.0

#: Molar mass of water [g/mol]: 2 x 1.008 + 15.999 (IUPAC conventional atomic weights, from
#: memory); CoolProp's water model gives 18.015268 g/mol.
MOLAR_MASS_WATER = 18.015
#: Molar mass [g/mol] of the solute of the aqueous glycol solutions Raoult's law is offered
#: for, by CoolProp code. Ethylene glycol C2H6O2: 2 x 12.011 + 6 x 1.008 + 2 x 15.999 = 62.068;
#: propylene glycol C3H8O2: 3 x 12.011 + 8 x 1.008 + 2 x 15.999 = 76.095 (IUPAC conventional
#: atomic weights, from memory; CRC Handbook values 62.07 and 76.09, from memory; CoolProp's
#: PropyleneGlycol model gives 76.094). All four CoolProp fluids take the concentration as a
#: mass fraction of glycol.
GLYCOL_MOLAR_MASS = {
    "MEG": 62.07,  # ethylene glycol - water
    "MEG2": 62.07,  # ethylene glycol - water (second data set)
    "MPG": 76.09,  # propylene glycol - water
    "MPG2": 76.09,  # propylene glycol - water (second data set)
}
#: CoolProp incompressible liquids (codes as in ``INCOMP::CODE``) for which water's vapour
#: pressure is offered: aqueous solutions of a solute far less volatile than water, so that the
#: solution's vapour pressure is below pure water's at the same temperature and water's is the
#: conservative (higher) value. Glycols boil near 190-200 °C and glycerol near 290 °C at
#: atmospheric pressure (from memory); salts do not evaporate at all. Not offered: methanol
#: (MMA), ethanol (MEA) and ammonia (MAM) solutions, whose solute is more volatile than water,
#: and non-aqueous liquids (heat-transfer oils, HFE-7100, which boils near 61 °C, from memory),
#: for which water's vapour pressure is no bound.
WATER_BOUNDED_SOLUTIONS = frozenset(
    {
        # ethylene glycol - water
        "MEG", "MEG2", "AEG", "AN", "GKN", "ZM", "ZMC",
        # propylene glycol - water
        "MPG", "MPG2", "APG", "AL", "PKL", "ZFC", "ZLC",
        # glycerol - water
        "MGL", "MGL2",
        # salt brines: calcium, magnesium, sodium and lithium chloride, lithium bromide,
        # potassium carbonate, acetate and formate, sea water
        "MCA", "MCA2", "VCA", "MMG", "MMG2", "VMG", "MNA", "MNA2", "VNA", "MLI", "LiBr",
        "MKC", "MKC2", "VKC", "MKA", "MKA2", "MKF", "AKF", "FRE", "PK2", "MITSW",
        # ready-mixed potassium acetate / formate brines
        "AS10", "AS20", "AS30", "AS40", "AS55", "HY20", "HY30", "HY40", "HY45", "HY50",
        "TY10", "TY15", "TY20", "TY24", "ZS10", "ZS25", "ZS40", "ZS45", "ZS55",
    }
)  # fmt: skip

_INCOMP = "INCOMP::"
_HEOS = "HEOS::"
_MIXTURE_PART = re.compile(r"^([^\[\]&]+)\[([^\[\]]+)\]$")
_INCOMP_NAME = re.compile(r"^([A-Za-z0-9_]+?)(?:-([0-9.]+)%|\[([^\[\]]+)\])?$")


class FluidError(ValueError):
    """A fluid name CoolProp does not know, or one without a vapour pressure."""


def saturated_liquid(fluid: str, temperature) -> tuple[np.ndarray, np.ndarray]:
    """Vapour pressure [Pa] and saturated-liquid density [kg/m³] by direct CoolProp calls.

    Slow (one call per temperature); the reference against which tables are checked. For a
    mixture: the bubble-point pressure and the density of the liquid at its bubble point.

    Parameters
    ----------
    fluid : str
        CoolProp fluid name, e.g. ``"Water"``, ``"n-Butane"``, ``"R407C.mix"``,
        ``"Propane[0.6]&n-Butane[0.4]"``.
    temperature : array_like
        Temperatures [K].

    Raises
    ------
    FluidError
        For a fluid CoolProp does not know and for incompressible liquids.
    ValueError
        CoolProp's own error where its saturation calculation fails at a temperature.
    """
    state = _state(fluid)
    temps = np.atleast_1d(np.asarray(temperature, dtype=np.float64))
    p = np.empty_like(temps)
    rho = np.empty_like(temps)
    for i, t in enumerate(temps):
        state.update(_coolprop().QT_INPUTS, 0.0, float(t))
        p[i] = state.p()
        rho[i] = state.rhomass()
    return p, rho


def is_incompressible(fluid: str) -> bool:
    return fluid.strip().upper().startswith(_INCOMP)


def _state(fluid: str) -> CoolProp.AbstractState:
    """A HEOS state of a pure fluid, pseudo-pure blend, predefined or given mixture."""
    if is_incompressible(fluid):
        raise FluidError(
            f"fluid {fluid!r} is a CoolProp incompressible solution, which has no vapour "
            "pressure in CoolProp; use a pure fluid or predefined mixture"
        )
    name = fluid.strip()
    if name.upper().startswith(_HEOS):
        name = name[len(_HEOS) :]
    if "::" in name:
        raise FluidError(
            f"fluid {fluid!r}: only CoolProp's HEOS backend (the default) and INCOMP:: liquids "
            "are supported"
        )
    if "&" in name or "[" in name:
        names, fractions = _parse_mixture(fluid, name)
        try:
            state = _coolprop().AbstractState("HEOS", "&".join(names))
            state.set_mole_fractions(fractions)
        except ValueError as exc:
            raise FluidError(f"mixture {fluid!r} is not known to CoolProp: {exc}") from exc
        return state
    try:
        return _coolprop().AbstractState("HEOS", name)
    except ValueError as exc:
        raise FluidError(
            f"fluid {fluid!r} is not known to CoolProp (examples: Water, Methanol, n-Butane, "
            "Propane, Toluene, Ammonia, R407C, R410A.mix, Propane[0.6]&n-Butane[0.4], "
            "INCOMP::MEG-30%)"
        ) from exc


def _parse_mixture(fluid: str, name: str) -> tuple[list[str], list[float]]:
    """Component names and mole fractions of ``"A[x_A]&B[x_B]&..."``."""
    names: list[str] = []
    fractions: list[float] = []
    for part in name.split("&"):
        match = _MIXTURE_PART.match(part.strip())
        try:
            x = float(match.group(2)) if match else math.nan
        except ValueError:
            x = math.nan
        if not 0.0 < x <= 1.0:
            raise FluidError(
                f"mixture {fluid!r}: write each component as Name[mole fraction] joined by &, "
                "e.g. Propane[0.6]&n-Butane[0.4]"
            )
        names.append(match.group(1).strip())
        fractions.append(x)
    if abs(sum(fractions) - 1.0) > 1e-6:
        raise FluidError(
            f"mixture {fluid!r}: the mole fractions add up to {sum(fractions):.6g}, not 1"
        )
    return names, fractions


def water_mole_fraction(mass_fraction_solute: float, molar_mass_solute: float) -> float:
    """Mole fraction of water in a binary aqueous solution.

    x_water = (w_water / M_water) / (w_water / M_water + w_solute / M_solute), with the mass
    fractions w and molar masses M [g/mol] (definition of the mole fraction).
    """
    n_water = (1.0 - mass_fraction_solute) / MOLAR_MASS_WATER
    n_solute = mass_fraction_solute / molar_mass_solute
    return n_water / (n_water + n_solute)


@dataclass(frozen=True)
class Source:
    """Direct evaluation of one fluid's (p_v [Pa], rho [kg/m³]) at T [K], and where to look."""

    t_min: float  # lowest temperature to try [K]
    t_max: float  # highest temperature to try [K]
    t_critical: float  # [K], NaN if none
    evaluate: Callable[[float], tuple[float, float]]  # raises ValueError where CoolProp fails
    vapour_pressure_model: str
    density_model: str


def _critical_temperature(state: CoolProp.AbstractState) -> float:
    """CoolProp's critical temperature [K]; for a mixture its one stable critical point."""
    try:
        return float(state.T_critical())
    except ValueError:
        pass
    try:
        points = [c for c in state.all_critical_points() if c.stable and c.p > 0.0]
    except ValueError:
        return math.nan
    return float(points[0].T) if len(points) == 1 else math.nan


def heos_source(fluid: str) -> Source:
    """Where to evaluate a fluid of CoolProp's HEOS backend (pure, blend or mixture)."""
    state = _state(fluid)
    t_crit = _critical_temperature(state)
    t_max = CRITICAL_FRACTION * t_crit if math.isfinite(t_crit) else float(state.Tmax())

    def evaluate(t: float) -> tuple[float, float]:
        state.update(_coolprop().QT_INPUTS, 0.0, t)
        return state.p(), state.rhomass()

    components = state.fluid_names()
    if len(components) > 1:
        # CoolProp's minimum temperature of a mixture is the mole-fraction average of its
        # components'; each component's equation holds only above its own (usually its triple
        # point), and the bubble points scatter by 1e-5 (relative) at the lowest temperatures
        # (LPG near 105 K, at 0.07 Pa). A mixture starts at the highest of the components'.
        t_min = max(float(_coolprop().AbstractState("HEOS", c).Tmin()) for c in components)
        pv_model, rho_model = "CoolProp bubble point (mixture)", "CoolProp bubble-point liquid"
    elif state.fluid_param_string("pure") == "false":
        t_min = float(state.Tmin())
        pv_model = "CoolProp bubble point (pseudo-pure blend)"
        rho_model = "CoolProp bubble-point liquid"
    else:
        t_min = float(state.Tmin())
        pv_model, rho_model = "CoolProp saturated liquid", "CoolProp saturated liquid"
    return Source(t_min, t_max, t_crit, evaluate, pv_model, rho_model)


def incompressible_source(
    fluid: str, choice: str | None, water_range: tuple[float, float]
) -> Source:
    """Where to evaluate an incompressible liquid: its CoolProp range within ``water_range``
    [K] (water's table, whose vapour pressure it uses), density from CoolProp, vapour pressure
    by the choice."""
    name, code, mass_fraction = _parse_incompressible(fluid)
    try:
        t_lo = float(PropsSI("Tmin", name))
        t_hi = float(PropsSI("Tmax", name))
    except ValueError as exc:
        raise FluidError(f"fluid {fluid!r} is not known to CoolProp: {exc}") from exc
    if choice is None:
        raise FluidError(
            f"fluid {fluid!r} is a CoolProp incompressible liquid, which has no vapour pressure "
            "in CoolProp: choose vapour_pressure='water' (water's vapour pressure, "
            "conservative for aqueous glycol and brine solutions) or 'raoult' (Raoult's law "
            "on the water mole fraction, for ethylene or propylene glycol - water: "
            f"{', '.join(sorted(GLYCOL_MOLAR_MASS))})"
        )
    if choice == "water":
        if code not in WATER_BOUNDED_SOLUTIONS:
            raise FluidError(
                f"vapour_pressure='water' is offered only for aqueous solutions of glycols, "
                f"glycerol or salts, whose vapour pressure lies below water's; {code!r} is not "
                "one of them, so water's vapour pressure would not be a safe bound"
            )
        factor = 1.0
        pv_model = "water vapour pressure (conservative)"
    else:
        if code not in GLYCOL_MOLAR_MASS:
            raise FluidError(
                f"vapour_pressure='raoult' needs an aqueous glycol solution of known solute "
                f"and mass fraction ({', '.join(sorted(GLYCOL_MOLAR_MASS))}); {code!r} is not "
                "one of them"
            )
        if mass_fraction is None:
            raise FluidError(
                f"vapour_pressure='raoult' needs the glycol mass fraction in the name, e.g. "
                f"INCOMP::{code}-30% or INCOMP::{code}[0.3]; got {fluid!r}"
            )
        factor = water_mole_fraction(mass_fraction, GLYCOL_MOLAR_MASS[code])
        pv_model = f"Raoult's law, x_water = {factor:.3f}"
    water_state = _state("Water")

    def evaluate(t: float) -> tuple[float, float]:
        water_state.update(_coolprop().QT_INPUTS, 0.0, t)
        # Raoult's law: p_v = x_water * p_sat,water(T) (factor 1 for the "water" choice).
        return factor * water_state.p(), PropsSI("D", "T", t, "P", NOMINAL_PRESSURE, name)

    t_min, t_max = max(t_lo, water_range[0]), min(t_hi, water_range[1])
    try:  # a concentration outside CoolProp's data fails here with CoolProp's own message
        evaluate(0.5 * (t_min + t_max))
    except ValueError as exc:
        raise FluidError(f"CoolProp gives no density for {fluid!r}: {exc}") from exc
    rho_model = f"CoolProp incompressible liquid at {NOMINAL_PRESSURE:.0f} Pa"
    return Source(t_min, t_max, math.nan, evaluate, pv_model, rho_model)


def _parse_incompressible(fluid: str) -> tuple[str, str, float | None]:
    """CoolProp name, code and concentration of ``INCOMP::CODE-30%`` or ``INCOMP::CODE[0.3]``.

    The name is spelt as PropsSI wants it (prefix in capitals, no spaces around).
    """
    name = fluid.strip()[len(_INCOMP) :].strip()
    match = _INCOMP_NAME.match(name)
    if not match:
        raise FluidError(
            f"fluid {fluid!r}: write an incompressible liquid as INCOMP::CODE, "
            "INCOMP::CODE-30% or INCOMP::CODE[0.3]"
        )
    code, percent, fraction = match.groups()
    try:
        if percent is not None:
            return _INCOMP + name, code, float(percent) / 100.0
        return _INCOMP + name, code, (float(fraction) if fraction is not None else None)
    except ValueError as exc:
        raise FluidError(f"fluid {fluid!r}: unreadable concentration") from exc


def evaluate_source(source: Source, temps: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(p_v, rho) at each of the rising ``temps``; NaN where CoolProp fails to converge.

    After the first success the evaluation stops at the first failure (the rest stay NaN):
    the valid range ends there, and failing calls are the slowest ones.
    """
    p = np.full(len(temps), np.nan)
    rho = np.full(len(temps), np.nan)
    started = False
    for i, t in enumerate(temps):
        try:
            p[i], rho[i] = source.evaluate(float(t))
        except ValueError:
            if started:
                break
            continue
        started = True
    return p, rho
