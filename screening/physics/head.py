"""Developed head of a pump from its suction and discharge pressures, and its normalisation to
rated speed: pure functions of SI arrays.

Sources: ISO 9906:2012 §3.2 (pump total head as the difference of the total heads at the outlet
and inlet sections, each the sum of pressure head, velocity head and elevation; from memory, the
text was not at hand); the affinity laws for a change of speed at the same impeller, Q ∝ n and
H ∝ n² (Karassik et al., *Pump Handbook*, 4th ed. (2008), §2.2). g is standard gravity.

One density is used on both sides (the liquid's at the suction temperature): the compression of
the liquid between the flanges changes it by well under 0.1 % for water at 10 MPa, below the
screening's resolution (our estimate from water's compressibility, about 4.6e-10 1/Pa).
"""

from __future__ import annotations

import numpy as np

from screening.physics.npsh import G, velocity_head


def developed_head(p_inlet, p_outlet, density, flow, inlet_bore, outlet_bore, z_inlet, z_outlet):
    """Developed (total) head of a pump [m] from the static pressures at its two taps.

    H = (p2 − p1)/(ρ·g) + (v2² − v1²)/(2g) + (z2 − z1)   (ISO 9906:2012 §3.2, from memory)

    Parameters
    ----------
    p_inlet, p_outlet : array_like
        Static pressures at the inlet and outlet taps [Pa], in the same reference (both
        absolute, or both gauge against the same barometric pressure).
    density : array_like
        Liquid density [kg/m³].
    flow : array_like
        Volumetric flow [m³/s] through both sections.
    inlet_bore, outlet_bore : float
        Pipe inner diameters at the taps [m] (v = Q/(π·D²/4)).
    z_inlet, z_outlet : float
        Elevations of the points whose pressure is read above a common datum [m].
    """
    p1 = np.asarray(p_inlet, dtype=np.float64)
    p2 = np.asarray(p_outlet, dtype=np.float64)
    # ISO 9906:2012 §3.2 (from memory): H = H2 − H1, Hi = zi + pi/(ρg) + vi²/(2g)
    return (
        (p2 - p1) / (np.asarray(density) * G)
        + velocity_head(flow, outlet_bore)
        - velocity_head(flow, inlet_bore)
        + (z_outlet - z_inlet)
    )


def inlet_total_head(npsha, p_vapour, density):
    """Total head at the pump inlet [m, absolute pressure head + velocity head + elevation
    above the NPSH datum] from NPSHa [m]: H1 = NPSHa + p_v/(ρ·g).

    NPSHa is the total inlet head above the vapour pressure head, referred to the NPSH datum
    (ISO 9906:2012 §3.2; ANSI/HI 1.3), so adding the vapour pressure head back gives the inlet
    total head on an absolute-pressure basis. Used for vessel-fed pumps, which have no suction
    transmitter.

    Parameters
    ----------
    npsha : array_like
        NPSH available [m].
    p_vapour : array_like
        Vapour pressure [Pa].
    density : array_like
        Liquid density [kg/m³].
    """
    return np.asarray(npsha, dtype=np.float64) + np.asarray(p_vapour) / (np.asarray(density) * G)


def outlet_total_head(p_outlet, density, flow, outlet_bore, z_outlet):
    """Total head at the outlet tap [m]: p2/(ρ·g) + v2²/(2g) + z2 (ISO 9906:2012 §3.2, from
    memory), with ``p_outlet`` [Pa], ``density`` [kg/m³], ``flow`` [m³/s], ``outlet_bore`` [m]
    and ``z_outlet`` [m] above the NPSH datum."""
    p2 = np.asarray(p_outlet, dtype=np.float64)
    return p2 / (np.asarray(density) * G) + velocity_head(flow, outlet_bore) + z_outlet


def to_rated_speed(flow, head, speed_ratio):
    """Flow [m³/s] and head [m] moved to rated speed by the affinity laws.

    Q_rated = Q / (n/n_rated), H_rated = H / (n/n_rated)²   (Karassik, *Pump Handbook* §2.2)

    Parameters
    ----------
    flow : array_like
        Flow at the running speed [m³/s].
    head : array_like
        Developed head at the running speed [m].
    speed_ratio : array_like or float
        Running speed over rated speed n/n_rated [-].
    """
    ratio = np.asarray(speed_ratio, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.asarray(flow) / ratio, np.asarray(head) / ratio**2


class HeadCurve:
    """A vendor head curve at rated speed: developed head [m] against flow [m³/s], joined by
    monotone piecewise-cubic interpolation (PCHIP; Fritsch and Carlson, SIAM J. Numer. Anal.
    17 (1980) 238-246) inside its flow range and NaN outside it (never extrapolated)."""

    def __init__(self, curve_id: str, flow, head):
        from scipy.interpolate import PchipInterpolator

        flow = np.asarray(flow, dtype=np.float64)
        head = np.asarray(head, dtype=np.float64)
        if flow.size < 2 or np.any(np.diff(flow) <= 0):
            raise ValueError(f"head curve {curve_id!r}: needs 2 or more strictly rising flows")
        if not np.all(np.isfinite(head)) or np.any(head <= 0):
            raise ValueError(f"head curve {curve_id!r}: heads must be positive numbers")
        self.curve_id, self.flow, self.head = curve_id, flow, head
        self._interp = PchipInterpolator(flow, head, extrapolate=False)

    def at(self, flow) -> np.ndarray:
        """Head [m] at ``flow`` [m³/s] at rated speed; NaN outside the curve's flow range."""
        return np.asarray(self._interp(np.asarray(flow, dtype=np.float64)), dtype=np.float64)
