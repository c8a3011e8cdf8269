"""NPSH available from a suction vessel: pure functions of SI arrays.

A pump fed from a vessel (open tank, pressurised drum, deaerator, hotwell) has its NPSH
available written from the liquid surface down to the NPSH datum:

    NPSHa = (p_surface,abs − p_v) / (ρ·g) + (level + datum offset) − h_f(Q)

that is h_a − h_vp + h_st − h_f in the usual handbook notation (definition of NPSH as total
suction head above vapour pressure at the NPSH datum: ANSI/HI 1.3, ISO 9906:2012; the vessel
form as worked in Mackay, *The Practical Pumping Handbook* (2004) §4.4.2.5, and in Karassik et
al., *Pump Handbook*, 4th ed. (2008); worked examples in check-values.md). The velocity head at
the surface is nil, so it does not appear.

The friction loss h_f of the suction line at the current flow comes either from a fitted
coefficient (h_f = k·Q²) or from the Darcy–Weisbach equation with the Colebrook (1939) friction
factor. Liquid viscosity for the Reynolds number is tabulated once per fluid from CoolProp.

Sources: Colebrook, C. F., "Turbulent flow in pipes, with particular reference to the
transition region between the smooth and rough pipe laws", J. Inst. Civil Eng. 11 (1939)
133-156; Clamond, D., "Efficient resolution of the Colebrook equation", Ind. Eng. Chem. Res.
48 (2009) 3665-3671 (the solution the ``fluids`` package computes, which this module uses,
tabulated per pipe roughness); Avila et al., "The onset of
turbulence in pipe flow", Science 333 (2011) 192-196 (laminar limit Re = 2040, as ``fluids``);
CoolProp (Bell et al., Ind. Eng. Chem. Res. 53 (2014) 2498-2508), whose water viscosity is the
IAPWS 2008 formulation (Huber et al., J. Phys. Chem. Ref. Data 38 (2009) 101).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
from fluids.friction import friction_factor as fluids_friction_factor
from numpy.typing import ArrayLike

from screening.physics.npsh import G, absolute_pressure
from screening.physics.viscosity import viscosity_table

#: Reynolds number below which the flow is taken as laminar, f = 64/Re [-] (Avila et al.
#: 2011; the same limit as ``fluids.friction.LAMINAR_TRANSITION_PIPE``).
LAMINAR_LIMIT = 2040.0
#: Largest relative roughness ε/D accepted [-]: the edge of the Moody (1944) chart, the range
#: over which the Colebrook equation was fitted and checked. Rougher lines are refused, not
#: extrapolated.
MAX_RELATIVE_ROUGHNESS = 0.05


class _Saturated:
    """Type of :data:`SATURATED`."""

    def __repr__(self) -> str:
        return "SATURATED"


#: Pass as ``p_surface_abs`` for a vessel at saturation (deaerator, hotwell, a light
#: hydrocarbon at its bubble point): p_surface = p_v, and the pressure term of NPSHa is exactly
#: zero instead of the difference of two nearly equal numbers.
SATURATED = _Saturated()


# --- surface pressure -----------------------------------------------------------------------


def surface_pressure_open(barometric: ArrayLike) -> np.ndarray:
    """Absolute surface pressure [Pa] of a vessel open to the atmosphere: the barometric [Pa].

    Parameters
    ----------
    barometric : array_like
        Local barometric pressure [Pa] (barometer tag, or the standard atmosphere at the site
        elevation, :func:`screening.physics.atmosphere.standard_pressure`).
    """
    return np.asarray(barometric, dtype=np.float64)


def surface_pressure_from_tag(reading: ArrayLike, barometric: ArrayLike, gauge: bool) -> np.ndarray:
    """Absolute surface pressure [Pa] from a vessel pressure transmitter reading [Pa].

    Same semantics as :func:`screening.physics.npsh.absolute_pressure`: p_abs = p_gauge +
    p_baro when the transmitter reads gauge, else the reading as is.

    Parameters
    ----------
    reading : array_like
        Vessel (vapour space) pressure reading [Pa], gauge or absolute.
    barometric : array_like or float
        Local barometric pressure [Pa]; unused for an absolute transmitter.
    gauge : bool
        True when the transmitter reads gauge pressure.
    """
    return absolute_pressure(reading, barometric, gauge)


# --- NPSH available -------------------------------------------------------------------------


def npsha_from_vessel(
    p_surface_abs: ArrayLike | _Saturated,
    p_vapour: ArrayLike,
    density: ArrayLike,
    level: ArrayLike,
    datum_offset: ArrayLike,
    line_loss: ArrayLike,
) -> np.ndarray:
    """NPSH available [m] of a pump fed from a vessel.

    NPSHa = (p_surface,abs − p_v)/(ρ·g) + (level + datum_offset) − line_loss
    (h_a − h_vp + h_st − h_f: ANSI/HI 1.3 and ISO 9906:2012 definition of NPSH; vessel form as
    in Mackay (2004) §4.4.2.5 and Karassik et al., *Pump Handbook*, 4th ed. (2008)).

    Parameters
    ----------
    p_surface_abs : array_like or SATURATED
        Absolute pressure at the liquid surface [Pa] (see :func:`surface_pressure_open`,
        :func:`surface_pressure_from_tag`), or :data:`SATURATED` for a vessel at saturation,
        where the pressure term is exactly zero (NaN where ``p_vapour`` or ``density`` is NaN,
        so that a temperature outside the fluid table still marks the sample).
    p_vapour : array_like
        Vapour pressure of the liquid at its temperature [Pa].
    density : array_like
        Liquid density [kg/m³].
    level : array_like
        Liquid level above the level transmitter's zero [m].
    datum_offset : array_like or float
        Elevation of the level transmitter's zero above the NPSH datum [m]; negative when it is
        below the datum (suction lift).
    line_loss : array_like
        Friction loss of the suction line at the current flow [m] (:func:`loss_from_coefficient`
        or :func:`loss_darcy_weisbach`).

    Returns
    -------
    numpy.ndarray
        NPSH available [m], referred to the NPSH datum.
    """
    p_vapour = np.asarray(p_vapour, dtype=np.float64)
    density = np.asarray(density, dtype=np.float64)
    if isinstance(p_surface_abs, _Saturated):
        # p_surface = p_v: the term is zero by definition, not a rounded difference.
        ok = np.isfinite(p_vapour) & np.isfinite(density)
        pressure_head = np.where(ok, 0.0, np.nan)
    else:
        # h_a − h_vp = (p_surface,abs − p_v)/(ρ·g) (ISO 9906:2012, ANSI/HI 1.3)
        p_surface_abs = np.asarray(p_surface_abs, dtype=np.float64)
        pressure_head = (p_surface_abs - p_vapour) / (density * G)
    static_head = np.asarray(level, dtype=np.float64) + datum_offset  # h_st [m]
    return pressure_head + static_head - np.asarray(line_loss, dtype=np.float64)


# --- suction line friction loss -------------------------------------------------------------


def line_loss(
    line, flow: ArrayLike, density: ArrayLike, temperature: ArrayLike, fluid: str
) -> np.ndarray:
    """Friction loss [m] of a pump's suction line (a ``register.SuctionLine``) at each sample.

    No line: zero. A coefficient: :func:`loss_from_coefficient`. The line itself:
    :func:`loss_darcy_weisbach` with the liquid viscosity from :func:`viscosity_table`.

    Parameters
    ----------
    line : SuctionLine or None
        ``k`` [s²/m⁵], or ``length``, ``bore``, ``roughness`` [m] and ``fittings_k`` [-].
    flow : array_like
        Volumetric flow [m³/s].
    density : array_like
        Liquid density [kg/m³].
    temperature : array_like
        Liquid temperature [K] (for the viscosity).
    fluid : str
        CoolProp fluid string.
    """
    flow = np.asarray(flow, dtype=np.float64)
    if line is None:
        return np.zeros(flow.shape)
    if line.k is not None:
        return loss_from_coefficient(flow, line.k)
    mu = viscosity_table(fluid).viscosity(temperature)
    return loss_darcy_weisbach(
        flow, density, mu, line.length, line.bore, line.roughness, line.fittings_k
    )


def loss_from_coefficient(flow: ArrayLike, k: float) -> np.ndarray:
    """Suction line friction loss [m] from a fitted coefficient: h_f = k·Q².

    The quadratic law of fully turbulent flow (Darcy–Weisbach with a constant friction factor,
    Karassik et al., *Pump Handbook*, 4th ed. (2008)); ``k`` is usually fitted from a
    commissioning test or a design point (k = h_f,design / Q_design²). Negative flow gives the
    same loss as its magnitude (Q² is even).

    Parameters
    ----------
    flow : array_like
        Volumetric flow through the suction line [m³/s].
    k : float
        Loss coefficient [m/(m³/s)², i.e. s²/m⁵], finite and not negative.

    Raises
    ------
    ValueError
        If ``k`` is negative or not finite.
    """
    if not np.isfinite(k) or k < 0:
        raise ValueError(f"suction line loss coefficient must be finite and >= 0, got {k!r}")
    q = np.asarray(flow, dtype=np.float64)
    return k * q * q  # h_f = k·Q²


def reynolds_number(
    flow: ArrayLike, density: ArrayLike, viscosity: ArrayLike, bore: float
) -> np.ndarray:
    """Pipe Reynolds number [-] Re = ρ·|v|·D/μ with v = Q/(π·D²/4) (Reynolds 1883).

    Parameters
    ----------
    flow : array_like
        Volumetric flow [m³/s]; its magnitude is used.
    density : array_like
        Liquid density [kg/m³].
    viscosity : array_like
        Dynamic viscosity [Pa·s].
    bore : float
        Pipe inner diameter [m].
    """
    area = np.pi * bore * bore / 4.0
    speed = np.abs(np.asarray(flow, dtype=np.float64)) / area  # |v| = |Q|/A (continuity)
    return np.asarray(density, dtype=np.float64) * speed * bore / viscosity  # Re = ρvD/μ


def darcy_friction_factor(reynolds: ArrayLike, relative_roughness: float) -> np.ndarray:
    """Darcy friction factor [-] of a round pipe: 64/Re laminar, Colebrook (1939) otherwise.

    Laminar (Re < :data:`LAMINAR_LIMIT` = 2040, Avila et al. 2011): f = 64/Re (Hagen–
    Poiseuille). Otherwise the Colebrook (1939) equation

        1/√f = −2·log10( (ε/D)/3.7 + 2.51/(Re·√f) )

    as solved exactly by the `fluids` package (Clamond's (2009) solution in
    ``fluids.friction.friction_factor``), tabulated per roughness (see ``_colebrook``).
    Between Re 2040
    and about 4000 the real flow is intermittent and no correlation is reliable; Colebrook is
    applied there as in ``fluids``. Re = 0 gives f = 0 (no flow, no loss); NaN gives NaN.

    Parameters
    ----------
    reynolds : array_like
        Reynolds number [-], not negative.
    relative_roughness : float
        Pipe roughness over bore, ε/D [-], in [0, :data:`MAX_RELATIVE_ROUGHNESS`].

    Raises
    ------
    ValueError
        If ``relative_roughness`` is outside [0, 0.05].
    """
    ed = float(relative_roughness)
    if not 0.0 <= ed <= MAX_RELATIVE_ROUGHNESS:
        raise ValueError(
            f"relative roughness must lie in [0, {MAX_RELATIVE_ROUGHNESS}] (the range of the "
            f"Moody chart and the Colebrook equation), got {ed!r}"
        )
    re = np.asarray(reynolds, dtype=np.float64)
    f = np.full(re.shape, np.nan)
    f[re == 0.0] = 0.0
    laminar = (re > 0.0) & (re < LAMINAR_LIMIT)
    f[laminar] = 64.0 / re[laminar]  # Hagen–Poiseuille, f = 64/Re
    turbulent = re >= LAMINAR_LIMIT  # False for NaN: stays NaN
    if np.any(turbulent):
        f[turbulent] = _colebrook(re[turbulent], ed)
    return f


#: Reynolds-number grid of the friction-factor tables: points per decade and range.
_RE_PER_DECADE = 2000
_RE_TABLE_MAX = 1e10


@lru_cache(maxsize=64)
def _friction_table(ed: float) -> tuple[np.ndarray, np.ndarray]:
    """ln Re and ln f on a log grid for one relative roughness, from the `fluids` package."""
    n = int(np.ceil(np.log10(_RE_TABLE_MAX / LAMINAR_LIMIT) * _RE_PER_DECADE))
    # fluids treats Re = 2040 itself as laminar: start the turbulent table just above it
    ln_re = np.linspace(np.log(LAMINAR_LIMIT * (1 + 1e-12)), np.log(_RE_TABLE_MAX), n + 1)
    f = [fluids_friction_factor(Re=float(r), eD=ed) for r in np.exp(ln_re)]
    return ln_re, np.log(np.array(f))


def _colebrook(re: np.ndarray, ed: float) -> np.ndarray:
    """Colebrook (1939) Darcy friction factor from `fluids.friction.friction_factor`.

    ``fluids`` solves Colebrook exactly (Clamond 2009) one value at a time; to keep a month of
    one-minute samples fast, it is evaluated once per roughness on a grid of 2000 Reynolds
    numbers per decade (2040 to 1e10) and interpolated linearly in ln f against ln Re (the
    error, bounded in a test against direct calls, is below 1e-7). Reynolds numbers above the
    grid go to ``fluids`` directly.
    """
    ln_re, ln_f = _friction_table(ed)
    x = np.log(re)
    out = np.exp(np.interp(x, ln_re, ln_f))
    above = re > _RE_TABLE_MAX
    if np.any(above):
        out[above] = [fluids_friction_factor(Re=float(r), eD=ed) for r in re[above]]
    return out


def loss_darcy_weisbach(
    flow: ArrayLike,
    density: ArrayLike,
    viscosity: ArrayLike,
    length: float,
    bore: float,
    roughness: float,
    fittings_k: float,
) -> np.ndarray:
    """Suction line friction loss [m] by the Darcy–Weisbach equation.

    h_f = (f·L/D + ΣK)·v²/(2g), v = |Q|/(π·D²/4) (Darcy–Weisbach; Crane TP-410), with f from
    :func:`darcy_friction_factor` (64/Re laminar, Colebrook 1939 turbulent) at
    Re = ρ·|v|·D/μ. Vectorised over the samples: the Colebrook equation is solved for every
    sample at once by a few Newton steps of numpy arithmetic, exact to machine precision, so
    there is no tabulation error to bound. Zero flow gives exactly zero loss; negative flow
    (reverse flow, or transmitter noise about zero) is counted by its magnitude, so the loss
    is never a gain and NPSHa is never overstated by it. NaN in any sample input gives NaN.

    Parameters
    ----------
    flow : array_like
        Volumetric flow through the suction line [m³/s].
    density : array_like
        Liquid density [kg/m³].
    viscosity : array_like
        Liquid dynamic viscosity [Pa·s] (:func:`liquid_viscosity`).
    length : float
        Length of straight pipe [m], not negative.
    bore : float
        Pipe inner diameter [m], positive.
    roughness : float
        Absolute roughness of the pipe wall ε [m], not negative, ε/D at most 0.05.
    fittings_k : float
        Sum of the resistance coefficients of entrance, fittings and valves ΣK [-] (e.g. Crane
        TP-410), not negative.

    Raises
    ------
    ValueError
        If a pipe dimension or coefficient is out of range (see above).
    """
    for name, value in (("length", length), ("roughness", roughness), ("fittings_k", fittings_k)):
        if not np.isfinite(value) or value < 0:
            raise ValueError(f"suction line {name} must be finite and >= 0, got {value!r}")
    if not np.isfinite(bore) or bore <= 0:
        raise ValueError(f"suction line bore must be finite and > 0, got {bore!r}")
    q = np.abs(np.asarray(flow, dtype=np.float64))
    area = np.pi * bore * bore / 4.0
    speed = q / area  # v = |Q|/A (continuity)
    re = reynolds_number(q, density, viscosity, bore)
    f = darcy_friction_factor(re, roughness / bore)
    # Darcy–Weisbach: h_f = (f·L/D + ΣK)·v²/(2g)
    return (f * (length / bore) + fittings_k) * speed * speed / (2.0 * G)


def can_loss(k: float | None, flow):
    """Loss [m] in a vertical can from its suction nozzle to the first-stage impeller eye,
    h = k·Q² (turbulent flow: loss with the square of flow, Darcy–Weisbach at a constant
    friction factor; Karassik et al., *Pump Handbook*, §2.3), with ``k`` [s²/m⁵] from a
    design point and ``flow`` [m³/s]; 0 without a can loss (``k`` None)."""
    q = np.asarray(flow, dtype=np.float64)
    if k is None:
        return np.zeros_like(q)
    return k * q * q
