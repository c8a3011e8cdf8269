"""Engineering plausibility notes for ``pumpscreen check``: the barometer against the standard
atmosphere at the site, and suction pressures below the vapour pressure.

Kept apart from :mod:`screening.inputs.check` so that check only calls :func:`review_notes`.
Neither note changes check's verdict: the scan counts both (hours on the standard atmosphere,
hours with the suction pressure below the vapour pressure) and names them per pump.
"""

from __future__ import annotations

import numpy as np

from screening.inputs.tagdata import TagSeries
from screening.inputs.units import UnitError, to_si
from screening.physics.atmosphere import standard_pressure


def barometer_notes(plant, series: dict[str, TagSeries]) -> list[str]:
    """The barometer's typical offset [kPa] from the 1976 standard atmosphere at the site
    elevation (U.S. Standard Atmosphere 1976, eq. 33a) when readings fall outside the
    tolerance; a sea-level-corrected record shows an offset near the atmosphere's fall from
    sea level to the site."""
    site = plant.settings.site
    s = series.get(site.barometer_tag) if site.barometer_tag else None
    if s is None or len(s.values) == 0:
        return []
    try:
        values = to_si(s.values, site.barometer_unit or "Pa", "pressure")[~s.bad]
    except UnitError:
        return []
    values = values[np.isfinite(values)]
    if not len(values):
        return []
    p_std = standard_pressure(site.elevation)  # US Standard Atmosphere 1976
    offset = values - p_std
    outside = np.abs(offset) > site.barometer_tolerance
    if not outside.any():
        return []
    typical = float(np.median(offset))
    to_sea = 101_325.0 - p_std  # the standard atmosphere's fall from sea level to the site
    hint = ""
    if to_sea > site.barometer_tolerance and abs(typical - to_sea) < site.barometer_tolerance:
        hint = "; the offset matches a reading corrected to sea level (station pressure wanted)"
    return [
        f"barometer {site.barometer_tag}: typical offset {typical / 1000:+.1f} kPa from the 1976 "
        f"standard atmosphere at {site.elevation:.0f} m ({p_std / 1000:.2f} kPa); "
        f"{outside.mean():.0%} of readings lie outside the {site.barometer_tolerance / 1000:g} "
        f"kPa tolerance and are not used (the standard atmosphere stands there){hint}"
    ]
