"""NPSH available: pure functions of SI arrays.

Sources: ANSI/HI 1.3 and ISO 9906:2012 (definition of NPSH as total suction head above vapour
pressure, referred to the NPSH datum); Karassik et al., *Pump Handbook*, 4th ed. (2008), §2.3
(NPSH available from a suction gauge reading). g is standard gravity.
"""

from __future__ import annotations

import numpy as np

#: Standard gravity [m/s²] (exact by definition, CGPM 1901).
G = 9.80665


def absolute_pressure(reading, barometric, gauge: bool):
    """Absolute pressure [Pa] from a transmitter reading [Pa].

    Parameters
    ----------
    reading : array_like
        Transmitter reading [Pa], gauge or absolute.
    barometric : array_like or float
        Local barometric pressure [Pa] (barometer tag or standard atmosphere at the site).
    gauge : bool
        True when the transmitter reads gauge pressure (p_abs = p_gauge + p_baro).
    """
    reading = np.asarray(reading, dtype=np.float64)
    return reading + barometric if gauge else reading


def pipe_area(bore):
    """Cross-section π·D²/4 [m²] of a pipe of inner diameter ``bore`` [m]."""
    return np.pi * np.asarray(bore, dtype=np.float64) ** 2 / 4.0


def velocity_head(flow, bore):
    """Velocity head v²/(2g) [m] of ``flow`` [m³/s] in a pipe of inner diameter ``bore`` [m].

    v = Q / (π·D²/4) (continuity); velocity head as in ISO 9906:2012 §3.2 and ANSI/HI 1.3.
    """
    v = np.asarray(flow, dtype=np.float64) / pipe_area(bore)
    with np.errstate(over="ignore"):  # an absurd flow gives inf, and is off the curve anyway
        return v * v / (2.0 * G)


def npsha_from_pressure(p_abs, p_vapour, density, flow, bore, elevation):
    """NPSH available [m] from an absolute suction pressure at a tap.

    NPSHa = (p_abs − p_v) / (ρ·g) + v²/(2g) + z   (ISO 9906:2012 eq. for NPSH at the inlet
    section, ANSI/HI 1.3; Karassik *Pump Handbook* §2.3)

    Parameters
    ----------
    p_abs : array_like
        Absolute static pressure at the tap [Pa].
    p_vapour : array_like
        Vapour pressure of the liquid at its temperature [Pa].
    density : array_like
        Liquid density [kg/m³].
    flow : array_like
        Volumetric flow through the tap [m³/s].
    bore : float
        Pipe inner diameter at the tap [m].
    elevation : float
        Elevation of the tap above the NPSH datum [m] (negative when below).
    """
    p_abs = np.asarray(p_abs, dtype=np.float64)
    return (p_abs - p_vapour) / (density * G) + velocity_head(flow, bore) + elevation


def head_from_pressure(pressure, density):
    """Head [m] of liquid of ``density`` [kg/m³] equivalent to ``pressure`` [Pa]: p/(ρ·g)."""
    return np.asarray(pressure, dtype=np.float64) / (np.asarray(density) * G)
