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
from screening.physics.properties import FluidError, fluid_table


def review_notes(plant, series: dict[str, TagSeries]) -> list[str]:
    """Notes on the barometer and on suction pressures below the vapour pressure.

    Parameters
    ----------
    plant : screening.inputs.plant.Plant
        The loaded plant.
    series : dict
        Raw tag series by tag name (as read by check), in the register's units.
    """
    notes = barometer_notes(plant, series)
    for pid, pump in plant.pumps.items():
        note = vapour_pressure_note(pump, series, plant.settings.site.elevation)
        if note:
            notes.append(f"{pid}: {note}")
    return notes


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


def vapour_pressure_note(pump, series: dict[str, TagSeries], elevation: float) -> str:
    """How many suction readings lie below the vapour pressure at the recorded temperature
    (each reading with the last temperature sample at or before it), a gauge reading made
    absolute with the standard atmosphere at ``elevation`` [m]. Impossible in steady flow: a
    transmitter or temperature fault, or a wrong unit or reference."""
    if pump.source != "transmitter":
        return ""
    p, t = series.get(pump.suction.tag), series.get(pump.temperature.tag)
    if p is None or t is None or not len(p.times) or not len(t.times):
        return ""
    try:
        table = fluid_table(pump.fluid, pump.vapour_pressure)
        p_abs = to_si(p.values, pump.suction.unit, "pressure")
        temp = to_si(t.values, pump.temperature.unit, "temperature")
    except (UnitError, FluidError):
        return ""
    if pump.gauge:
        p_abs = p_abs + standard_pressure(elevation)
    i = np.searchsorted(t.times, p.times, side="right") - 1
    ok = (i >= 0) & ~p.bad
    i = np.clip(i, 0, None)
    ok &= ~t.bad[i] & np.asarray(table.in_range(temp[i]))
    if not ok.any():
        return ""
    p_v, _ = table.properties(temp[i][ok])
    below = p_abs[ok] < p_v
    if not below.any():
        return ""
    return (
        f"suction pressure below vapour pressure in {int(below.sum())} of {int(ok.sum())} "
        f"readings of {pump.suction.tag} (at the temperature of {pump.temperature.tag}): "
        "check transmitter and temperature"
    )
