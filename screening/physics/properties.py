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
from dataclasses import dataclass, field, replace
from functools import lru_cache

import numpy as np

from screening.base.kernels import table_eval
from screening.physics import tablecache
from screening.physics.coolprop_fluids import (
    CRITICAL_FRACTION,
    NOMINAL_PRESSURE,
    FluidError,
    Source,
    evaluate_source,
    heos_source,
    incompressible_source,
    is_incompressible,
)

#: Target relative interpolation error of p_v and rho at grid mid-points.
TARGET_REL_ERROR = 1e-6
_FIRST_STEP = 0.05  # [K]
_SMALLEST_STEP = 0.005  # [K]


#: Choices of vapour-pressure model for CoolProp incompressible liquids (``vapour_pressure=``).
VAPOUR_PRESSURE_CHOICES = ("water", "raoult")


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


def _tabulate(fluid: str, source: Source, choice: str | None) -> FluidTable:
    """Grid, refined by halving the step (old mid-points become nodes) until the error holds."""
    n = max(1, math.ceil((source.t_max - source.t_min) / _FIRST_STEP))
    step = (source.t_max - source.t_min) / n
    t_nodes = source.t_min + step * np.arange(n + 1)
    p_nodes, rho_nodes = evaluate_source(source, t_nodes)
    err_before = math.inf
    while True:
        t_mids = t_nodes[:-1] + 0.5 * step
        p_mids, rho_mids = evaluate_source(source, t_mids)
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
    if is_incompressible(fluid):
        water = fluid_table("Water")
        source = incompressible_source(fluid, choice, (water.t_min, water.t_max))
    else:
        if choice is not None:
            raise FluidError(
                f"vapour_pressure={choice!r} applies only to CoolProp incompressible liquids "
                f"(INCOMP::...); CoolProp gives {fluid!r} its own vapour pressure"
            )
        source = heos_source(fluid)
    return _tabulate(fluid, source, choice)
