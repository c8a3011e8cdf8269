"""Saturated-liquid properties of the pumped fluid, tabulated once per fluid from CoolProp.

NPSH available needs the vapour pressure p_v(T) and the liquid density rho(T) at every sample.
A CoolProp call per sample would cost about ten microseconds: too slow for a plant's month of
one-minute data. Each fluid is therefore evaluated once on a uniform temperature grid (the
saturated liquid, quality 0) and interpolated linearly: ln p_v and rho against T. The grid step
is refined at build time until the interpolation error at every mid-point between grid nodes is
below :data:`TARGET_REL_ERROR` against direct CoolProp calls, and the reached error is stored
with the table (``max_rel_error_pv``, ``max_rel_error_rho``); a test checks it independently.

Valid range: from CoolProp's minimum temperature of the fluid (the triple point for water) up to
:data:`CRITICAL_FRACTION` of its critical temperature. Outside it the functions return NaN and
:meth:`FluidTable.in_range` is False: the calculator marks such samples bad data. A liquid within
2 % of its critical temperature is beyond what an NPSH screening can say anything useful about.

Sources: CoolProp (Bell et al., Ind. Eng. Chem. Res. 53 (2014) 2498-2508), whose water model is
IAPWS-95 (Wagner and Pruss, J. Phys. Chem. Ref. Data 31 (2002) 387).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

import CoolProp
import numpy as np
from CoolProp.CoolProp import PropsSI

from .kernels import table_eval

#: Target relative interpolation error of p_v and rho at grid mid-points.
TARGET_REL_ERROR = 1e-6
#: Upper end of the valid range as a fraction of the critical temperature.
CRITICAL_FRACTION = 0.98
_FIRST_STEP = 0.05  # [K]
_SMALLEST_STEP = 0.005  # [K]


class FluidError(ValueError):
    """A fluid name CoolProp does not know, or one without a vapour pressure."""


def saturated_liquid(fluid: str, temperature) -> tuple[np.ndarray, np.ndarray]:
    """Vapour pressure [Pa] and saturated-liquid density [kg/m³] by direct CoolProp calls.

    Slow (one call per temperature); the reference against which tables are checked.

    Parameters
    ----------
    fluid : str
        CoolProp fluid name, e.g. ``"Water"``, ``"n-Butane"``.
    temperature : array_like
        Temperatures [K].
    """
    state = _state(fluid)
    temps = np.atleast_1d(np.asarray(temperature, dtype=np.float64))
    p = np.empty_like(temps)
    rho = np.empty_like(temps)
    for i, t in enumerate(temps):
        state.update(CoolProp.QT_INPUTS, 0.0, float(t))
        p[i] = state.p()
        rho[i] = state.rhomass()
    return p, rho


def _state(fluid: str) -> CoolProp.AbstractState:
    if fluid.upper().startswith("INCOMP::"):
        raise FluidError(
            f"fluid {fluid!r} is a CoolProp incompressible solution, which has no vapour "
            "pressure in CoolProp; use a pure fluid or predefined mixture"
        )
    try:
        return CoolProp.AbstractState("HEOS", fluid)
    except ValueError as exc:
        raise FluidError(
            f"fluid {fluid!r} is not known to CoolProp (examples: Water, Methanol, n-Butane, "
            "Propane, Toluene, Ammonia)"
        ) from exc


@dataclass(frozen=True)
class FluidTable:
    """Saturated-liquid vapour pressure and density of one fluid on a uniform grid.

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
        Saturated-liquid density [kg/m³] at the nodes.
    t_critical : float
        Critical temperature [K].
    max_rel_error_pv, max_rel_error_rho : float
        Largest relative error at the grid mid-points against direct CoolProp calls.
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

    def _locate(self, temperature):
        t = np.asarray(temperature, dtype=np.float64)
        pos = (t - self.t_min) / self.step
        ok = (t >= self.t_min) & (t <= self.t_max)
        pos = np.where(ok, pos, 0.0)
        idx = np.minimum(pos.astype(np.int64), len(self.rho) - 2)
        frac = pos - idx
        return idx, frac, ok

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
        """Saturated-liquid density [kg/m³] at ``temperature`` [K]; NaN outside the range."""
        return self.properties(temperature)[1]


def _build(fluid: str, step: float) -> tuple[FluidTable, float, float]:
    t_min = float(PropsSI("Tmin", fluid))
    t_crit = float(PropsSI("Tcrit", fluid))
    t_max = CRITICAL_FRACTION * t_crit
    n = int(np.ceil((t_max - t_min) / step))
    step = (t_max - t_min) / n
    temps = t_min + step * np.arange(n + 1)
    p, rho = saturated_liquid(fluid, temps)
    mids = temps[:-1] + 0.5 * step
    p_mid, rho_mid = saturated_liquid(fluid, mids)
    table = FluidTable(fluid, t_min, t_max, step, np.log(p), rho, t_crit, 0.0, 0.0)
    p_int, rho_int = table.properties(mids)
    err_p = float(np.max(np.abs(p_int / p_mid - 1.0)))
    err_rho = float(np.max(np.abs(rho_int / rho_mid - 1.0)))
    return table, err_p, err_rho


@lru_cache(maxsize=64)
def fluid_table(fluid: str) -> FluidTable:
    """The saturated-liquid table of ``fluid``, built once per process and cached.

    Parameters
    ----------
    fluid : str
        CoolProp fluid name (pure fluid or predefined mixture).

    Raises
    ------
    FluidError
        If CoolProp does not know the fluid or gives it no saturation curve.
    """
    _state(fluid)  # raises a clear error for unknown or incompressible fluids
    step = _FIRST_STEP
    try:
        while True:
            table, err_p, err_rho = _build(fluid, step)
            if max(err_p, err_rho) <= TARGET_REL_ERROR or step / 2 < _SMALLEST_STEP:
                break
            step /= 2
    except ValueError as exc:
        raise FluidError(f"CoolProp gives no saturated liquid for {fluid!r}: {exc}") from exc
    return FluidTable(
        table.fluid,
        table.t_min,
        table.t_max,
        table.step,
        table.ln_pv,
        table.rho,
        table.t_critical,
        err_p,
        err_rho,
    )
