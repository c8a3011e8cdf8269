"""Liquid viscosity for the Reynolds number of a suction line, tabulated once per fluid.

From CoolProp: the saturated liquid (quality 0) of a pure fluid, blend or mixture, and an
incompressible solution's liquid at :data:`~screening.physics.coolprop_fluids.NOMINAL_PRESSURE`
(CoolProp fits its viscosity to published data, as for the density). The table covers the
temperatures of the fluid's property table (:func:`screening.physics.properties.fluid_table`)
where CoolProp's viscosity converges: mixtures' viscosity models fail over parts of that range
(R410A.mix below about 289 K with CoolProp 8), so the table ends where they stop, and the
range used is stored with it (``t_min``, ``t_max``, ``source``). Outside it the viscosity is
NaN: a sample there has no line loss, and the calculator counts it as bad data, never as a
zero loss.

Sources: CoolProp (Bell et al., Ind. Eng. Chem. Res. 53 (2014) 2498-2508); for water the
IAPWS 2008 viscosity formulation (Huber et al., J. Phys. Chem. Ref. Data 38 (2009) 101).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np
from numpy.typing import ArrayLike

from screening.physics import tablecache
from screening.physics.coolprop_fluids import (
    NOMINAL_PRESSURE,
    FluidError,
    PropsSI,
    _coolprop,
    _parse_incompressible,
    _state,
    is_incompressible,
)
from screening.physics.properties import fluid_table

#: Target relative interpolation error of the viscosity table at grid mid-points.
VISCOSITY_TARGET_REL_ERROR = 1e-6
_VISC_FIRST_STEP = 0.2  # [K]
_VISC_SMALLEST_STEP = 0.025  # [K]


@dataclass(frozen=True)
class ViscosityTable:
    """Liquid dynamic viscosity of one fluid on a uniform temperature grid.

    ln μ is interpolated linearly in T (μ of a liquid falls nearly exponentially with T).

    Attributes
    ----------
    fluid : str
        CoolProp name.
    t_min, t_max : float
        Valid temperature range [K]: the fluid's property table range where CoolProp's
        viscosity converges.
    step : float
        Grid step [K].
    ln_mu : numpy.ndarray
        Natural logarithm of the viscosity [ln Pa·s] at the nodes.
    max_rel_error : float
        Largest relative error at the grid mid-points against direct CoolProp calls [-].
    source : str
        What the viscosity is and over which range, for reports.
    """

    fluid: str
    t_min: float
    t_max: float
    step: float
    ln_mu: np.ndarray = field(repr=False)
    max_rel_error: float
    source: str = ""

    def in_range(self, temperature: ArrayLike) -> np.ndarray:
        """True where the temperature [K] lies in the table's valid range."""
        t = np.asarray(temperature, dtype=np.float64)
        return (t >= self.t_min) & (t <= self.t_max)

    def viscosity(self, temperature: ArrayLike) -> np.ndarray:
        """Dynamic viscosity [Pa·s] at ``temperature`` [K]; NaN outside the valid range."""
        t = np.asarray(temperature, dtype=np.float64)
        ok = self.in_range(t)
        pos = np.where(ok, (t - self.t_min) / self.step, 0.0)
        idx = np.minimum(pos.astype(np.int64), len(self.ln_mu) - 2)
        frac = pos - idx
        ln_mu = self.ln_mu[idx] * (1.0 - frac) + self.ln_mu[idx + 1] * frac
        return np.where(ok, np.exp(ln_mu), np.nan)


def _evaluator(fluid: str):
    """A function T [K] -> μ [Pa·s] by direct CoolProp calls (NaN where CoolProp fails), the
    temperature range of the fluid's property table [K], and what it evaluates."""
    if is_incompressible(fluid):
        name, _code, _fraction = _parse_incompressible(fluid)
        try:
            t_lo, t_hi = float(PropsSI("Tmin", name)), float(PropsSI("Tmax", name))
        except ValueError as exc:
            raise FluidError(f"fluid {fluid!r} is not known to CoolProp: {exc}") from exc
        water = fluid_table("Water")  # the range of the table an incompressible liquid uses
        t_lo, t_hi = max(t_lo, water.t_min), min(t_hi, water.t_max)

        def one(t: float) -> float:
            return float(PropsSI("V", "T", t, "P", NOMINAL_PRESSURE, name))

        what = f"CoolProp incompressible liquid at {NOMINAL_PRESSURE:.0f} Pa"
    else:
        table = fluid_table(fluid)
        t_lo, t_hi = table.t_min, table.t_max
        state = _state(fluid)

        def one(t: float) -> float:
            state.update(_coolprop().QT_INPUTS, 0.0, t)
            return float(state.viscosity())

        what = "CoolProp saturated liquid"

    def direct(temps: np.ndarray) -> np.ndarray:
        out = np.full(len(temps), np.nan)
        for i, t in enumerate(temps):
            try:
                out[i] = one(float(t))
            except ValueError:
                continue
        out[~(out > 0)] = np.nan
        return out

    return direct, (t_lo, t_hi), what


def _converged_range(temps: np.ndarray, mu: np.ndarray) -> tuple[int, int]:
    """First and last index of the first run of finite viscosities."""
    good = np.isfinite(mu)
    if not good.any():
        return 0, -1
    first = int(np.argmax(good))
    bad = ~good[first:]
    last = first + (int(np.argmax(bad)) - 1 if bad.any() else len(bad) - 1)
    return first, last


def _longest_run(good: np.ndarray) -> tuple[int, int]:
    """First and last index of the longest run of True."""
    edges = np.flatnonzero(np.diff(np.concatenate(([0], good.astype(np.int8), [0]))))
    starts, stops = edges[0::2], edges[1::2]
    i = int(np.argmax(stops - starts))
    return int(starts[i]), int(stops[i]) - 1


@lru_cache(maxsize=64)
def viscosity_table(fluid: str) -> ViscosityTable:
    """The liquid viscosity table of ``fluid`` (see :func:`build_viscosity_table`), kept in
    the disk cache of :mod:`screening.physics.tablecache` between runs."""
    settings = (VISCOSITY_TARGET_REL_ERROR, _VISC_FIRST_STEP, _VISC_SMALLEST_STEP)
    key = tablecache.key("viscosity-table", fluid, settings)
    cached = tablecache.load(key, ViscosityTable)
    if cached is not None:
        return cached
    table = build_viscosity_table(fluid)
    tablecache.store(key, table)
    return table


def build_viscosity_table(fluid: str) -> ViscosityTable:
    """The liquid viscosity table of ``fluid``, built once per process and cached.

    Over the temperatures of the fluid's property table, evaluated on a grid from 0.2 K down
    (halved until the interpolation error at every mid-point is below
    :data:`VISCOSITY_TARGET_REL_ERROR` against direct CoolProp calls, or the step reaches
    0.005 K); the range ends where CoolProp's viscosity stops converging, and the range used
    is in ``source``.

    Parameters
    ----------
    fluid : str
        CoolProp fluid name: pure fluid, blend, mixture or incompressible solution.

    Raises
    ------
    FluidError
        If CoolProp does not know the fluid or gives it no liquid viscosity anywhere in its
        range.
    """
    direct, (t_lo, t_hi), what = _evaluator(fluid)
    n = max(2, int(np.ceil((t_hi - t_lo) / 1.0)))
    coarse = np.linspace(t_lo, t_hi, n + 1)
    first, last = _converged_range(coarse, direct(coarse))
    if last <= first:
        raise FluidError(
            f"CoolProp gives no liquid viscosity for {fluid!r} between {t_lo:.2f} K and "
            f"{t_hi:.2f} K"
        )
    t_min, t_max = float(coarse[first]), float(coarse[last])
    step = _VISC_FIRST_STEP
    error_before = np.inf
    while True:
        n = max(1, int(np.ceil((t_max - t_min) / step)))
        grid_step = (t_max - t_min) / n
        temps = t_min + grid_step * np.arange(n + 1)
        temps[-1] = t_max
        mu = direct(temps)
        a, b = _converged_range(temps, mu)
        if b < len(temps) - 1:  # a failure inside the coarse run: the range ends before it
            t_max = float(temps[b])
            continue
        mids = temps[:-1] + 0.5 * grid_step
        table = ViscosityTable(fluid, t_min, t_max, grid_step, np.log(mu), 0.0)
        with np.errstate(invalid="ignore"):
            error = float(np.nanmax(np.abs(table.viscosity(mids) / direct(mids) - 1)))
        # stop at the target, at the smallest step, or when halving the step no longer
        # halves the error: then the scatter of CoolProp's own solutions (mixtures) dominates
        if (
            error <= VISCOSITY_TARGET_REL_ERROR
            or step / 2 < _VISC_SMALLEST_STEP
            or error > 0.5 * error_before
        ):
            break
        error_before = error
        step /= 2
    if error > VISCOSITY_TARGET_REL_ERROR:
        # where CoolProp's viscosity turns singular (a mixture near the low end of its
        # convergence) no grid meets the target: keep the longest stretch where it is met
        with np.errstate(invalid="ignore"):
            good = np.abs(table.viscosity(mids) / direct(mids) - 1) <= VISCOSITY_TARGET_REL_ERROR
        a, b = _longest_run(good)
        temps, mu = temps[a : b + 2], mu[a : b + 2]
        t_min, t_max = float(temps[0]), float(temps[-1])
        error = VISCOSITY_TARGET_REL_ERROR
    narrower = " (where CoolProp's viscosity converges and tabulates to 1e-6)" if (
        t_min > t_lo + 1e-9 or t_max < t_hi - 1e-9
    ) else ""  # fmt: skip
    source = f"{what}, {t_min:.2f} K to {t_max:.2f} K{narrower}"
    step = float(temps[1] - temps[0])
    return ViscosityTable(fluid, t_min, t_max, step, np.log(mu), error, source)


def liquid_viscosity(fluid: str, temperature: ArrayLike) -> np.ndarray:
    """Liquid dynamic viscosity [Pa·s] of ``fluid`` at ``temperature`` [K].

    From CoolProp (``PropsSI('V', 'T', T, 'Q', 0, fluid)``; for water the IAPWS 2008
    viscosity formulation; an incompressible solution at 1 atm), tabulated once per fluid
    (:func:`viscosity_table`) and interpolated (ln μ linear in T), with a measured relative
    error below 1e-6: a direct CoolProp call costs about 16 µs per temperature, too slow for a
    month of one-minute samples.

    The liquid is taken at saturation: the rise of viscosity with pressure above it is
    neglected. Measured with CoolProp, 1 MPa above saturation changes μ of water by 0.03 % at
    20 °C and 0.14 % at 150 °C, and of n-butane, propane or toluene at 0.8·T_crit by about
    2 %. In turbulent flow the friction factor varies at most as Re^−0.25 (Blasius), so the
    loss moves by a quarter of that or less (by all of it in laminar flow). NaN outside the
    valid range (:func:`viscosity_table`) and for NaN temperatures.

    Parameters
    ----------
    fluid : str
        CoolProp fluid name, e.g. ``"Water"``, ``"n-Butane"``, ``"INCOMP::MEG-30%"``.
    temperature : array_like
        Liquid temperature [K].

    Raises
    ------
    FluidError
        As :func:`viscosity_table`.
    """
    return viscosity_table(fluid).viscosity(temperature)
