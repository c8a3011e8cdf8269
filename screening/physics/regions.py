"""Operating region: where the pump runs on its curve, from flow against best-efficiency flow.

A pump run far from its best-efficiency point (BEP) suffers suction and discharge recirculation,
heating, vibration and radial load whatever its NPSH margin (ANSI/HI 9.6.3-2012, "Allowable
operating region"). Regions, from low to high flow:

- ``below_min_flow``: below the minimum flow, the larger of the minimum continuous stable flow
  (scaled with speed by the affinity laws) and the thermal minimum flow, both from the register;
- ``low_flow``: from the minimum flow up to the lower edge of the preferred region;
- ``preferred_region``: the preferred operating region (POR), 70-120 % of BEP flow by default
  per ANSI/HI 9.6.3 (Davis, *Water and Wastewater Engineering* (2010) p. 3-29), per-pump
  override in the register;
- ``high_flow``: above the POR up to the end of the allowable operating region (AOR);
- ``beyond_allowable``: above the AOR's end: the register's allowable maximum flow, or else the
  last flow of the vendor NPSH3 curve, scaled with speed.

The BEP flow scales with speed (affinity laws: Q ∝ n; Karassik et al., *Pump Handbook*, §2.2).
"""

from __future__ import annotations

import numpy as np

BELOW_MIN_FLOW = 0
LOW_FLOW = 1
PREFERRED = 2
HIGH_FLOW = 3
BEYOND_ALLOWABLE = 4
STOPPED = 5
NO_DATA = 6
BAD_DATA = 7
STARTING = 8

#: Region state names, indexed by code (the last four as for the margin states).
REGIONS: tuple[str, ...] = (
    "below_min_flow",
    "low_flow",
    "preferred_region",
    "high_flow",
    "beyond_allowable",
    "stopped",
    "no_data",
    "bad_data",
    "starting",
)
#: Regions in which the pump was running.
RUNNING_REGIONS: tuple[str, ...] = REGIONS[:5]


def region_edges(
    bep_flow: float,
    speed_ratio,
    preferred_low: float = 0.70,
    preferred_high: float = 1.20,
    min_stable_flow: float | None = None,
    thermal_min_flow: float | None = None,
    allowable_max_flow: float | None = None,
):
    """Flows [m³/s] of the region edges at running speed.

    Parameters
    ----------
    bep_flow : float
        Best-efficiency flow at rated speed [m³/s].
    speed_ratio : float or array_like
        Running speed over rated speed [-] (1 without a speed tag).
    preferred_low, preferred_high : float
        Edges of the preferred region as fractions of BEP flow [-].
    min_stable_flow : float, optional
        Minimum continuous stable flow at rated speed [m³/s] (scaled with speed).
    thermal_min_flow : float, optional
        Thermal minimum flow [m³/s] (not scaled: it follows from heat input and allowed
        temperature rise).
    allowable_max_flow : float, optional
        End of the allowable region at rated speed [m³/s] (scaled with speed).

    Returns
    -------
    (q_min, q_por_low, q_por_high, q_max) : arrays [m³/s]; q_min 0 and q_max inf when unknown.
    """
    r = np.asarray(speed_ratio, dtype=np.float64)
    bep = bep_flow * r  # affinity law: Q ∝ n
    q_min = np.zeros_like(bep)
    if min_stable_flow is not None:
        q_min = np.maximum(q_min, min_stable_flow * r)
    if thermal_min_flow is not None:
        q_min = np.maximum(q_min, thermal_min_flow)
    q_max = np.full_like(bep, np.inf) if allowable_max_flow is None else allowable_max_flow * r
    return q_min, preferred_low * bep, preferred_high * bep, q_max


def pump_region_edges(pump, curve_flow_max: float, speed, min_flow_fraction: float | None = None):
    """Region edges [m³/s] of a register pump at its running speed.

    Parameters
    ----------
    pump : screening.inputs.register.PumpSpec
        BEP flow, preferred region, minimum flows and allowable maximum at rated speed.
    curve_flow_max : float
        Last flow of the NPSH3 curve at rated speed [m³/s]: the allowable end when the
        register gives none.
    speed : array_like or None
        Running speed [rpm]; None for a fixed-speed pump (rated speed).
    min_flow_fraction : float, optional
        Plant-wide minimum stable flow as a fraction of BEP flow [-], for a pump whose register
        gives neither a minimum stable nor a thermal minimum flow (none by default: such a
        pump is flagged "minimum flow not registered", see :func:`min_flow_source`).
    """
    ratio = 1.0 if speed is None else np.asarray(speed, dtype=np.float64) / pump.rated_speed
    stable = pump.min_stable_flow
    if stable is None and pump.thermal_min_flow is None and min_flow_fraction is not None:
        stable = min_flow_fraction * pump.bep_flow
    return region_edges(
        pump.bep_flow, ratio, pump.preferred_low, pump.preferred_high, stable,
        pump.thermal_min_flow,
        pump.allowable_max_flow if pump.allowable_max_flow is not None else curve_flow_max,
    )  # fmt: skip


#: The note of a pump whose minimum flow is unknown: its ``below_min_flow`` hours are zero by
#: construction, not because it never ran below its minimum.
MIN_FLOW_NOT_REGISTERED = "minimum flow not registered"


def min_flow_source(pump, min_flow_fraction: float | None = None) -> str:
    """Where a pump's minimum flow comes from, for the overview and the tables."""
    parts = []
    if pump.min_stable_flow is not None:
        parts.append("minimum stable flow (register)")
    if pump.thermal_min_flow is not None:
        parts.append("thermal minimum flow (register)")
    if parts:
        return " and ".join(parts)
    if min_flow_fraction is not None:
        return f"plant-wide {min_flow_fraction:.0%} of BEP flow"
    return MIN_FLOW_NOT_REGISTERED


def operating_region(flow, edges) -> np.ndarray:
    """Region code per sample for ``flow`` [m³/s] and edges from :func:`region_edges`.

    Edges belong to the inner region: the POR includes both its edges, the minimum flow is
    not below the minimum, the AOR end is not beyond it. NaN flows give ``below_min_flow``
    only through the caller's masks (callers mark missing flows as bad or no data).
    """
    q = np.asarray(flow, dtype=np.float64)
    q_min, q_lo, q_hi, q_max = edges
    code = np.full(q.shape, PREFERRED, dtype=np.int8)
    code[q < q_lo] = LOW_FLOW
    code[q < q_min] = BELOW_MIN_FLOW
    code[q > q_hi] = HIGH_FLOW
    code[q > q_max] = BEYOND_ALLOWABLE
    return code


def _check_codes() -> None:
    from screening.base import states

    # the time weighting writes stale time to the margin states' no-data code in both kinds
    assert (STOPPED, NO_DATA, BAD_DATA, STARTING) == (
        states.STOPPED,
        states.NO_DATA,
        states.BAD_DATA,
        states.STARTING,
    )


_check_codes()
