"""Liquid properties of the pumped fluid, tabulated once per fluid from CoolProp.

NPSH available needs the vapour pressure p_v(T) and the liquid density rho(T) at every sample.
A CoolProp call per sample would cost from a microsecond (pure fluids) to half a millisecond
(mixtures): too slow for a plant's month of one-minute data. Each fluid is therefore evaluated
once on a uniform temperature grid and interpolated linearly: ln p_v and rho against T. The grid
step is refined at build time until the interpolation error at every mid-point between grid
nodes is below :data:`TARGET_REL_ERROR` against direct CoolProp calls, and the reached error is
stored with the table (``max_rel_error_pv``, ``max_rel_error_rho``); a test checks it
independently.

Supported fluids (``fluid_table(fluid, vapour_pressure=None)``):

- Pure fluids of CoolProp's HEOS backend (``"Water"``, ``"n-Butane"``, ...): the saturated
  liquid (quality 0 at T).
- CoolProp's pseudo-pure refrigerant blends (``"R407C"``, ``"R404A"``, ``"R410A"``,
  ``"R507A"``): one equation of state for the blend, whose quality-0 state is the bubble point.
- CoolProp's predefined mixtures, named with ``.mix`` (``"R407C.mix"``, ``"R410A.mix"``; the
  list is ``get_global_param_string("predefined_mixtures")``), and mixtures given by mole
  fraction, ``"Propane[0.6]&n-Butane[0.4]"`` with or without a leading ``"HEOS::"`` (the mole
  fractions must add up to 1 within 1e-6). The vapour pressure of a mixture is its bubble-point
  pressure (quality 0 at T): the pressure at which the liquid of the given composition starts to
  boil, which is what cavitation begins from. ``AbstractState("HEOS", name)`` accepts the first
  three forms as they are; a mixture string is split into component names and mole fractions.
- CoolProp's incompressible liquids and aqueous solutions (``"INCOMP::MEG-30%"``,
  ``"INCOMP::MPG[0.4]"``), for which CoolProp gives a density but no vapour pressure. The caller
  must choose one (see :func:`fluid_table`); without a choice the table is refused, never built
  on a silent default.

Valid range. Pure fluids and pseudo-pure blends: from CoolProp's minimum temperature of the
fluid (the triple point for water) up to :data:`CRITICAL_FRACTION` of its critical temperature.
Mixtures: from the highest of the components' minimum temperatures (CoolProp's own minimum for
a mixture is the mole-fraction average, below which some component's equation does not hold)
up to :data:`CRITICAL_FRACTION` of the mixture's critical temperature. Where CoolProp finds
several critical points (R410A.mix, R404A.mix), the one stable point at positive pressure is
taken; failing that, the range is bounded by convergence alone. For every fluid the range also
ends where CoolProp's saturation calculation stops converging: mixture bubble points fail at
some temperatures well below the critical point (phase-envelope trouble; with CoolProp 8.0,
R407C.mix from about 327.9 K and R410A.mix from about 314.7 K, with islands of convergence
above), so the end is found at build time, as the last grid node before the first node or
mid-point of the finest grid where CoolProp fails or where the vapour pressure stops rising
with temperature (a sign of a wrong root). Incompressible liquids: CoolProp's Tmin..Tmax of
the liquid intersected with the range of water's table, whose vapour pressure they use (so
not below water's triple point, 273.16 K). Outside the valid range the functions return NaN
and :meth:`FluidTable.in_range` is False: the calculator marks such samples bad data.
Temperatures are never clamped into the range. A liquid within 2 % of its critical temperature
is beyond what an NPSH screening can say anything useful about.

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
from dataclasses import dataclass, field, replace
from functools import lru_cache
from typing import TYPE_CHECKING

import numpy as np

from screening.base.kernels import table_eval
from screening.physics import tablecache

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


#: Target relative interpolation error of p_v and rho at grid mid-points.
TARGET_REL_ERROR = 1e-6
#: Upper end of the valid range as a fraction of the critical temperature.
CRITICAL_FRACTION = 0.98
_FIRST_STEP = 0.05  # [K]
_SMALLEST_STEP = 0.005  # [K]

#: Choices of vapour-pressure model for CoolProp incompressible liquids (``vapour_pressure=``).
VAPOUR_PRESSURE_CHOICES = ("water", "raoult")
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


def _is_incompressible(fluid: str) -> bool:
    return fluid.strip().upper().startswith(_INCOMP)


def _state(fluid: str) -> CoolProp.AbstractState:
    """A HEOS state of a pure fluid, pseudo-pure blend, predefined or given mixture."""
    if _is_incompressible(fluid):
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
class FluidTable:
    """Vapour pressure and liquid density of one fluid on a uniform temperature grid.

    Attributes
    ----------
    fluid : str
        CoolProp name.
    t_min, t_max : float
        Valid temperature range [K].
    step : float
        Grid step [K].
    ln_pv : numpy.ndarray
        Natural logarithm of the vapour pressure [ln Pa] at the nodes.
    rho : numpy.ndarray
        Liquid density [kg/m³] at the nodes: the saturated (bubble-point) liquid, or for an
        incompressible liquid its density at :data:`NOMINAL_PRESSURE`.
    t_critical : float
        Critical temperature [K]; NaN for incompressible liquids and for mixtures of which
        CoolProp finds no single stable critical point.
    max_rel_error_pv, max_rel_error_rho : float
        Largest relative error at the grid mid-points against direct CoolProp calls.
    vapour_pressure_model : str
        Short text for reports saying where the vapour pressure comes from, e.g.
        ``"CoolProp saturated liquid"``, ``"CoolProp bubble point (mixture)"``,
        ``"water vapour pressure (conservative)"``, ``"Raoult's law, x_water = 0.889"``.
    density_model : str
        Short text for reports saying which density is used.
    vapour_pressure_choice : str or None
        The ``vapour_pressure`` choice the table was built with (None for CoolProp's own).
    """

    fluid: str
    t_min: float
    t_max: float
    step: float
    ln_pv: np.ndarray = field(repr=False)
    rho: np.ndarray = field(repr=False)
    t_critical: float
    max_rel_error_pv: float
    max_rel_error_rho: float
    vapour_pressure_model: str = "CoolProp saturated liquid"
    density_model: str = "CoolProp saturated liquid"
    vapour_pressure_choice: str | None = None

    def in_range(self, temperature) -> np.ndarray:
        """True where the temperature [K] lies in the table's valid range."""
        t = np.asarray(temperature, dtype=np.float64)
        return (t >= self.t_min) & (t <= self.t_max)

    def properties(self, temperature) -> tuple[np.ndarray, np.ndarray]:
        """Vapour pressure [Pa] and liquid density [kg/m³] at ``temperature`` [K].

        Linear interpolation of ln p_v and rho on the grid; NaN outside the valid range.
        """
        t = np.ascontiguousarray(np.atleast_1d(np.asarray(temperature, dtype=np.float64)))
        pv, rho = table_eval(t.ravel(), self.t_min, self.t_max, self.step, self.ln_pv, self.rho)
        shape = np.shape(temperature)
        return pv.reshape(shape), rho.reshape(shape)

    def vapour_pressure(self, temperature) -> np.ndarray:
        """Vapour pressure [Pa] at ``temperature`` [K]; NaN outside the valid range."""
        return self.properties(temperature)[0]

    def density(self, temperature) -> np.ndarray:
        """Liquid density [kg/m³] at ``temperature`` [K]; NaN outside the valid range."""
        return self.properties(temperature)[1]


@dataclass(frozen=True)
class _Source:
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


def _heos_source(fluid: str) -> _Source:
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
    return _Source(t_min, t_max, t_crit, evaluate, pv_model, rho_model)


def _incompressible_source(fluid: str, choice: str | None) -> _Source:
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
    water = fluid_table("Water")
    water_state = _state("Water")

    def evaluate(t: float) -> tuple[float, float]:
        water_state.update(_coolprop().QT_INPUTS, 0.0, t)
        # Raoult's law: p_v = x_water * p_sat,water(T) (factor 1 for the "water" choice).
        return factor * water_state.p(), PropsSI("D", "T", t, "P", NOMINAL_PRESSURE, name)

    t_min, t_max = max(t_lo, water.t_min), min(t_hi, water.t_max)
    try:  # a concentration outside CoolProp's data fails here with CoolProp's own message
        evaluate(0.5 * (t_min + t_max))
    except ValueError as exc:
        raise FluidError(f"CoolProp gives no density for {fluid!r}: {exc}") from exc
    rho_model = f"CoolProp incompressible liquid at {NOMINAL_PRESSURE:.0f} Pa"
    return _Source(t_min, t_max, math.nan, evaluate, pv_model, rho_model)


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


def _evaluate(source: _Source, temps: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
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


def _converged_run(p: np.ndarray, rho: np.ndarray) -> tuple[int, int]:
    """First and last node of the first run of good points (nodes at even positions).

    ``p`` and ``rho`` alternate node, mid-point, node, ... along rising temperature. A point
    is good where both are finite and positive and p_v rises from the point before it. The run
    starts at the first good node and ends at the last node before the first bad point.
    """
    good = np.isfinite(p) & np.isfinite(rho) & (p > 0.0) & (rho > 0.0)
    nodes = np.flatnonzero(good[0::2])
    if len(nodes) == 0:
        return 0, -1
    first = 2 * int(nodes[0])
    bad = ~good[first + 1 :] | ~(p[first + 1 :] > p[first:-1])
    stop = first + 1 + int(np.argmax(bad)) if bad.any() else len(p)  # first bad position
    last = stop - 1 if (stop - 1) % 2 == 0 else stop - 2  # last node before it
    return first // 2, last // 2


def _tabulate(fluid: str, source: _Source, choice: str | None) -> FluidTable:
    """Grid, refined by halving the step (old mid-points become nodes) until the error holds."""
    n = max(1, math.ceil((source.t_max - source.t_min) / _FIRST_STEP))
    step = (source.t_max - source.t_min) / n
    t_nodes = source.t_min + step * np.arange(n + 1)
    p_nodes, rho_nodes = _evaluate(source, t_nodes)
    err_before = math.inf
    while True:
        t_mids = t_nodes[:-1] + 0.5 * step
        p_mids, rho_mids = _evaluate(source, t_mids)
        first, last = _converged_run(_interleave(p_nodes, p_mids), _interleave(rho_nodes, rho_mids))
        if last <= first:
            raise FluidError(
                f"CoolProp's saturation calculation for {fluid!r} converges nowhere between "
                f"{source.t_min:.2f} K and {source.t_max:.2f} K"
            )
        t_nodes, p_nodes, rho_nodes = (a[first : last + 1] for a in (t_nodes, p_nodes, rho_nodes))
        t_mids, p_mids, rho_mids = (a[first:last] for a in (t_mids, p_mids, rho_mids))
        table = FluidTable(
            fluid,
            float(t_nodes[0]),
            float(t_nodes[-1]),
            step,
            np.log(p_nodes),
            rho_nodes.copy(),
            source.t_critical,
            0.0,
            0.0,
            source.vapour_pressure_model,
            source.density_model,
            choice,
        )
        p_int, rho_int = table.properties(t_mids)
        err_p = float(np.max(np.abs(p_int / p_mids - 1.0)))
        err_rho = float(np.max(np.abs(rho_int / rho_mids - 1.0)))
        err = max(err_p, err_rho)
        # Stop at the target; at the smallest step; or when halving the step no longer halves
        # the error (it falls fourfold while the curvature of the curve dominates): then the
        # scatter of CoolProp's own iterative solutions dominates, and finer grids cost time
        # for nothing. The reached error is stored either way.
        if err <= TARGET_REL_ERROR or step / 2 < _SMALLEST_STEP or err > 0.5 * err_before:
            return replace(table, max_rel_error_pv=err_p, max_rel_error_rho=err_rho)
        err_before = err
        t_nodes = _interleave(t_nodes, t_mids)
        p_nodes = _interleave(p_nodes, p_mids)
        rho_nodes = _interleave(rho_nodes, rho_mids)
        step /= 2


def _interleave(nodes: np.ndarray, mids: np.ndarray) -> np.ndarray:
    out = np.empty(len(nodes) + len(mids))
    out[0::2] = nodes
    out[1::2] = mids
    return out


def _normalise_choice(vapour_pressure) -> str | None:
    if vapour_pressure is None:
        return None
    if not isinstance(vapour_pressure, str):
        raise FluidError(f"vapour_pressure must be text or None, not {vapour_pressure!r}")
    choice = vapour_pressure.strip().lower()
    if choice == "":
        return None
    if choice not in VAPOUR_PRESSURE_CHOICES:
        raise FluidError(
            f"vapour_pressure {vapour_pressure!r} is not a known choice "
            f"({', '.join(map(repr, VAPOUR_PRESSURE_CHOICES))} or none)"
        )
    return choice


def fluid_table(fluid: str, vapour_pressure: str | None = None) -> FluidTable:
    """The property table of ``fluid``, built once per process and cached.

    A pure fluid's table takes a few hundredths of a second to build; a mixture's a few seconds
    (2-6 s for R407C.mix, R410A.mix and a propane/n-butane LPG, 13 s for a ternary LPG; one
    bubble point costs about half a millisecond).

    Parameters
    ----------
    fluid : str
        CoolProp fluid name: a pure fluid, a pseudo-pure blend (``"R407C"``), a predefined
        mixture (``"R410A.mix"``), a mixture by mole fraction
        (``"Propane[0.6]&n-Butane[0.4]"``) or an incompressible liquid
        (``"INCOMP::MEG-30%"``, which needs ``vapour_pressure``).
    vapour_pressure : {None, "water", "raoult"}
        Only for incompressible liquids, and required for them:

        - ``"water"``: water's vapour pressure at T. Offered for aqueous solutions of glycols,
          glycerol and salts (:data:`WATER_BOUNDED_SOLUTIONS`): their solutes are far less
          volatile than water and lower its vapour pressure, so water's is the conservative
          (higher) value.
        - ``"raoult"``: Raoult's law on the water mole fraction, p_v = x_water · p_sat,water(T),
          with x_water from the glycol mass fraction in the name and the molar masses
          (:data:`GLYCOL_MOLAR_MASS`, :data:`MOLAR_MASS_WATER`). Offered for ethylene and
          propylene glycol - water only. The glycol's own vapour pressure is left out (tiny
          beside water's), and glycol-water deviates negatively from Raoult's law (from
          memory), so the law tends to overstate p_v slightly.

        Case and surrounding spaces are ignored; an empty text is the same as None.

    Raises
    ------
    FluidError
        If CoolProp does not know the fluid or gives it no saturation curve, for an
        incompressible liquid without a valid choice, and for a choice given with a fluid that
        has its own vapour pressure in CoolProp.
    """
    choice = _normalise_choice(vapour_pressure)
    adopted = _ADOPTED.get((fluid, choice))
    return adopted if adopted is not None else _fluid_table(fluid, choice)


#: Tables built in another process and handed over (see :func:`adopt_fluid_tables`).
_ADOPTED: dict[tuple[str, str | None], FluidTable] = {}


def adopt_fluid_tables(tables: dict[tuple[str, str | None], FluidTable]) -> None:
    """Make tables built elsewhere (the parent of a worker process) this process's own, so
    :func:`fluid_table` does not build them again. Keys: (fluid, normalised choice)."""
    _ADOPTED.update(tables)


def normalise_choice(vapour_pressure) -> str | None:
    """The vapour-pressure choice as :func:`fluid_table` keys it (None, "water", "raoult")."""
    return _normalise_choice(vapour_pressure)


@lru_cache(maxsize=64)
def _fluid_table(fluid: str, choice: str | None) -> FluidTable:
    # The choice is part of the cache key: one fluid can be tabulated under both choices.
    settings = (TARGET_REL_ERROR, CRITICAL_FRACTION, _FIRST_STEP, _SMALLEST_STEP, NOMINAL_PRESSURE)
    key = tablecache.key("fluid-table", fluid, choice, settings)
    cached = tablecache.load(key, FluidTable)
    if cached is not None:
        return cached
    table = _build_table(fluid, choice)
    tablecache.store(key, table)
    return table


def _build_table(fluid: str, choice: str | None) -> FluidTable:
    if _is_incompressible(fluid):
        source = _incompressible_source(fluid, choice)
    else:
        if choice is not None:
            raise FluidError(
                f"vapour_pressure={choice!r} applies only to CoolProp incompressible liquids "
                f"(INCOMP::...); CoolProp gives {fluid!r} its own vapour pressure"
            )
        source = _heos_source(fluid)
    return _tabulate(fluid, source, choice)
