"""Margin guidance per pump and the margin bands.

The guidance is "a ratio NPSHa/NPSH3 or a margin NPSHa − NPSH3 in metres, whichever is
greater" (ANSI/HI 9.6.1-2012, Table 9.6.1.1, as summarised in secondary sources). The values
are data in the plant file's policy, never truth hard-coded here.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .config import Policy
from .states import AMPLE_MARGIN, BELOW_GUIDANCE, BELOW_NPSH3, MEETS_GUIDANCE

# margin_band counts the edges reached; the band codes must be that count
assert (BELOW_NPSH3, BELOW_GUIDANCE, MEETS_GUIDANCE, AMPLE_MARGIN) == (0, 1, 2, 3)


@dataclass(frozen=True)
class Guidance:
    """Minimum margin for one pump: ratio [-] and margin [m], the greater governs."""

    ratio: float
    margin: float
    source: str

    def head(self, npsh3):
        """Guidance NPSHa [m] for ``npsh3`` [m]: max(ratio·NPSH3, NPSH3 + margin)."""
        npsh3 = np.asarray(npsh3, dtype=np.float64)
        return np.maximum(self.ratio * npsh3, npsh3 + self.margin)


class PolicyError(ValueError):
    """No policy rule applies to a pump."""


def guidance_for(
    policy: Policy,
    application: str,
    suction_specific_speed: float,
    ratio_override: float | None = None,
    margin_override: float | None = None,
) -> Guidance:
    """The guidance of a pump from the policy's first matching rule.

    Parameters
    ----------
    policy : Policy
        The plant's margin policy.
    application : str
        The pump's application class (must match a rule's ``application``).
    suction_specific_speed : float
        S in U.S. customary units (rpm, gpm, ft) [-].
    ratio_override, margin_override : float, optional
        Per-pump values from the register [-] and [m]; they replace the rule's.
    """
    for i, rule in enumerate(policy.rules):
        if rule.matches(application, suction_specific_speed):
            ratio = rule.ratio if ratio_override is None else ratio_override
            margin = rule.margin if margin_override is None else margin_override
            src = f"policy rule {i + 1} ({rule.application}"
            if rule.min_suction_specific_speed is not None:
                src += f", S >= {rule.min_suction_specific_speed:g}"
            if rule.max_suction_specific_speed is not None:
                src += f", S < {rule.max_suction_specific_speed:g}"
            src += ")"
            if ratio_override is not None or margin_override is not None:
                src += " with register override"
            return Guidance(ratio, margin, src)
    apps = sorted({r.application for r in policy.rules})
    raise PolicyError(
        f"no policy rule for application {application!r} at suction specific speed "
        f"{suction_specific_speed:.0f} (applications in the policy: {', '.join(apps)})"
    )


def margin_band(npsha, npsh3, guidance: Guidance, ample_ratio: float) -> np.ndarray:
    """Margin band code per sample (see :mod:`screening.states`).

    Parameters
    ----------
    npsha, npsh3 : array_like
        NPSH available and NPSH3 [m] (finite).
    guidance : Guidance
        The pump's guidance.
    ample_ratio : float
        Ratio NPSHa/NPSH3 from which the margin is called ample [-].
    """
    npsha = np.asarray(npsha, dtype=np.float64)
    npsh3 = np.asarray(npsh3, dtype=np.float64)
    guide = guidance.head(npsh3)
    ample = np.maximum(guide, ample_ratio * npsh3)
    # npsh3 <= guide <= ample, so the band code is the number of edges reached:
    # 0 below NPSH3, 1 below guidance, 2 meets guidance, 3 ample
    band = (npsha >= npsh3).view(np.int8)
    band += npsha >= guide
    band += npsha >= ample
    return band
