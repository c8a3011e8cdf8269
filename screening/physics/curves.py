"""Vendor NPSH3 curves: monotone interpolation inside the tested flow range, speed scaling.

NPSH3 is the NPSH at which the first-stage head falls by 3 % (ANSI/HI 1.6, ISO 9906:2012).
The vendor curve is given at the rated (test) speed; at another running speed it is scaled by
the affinity laws on both axes: NPSH3(Q, n) = NPSH3_ref(Q·n_ref/n) · (n/n_ref)^k, with k = 2 in
theory (Karassik et al., *Pump Handbook*, 4th ed. (2008), §2.2; ISO 9906:2012 §6.1.2 converts
NPSH with the speed ratio squared) and about 1.5 from field experience when the speed falls
(Henshaw, Pumps & Systems 2009). Unless the register gives k, the conservative (larger NPSH3)
choice is made in each direction: k = 1.5 below rated speed, k = 2 above it. Outside the
curve's flow range nothing is extrapolated: the result is NaN and the caller counts such
samples as off the curve.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.interpolate import PchipInterpolator

from screening.base.kernels import pchip_eval

#: U.S. customary conversion for the suction specific speed: gpm per m³/s and ft per m.
GPM_PER_M3S = 1.0 / (3.785411784e-3 / 60.0)
FT_PER_M = 1.0 / 0.3048
#: Default affinity exponents of NPSH3 below and above rated speed [-]: with n/n_ref < 1 a
#: smaller k gives the larger NPSH3, with n/n_ref > 1 a larger k does (Henshaw, Pumps & Systems
#: 2009, for about 1.5 when the speed falls; 2 by the affinity laws, Karassik §2.2).
EXPONENT_BELOW_RATED = 1.5
EXPONENT_ABOVE_RATED = 2.0


class CurveError(ValueError):
    """An NPSH3 curve that cannot be used (too few points, flows not increasing, ...)."""


@dataclass(frozen=True)
class Npsh3Curve:
    """A vendor NPSH3 curve at its reference speed.

    Attributes
    ----------
    curve_id : str
    flow : numpy.ndarray
        Flow points [m³/s], strictly increasing.
    npsh3 : numpy.ndarray
        NPSH3 at those flows [m], positive.
    head : numpy.ndarray or None
        The vendor's developed head at those flows [m] where the curve table gives it
        (optional ``head`` column), else None.
    """

    curve_id: str
    flow: np.ndarray
    npsh3: np.ndarray
    head: np.ndarray | None = None
    _interp: PchipInterpolator = field(init=False, repr=False, compare=False)

    def __post_init__(self):
        flow = np.asarray(self.flow, dtype=np.float64)
        npsh3 = np.asarray(self.npsh3, dtype=np.float64)
        if flow.size < 2:
            raise CurveError(f"curve {self.curve_id!r} has {flow.size} point(s); at least 2")
        if not np.all(np.isfinite(flow)) or not np.all(np.isfinite(npsh3)):
            raise CurveError(f"curve {self.curve_id!r} has a missing or non-numeric value")
        if np.any(np.diff(flow) <= 0):
            raise CurveError(f"curve {self.curve_id!r}: flows must be strictly increasing")
        if np.any(flow < 0) or np.any(npsh3 <= 0):
            raise CurveError(f"curve {self.curve_id!r}: flows must be >= 0 and NPSH3 > 0")
        _check_shape(self.curve_id, flow, npsh3)
        object.__setattr__(self, "flow", flow)
        object.__setattr__(self, "npsh3", npsh3)
        if self.head is not None:
            head = np.asarray(self.head, dtype=np.float64)
            if head.shape != flow.shape or not np.all(np.isfinite(head)) or np.any(head <= 0):
                raise CurveError(f"curve {self.curve_id!r}: heads must be positive numbers")
            object.__setattr__(self, "head", head)
        # PCHIP keeps the curve monotone between points where the data are monotone
        # (Fritsch and Carlson, SIAM J. Numer. Anal. 17 (1980) 238-246).
        object.__setattr__(self, "_interp", PchipInterpolator(flow, npsh3, extrapolate=False))

    @property
    def flow_min(self) -> float:
        """Lowest tested flow [m³/s]."""
        return float(self.flow[0])

    @property
    def flow_max(self) -> float:
        """Highest tested flow [m³/s]."""
        return float(self.flow[-1])

    def at_reference_speed(self, flow) -> np.ndarray:
        """NPSH3 [m] at ``flow`` [m³/s] and the curve's reference speed; NaN off the curve."""
        q = np.asarray(flow, dtype=np.float64)
        flat = np.ascontiguousarray(np.atleast_1d(q).ravel())
        out = pchip_eval(self._interp.x, np.ascontiguousarray(self._interp.c), flat)
        return out.reshape(q.shape)

    def at_speed(self, flow, speed, reference_speed: float, exponent: float | None = None):
        """NPSH3 [m] at ``flow`` [m³/s] and running ``speed`` [rpm], by the affinity laws.

        NPSH3(Q, n) = NPSH3_ref(Q·n_ref/n)·(n/n_ref)^k (Karassik, *Pump Handbook* §2.2;
        exponent k: 2 by the affinity laws, about 1.5 from field experience when the speed
        falls, per Henshaw, Pumps & Systems 2009). NaN where Q·n_ref/n lies off the curve.

        Parameters
        ----------
        flow : array_like
            Flow [m³/s].
        speed : array_like or None
            Running speed [rpm]; None means the reference speed.
        reference_speed : float
            Speed of the vendor curve [rpm].
        exponent : float or None
            Affinity exponent k of NPSH3 [-]; None (the default) takes the conservative
            choice in each direction, see :func:`speed_exponent`.
        """
        if speed is None:
            return self.at_reference_speed(flow)
        ratio = np.asarray(speed, dtype=np.float64) / reference_speed
        k = speed_exponent(ratio, exponent)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            q_ref = np.asarray(flow, dtype=np.float64) / ratio
            # affinity laws on both axes (Karassik §2.2; Henshaw 2009 for k = 1.5)
            return self.at_reference_speed(q_ref) * ratio**k


def speed_exponent(speed_ratio, exponent: float | None = None):
    """Affinity exponent k of NPSH3 [-] at ``speed_ratio`` n/n_ref [-].

    A register value applies in both directions. Without one, the larger NPSH3 is taken in
    each direction: k = 1.5 below rated speed (field experience, Henshaw, Pumps & Systems
    2009) and k = 2 at and above it (affinity laws, Karassik §2.2).
    """
    if exponent is not None:
        return exponent
    ratio = np.asarray(speed_ratio, dtype=np.float64)
    return np.where(ratio < 1.0, EXPONENT_BELOW_RATED, EXPONENT_ABOVE_RATED)


def exponent_text(exponent: float | None, has_speed: bool) -> str:
    """How NPSH3 was scaled with speed, for the pump page (k [-] from the register or not)."""
    if not has_speed:
        return "not used (no speed tag: the curve at rated speed)"
    if exponent is not None:
        return f"k = {exponent:g} in both directions (register)"
    return (
        f"k = {EXPONENT_BELOW_RATED:g} below rated speed, {EXPONENT_ABOVE_RATED:g} above "
        "(default: the larger NPSH3 in each direction)"
    )


def _check_shape(curve_id: str, flow: np.ndarray, npsh3: np.ndarray) -> None:
    """Refuse an NPSH3 curve [flow m³/s, NPSH3 m] that falls where it must rise.

    NPSH3 may fall from the lowest flows (where inlet recirculation raises it) to a minimum,
    but from its minimum on it rises with flow, since the velocities and the incidence at the
    impeller inlet grow with flow: a curve that falls again after its minimum, or falls all
    the way to its highest flow, has points swapped or mistyped. Flat stretches are allowed.
    """
    lowest = int(np.argmin(npsh3))  # the first minimum
    falls = np.flatnonzero(np.diff(npsh3[lowest:]) < 0)
    if falls.size:
        i = lowest + int(falls[0])
        raise CurveError(
            f"curve {curve_id!r}: NPSH3 falls from {npsh3[i]:.4g} m at {flow[i] * 3600:.4g} "
            f"m3/h to {npsh3[i + 1]:.4g} m at {flow[i + 1] * 3600:.4g} m3/h after its minimum; "
            "beyond its minimum NPSH3 must rise with flow (points swapped or mistyped?)"
        )
    if lowest == len(npsh3) - 1:
        raise CurveError(
            f"curve {curve_id!r}: NPSH3 falls all the way to the highest flow "
            f"({npsh3[-1]:.4g} m at {flow[-1] * 3600:.4g} m3/h); it must rise towards the "
            "curve's high-flow end (points swapped or mistyped?)"
        )


def suction_specific_speed(speed: float, flow: float, npsh3: float, eyes: int = 1) -> float:
    """Suction specific speed S in U.S. customary units (rpm, gpm, ft).

    S = n·√(Q/eyes) / NPSH3^0.75 at the best-efficiency flow and full impeller diameter
    (ANSI/HI 9.6.1-2012 and ANSI/HI 1.1-1.2 definitions; Q per impeller eye).

    Parameters
    ----------
    speed : float
        Rated speed [rpm].
    flow : float
        Best-efficiency flow [m³/s].
    npsh3 : float
        NPSH3 at the best-efficiency flow [m].
    eyes : int
        Number of impeller eyes (2 for a double-suction impeller).
    """
    q_gpm = flow * GPM_PER_M3S / eyes
    h_ft = npsh3 * FT_PER_M
    return speed * np.sqrt(q_gpm) / h_ft**0.75


#: Inches per metre, for the suction energy's U.S. customary units.
IN_PER_M = 1.0 / 0.0254


def suction_energy(eye_diameter: float, speed: float, s_us: float, specific_gravity: float):
    """Suction energy SE = De·n·S·SG in U.S. customary units (inch, rpm, S in rpm·gpm^0.5/
    ft^0.75) [-] (ANSI/HI 9.6.1-1998, from memory: the method's definition as summarised in
    secondary sources).

    Parameters
    ----------
    eye_diameter : float
        Impeller eye diameter De [m].
    speed : float
        Rated speed n [rpm].
    s_us : float
        Suction specific speed S in U.S. units [-].
    specific_gravity : float
        Liquid density over water's at 60 °F [-].
    """
    return eye_diameter * IN_PER_M * speed * s_us * specific_gravity


def suction_energy_class(
    energy: float, eyes: int, end_suction_high: float, double_suction_high: float, factor: float
) -> str:
    """``low``, ``high`` or ``very_high`` suction energy [-] for SE ``energy`` [US units]: high
    from ``end_suction_high`` (single-suction impeller, ``eyes`` = 1) or ``double_suction_high``
    (double suction, ``eyes`` = 2), very high from ``factor`` times that (ANSI/HI 9.6.1-1998,
    from memory, medium confidence: about 160e6 and 120e6, factor 1.5)."""
    high = end_suction_high if eyes == 1 else double_suction_high
    if energy >= factor * high:
        return "very_high"
    return "high" if energy >= high else "low"
