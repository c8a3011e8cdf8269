"""How numbers read in the console and the HTML: hours that never round a short exposure to
zero."""

from __future__ import annotations

import math


def hours_text(hours: float, unit: bool = False) -> str:
    """Hours [h] as text: one decimal, but under 0.1 h in minutes (``2 min``, ``<1 min``), so
    that a pump with any time in a state never shows "0.0" for it. With ``unit``, ``h`` is
    appended to the decimal form."""
    if hours is None or (isinstance(hours, float) and math.isnan(hours)):
        return "—"
    if abs(hours) < 1e-9:  # below a few microseconds: the rounding of sums, not exposure
        hours = 0.0
    if 0 < hours < 0.1:
        minutes = hours * 60.0
        return "<1 min" if minutes < 1.0 else f"{minutes:.0f} min"
    return f"{hours:.1f} h" if unit else f"{hours:.1f}"
