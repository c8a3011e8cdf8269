"""Margin guidance of one pump and the margin bands of NPSHa against NPSH3.

The guidance is "a ratio NPSHa/NPSH3 or a margin NPSHa − NPSH3 in metres, whichever is
greater" (ANSI/HI 9.6.1-2012, Table 9.6.1.1, as summarised in secondary sources). Which values
a pump gets is chosen from the plant file's policy by :mod:`screening.inputs.policy`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from screening.base.states import AMPLE_MARGIN, BELOW_GUIDANCE, BELOW_NPSH3, MEETS_GUIDANCE

# margin_band counts the edges reached; the band codes must be that count
assert (BELOW_NPSH3, BELOW_GUIDANCE, MEETS_GUIDANCE, AMPLE_MARGIN) == (0, 1, 2, 3)


@dataclass(frozen=True)
class Guidance:
    """Minimum margin for one pump: ratio [-] and margin [m], the greater governs."""

    ratio: float
    margin: float
    source: str
    #: Suction energy [US units: in·rpm·S·SG] and its class, where the register gives the
    #: impeller eye diameter (NaN and "unknown" otherwise).
    suction_energy: float = float("nan")
    suction_energy_class: str = "unknown"

    def head(self, npsh3):
        """Guidance NPSHa [m] for ``npsh3`` [m]: max(ratio·NPSH3, NPSH3 + margin)."""
        npsh3 = np.asarray(npsh3, dtype=np.float64)
        return np.maximum(self.ratio * npsh3, npsh3 + self.margin)


def margin_band(npsha, npsh3, guidance: Guidance, ample_ratio: float) -> np.ndarray:
    """Margin band code per sample (see :mod:`screening.base.states`).

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
