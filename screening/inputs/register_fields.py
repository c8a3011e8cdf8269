"""Groups of register columns read together: the speed tag and how to read it, a suction
transmitter's tap, a suction vessel and its line.

Each function takes the row reader of :mod:`screening.inputs.register` (``r``: ``text``,
``quantity``, ``number``, ``fail``) and returns keyword arguments of
:class:`screening.inputs.pumpspec.PumpSpec`. Errors name the file, line, pump and column.
"""

from __future__ import annotations

import dataclasses
from dataclasses import replace

from screening.inputs.pumpspec import SuctionLine, TagSpec
from screening.inputs.units import is_bare_frequency


def positive_length(r, column: str) -> float | None:
    """An optional positive length [m]."""
    value = r.quantity(column, "length", required=False)
    if value is not None and value <= 0:
        r.fail(column, "must be a positive length")
    return value


def speed_fields(r, speed: TagSpec | None, rated: float) -> dict:
    """The speed tag and how to read it [rpm]: a tag in Hz (or 1/s) is refused unless
    ``speed_signal`` says whether it is the shaft's revolutions per second (``shaft``) or a
    drive's output frequency (``drive_frequency``, with ``rated_frequency``: n = n_rated ·
    f / f_rated, slip neglected; the affinity laws, Karassik *Pump Handbook* §2.2, need only
    the ratio n/n_rated, and the slip changes it by a fraction of a percent)."""
    signal = (r.text("speed_signal", required=False) or "").lower()
    if signal not in ("", "shaft", "drive_frequency"):
        r.fail("speed_signal", f"{signal!r} is not 'shaft' or 'drive_frequency'")
    if speed is None:
        if signal:
            r.fail("speed_signal", "is given but the pump has no speed_tag")
        return {"speed": None}
    if signal == "" and is_bare_frequency(speed.unit):
        r.fail(
            "speed_unit",
            f"{speed.unit!r} is a frequency: say in speed_signal whether tag {speed.tag} is the "
            "shaft speed in revolutions per second ('shaft') or the drive's output frequency "
            "('drive_frequency', with rated_frequency such as '50 Hz'); a 4-pole motor at "
            "40 Hz turns about 1190 rpm, not 2400",
        )
    if signal != "drive_frequency":
        if r.text("rated_frequency", required=False) is not None:
            r.fail("rated_frequency", "applies only with speed_signal = 'drive_frequency'")
        return {"speed": speed, "speed_signal": signal}
    if not is_bare_frequency(speed.unit):
        r.fail("speed_unit", f"a drive frequency is read in Hz, not {speed.unit!r}")
    # the rated frequency as revolutions per minute of one pole pair (50 Hz -> 3000) [rpm]
    f_rated = r.quantity("rated_frequency", "speed")
    if f_rated <= 0:
        r.fail("rated_frequency", "must be a positive frequency such as '50 Hz'")
    spec = dataclasses.replace(speed, scale=rated / f_rated)
    return {"speed": spec, "speed_signal": signal, "rated_frequency": f_rated / 60.0}


#: The NPSH datum of each orientation, as the vendor's NPSH3 refers to it (ANSI/HI 1.3 and
#: ISO 9906 refer NPSH to the impeller's reference plane: the shaft centreline of a horizontal
#: pump, the first-stage impeller eye of a vertical one; check-values.md).
DATUMS = {
    "horizontal": "shaft centreline",
    "vertical": "first-stage impeller eye",
    "can_suction_nozzle": "can suction nozzle (the vendor's NPSH3 includes the can)",
}


def datum_fields(r) -> dict:
    """The pump's NPSH datum and the loss [s²/m⁵] between a vertical can's suction nozzle and
    the first-stage impeller eye: ``orientation`` (horizontal, default, or vertical),
    ``npsh3_datum`` (``can_suction_nozzle`` when the vendor's NPSH3 is stated at the can's
    nozzle, can losses inside it) and ``can_loss_head`` at ``can_loss_flow`` (head = k·Q²).
    The can losses are counted once: in NPSH3 or in NPSHa, never both."""
    orientation = (r.text("orientation", required=False) or "horizontal").lower()
    if orientation not in ("horizontal", "vertical"):
        r.fail("orientation", f"{orientation!r} is not 'horizontal' or 'vertical'")
    datum = (r.text("npsh3_datum", required=False) or "").lower()
    if datum not in ("", "can_suction_nozzle"):
        r.fail("npsh3_datum", f"{datum!r} is not empty or 'can_suction_nozzle'")
    if datum and orientation != "vertical":
        r.fail("npsh3_datum", "'can_suction_nozzle' applies to vertical (can) pumps only")
    head = r.quantity("can_loss_head", "length", required=False)
    k = None
    if head is not None:
        if orientation != "vertical":
            r.fail("can_loss_head", "applies to vertical can pumps only")
        if datum:
            r.fail(
                "can_loss_head",
                "the vendor's NPSH3 at the can's suction nozzle already includes the can "
                "losses: counting them again in NPSHa would count them twice",
            )
        q = r.quantity("can_loss_flow", "flow")
        if head < 0 or q <= 0:
            r.fail("can_loss_flow", "needs a loss >= 0 at a flow > 0 (k = head / flow²)")
        k = head / q**2
    return {
        "orientation": orientation,
        "datum": DATUMS[datum or orientation],
        "can_loss_k": k,
    }


#: Plausible ranges of register values (SI, and how the message shows them): a value outside
#: is a typing or unit slip (``1e308``, a flow in l/s given as m3/s), refused with the range.
#: Wide on purpose: the fastest process pumps run near 30 000 rpm, the largest move about
#: 60 m³/s; a suction tap is not a kilometre above or below the pump.
_PLAUSIBLE = {
    "rated_speed": (1.0, 60_000.0, 1.0, "rpm"),
    "bep_flow": (1e-6, 100.0, 3600.0, "m³/h"),
    "tap_elevation": (-500.0, 500.0, 1.0, "m"),
    "pressure_point_elevation": (-500.0, 500.0, 1.0, "m"),
    "tap_bore": (1e-3, 10.0, 1000.0, "mm"),
}


def plausible(r, column: str, value: float) -> None:
    """Refuse a register value outside :data:`_PLAUSIBLE`, naming the valid range."""
    low, high, scale, unit = _PLAUSIBLE[column]
    if not (low <= value <= high):
        r.fail(
            column,
            f"{value * scale:.6g} {unit} is outside the valid range "
            f"{low * scale:g} to {high * scale:g} {unit}",
        )


def transmitter_fields(r, tag, reference) -> dict:
    """The register fields of a pump with a suction pressure transmitter: tag, reference, the
    point whose pressure it reads and that point's elevation above the NPSH datum [m], bore
    [m].

    The reading is the pressure at the transmitter's sensing element when the impulse line is
    liquid-filled (``pressure_reference_point = sensor``), at the tap when the line is
    gas-filled or the transmitter close-coupled (``tap``); ``pressure_point_elevation`` is that
    point's elevation. The older ``tap_elevation`` is read as the tap's elevation: with
    ``sensor`` it is refused (the sensing element's elevation is wanted), without a reference
    point it is read as a close-coupled tap and the pump gets a note, since a transmitter below
    the tap on a liquid-filled line reads ρ·g·Δz more and NPSHa would be overstated by Δz.
    """
    point = (r.text("pressure_reference_point", required=False) or "").lower()
    if point not in ("", "tap", "sensor"):
        r.fail("pressure_reference_point", f"{point!r} is not 'tap' or 'sensor'")
    new = r.quantity("pressure_point_elevation", "length", required=False)
    old = r.quantity("tap_elevation", "length", required=False)
    note = ""
    if new is not None and old is not None:
        r.fail("tap_elevation", "give pressure_point_elevation or tap_elevation, not both")
    if new is None and old is None:
        r.fail("pressure_point_elevation", "is empty; the elevation above the datum is required")
    if new is not None and not point:
        r.fail("pressure_reference_point", "say 'tap' or 'sensor' for pressure_point_elevation")
    if old is not None and point == "sensor":
        r.fail(
            "tap_elevation",
            "is the tap's elevation, but with a liquid-filled impulse line the transmitter "
            "reads at its sensing element: give pressure_point_elevation (the element's)",
        )
    if old is not None and not point:
        note = (
            "tap_elevation read as a close-coupled tap (no pressure_reference_point): if the "
            "transmitter sits below the tap on a liquid-filled line, NPSHa is overstated by "
            "the height between them"
        )
    out = {
        "suction": tag("suction_pressure", "pressure"),
        "gauge": reference("suction_pressure_reference"),
        "tap_elevation": new if new is not None else old,
        "pressure_point": point or "tap",
        "datum_note": note,
        "tap_bore": r.quantity("tap_bore", "length"),
    }
    if out["tap_bore"] <= 0:
        r.fail("tap_bore", "must be a positive pipe bore")
    plausible(r, "pressure_point_elevation" if new is not None else "tap_elevation",
              out["tap_elevation"])  # fmt: skip
    plausible(r, "tap_bore", out["tap_bore"])
    return out


#: Unit words of a level transmitter exported in per cent of its span.
PERCENT_UNITS = ("%", "percent", "pct", "% of span")


def _level_tag(r, tag) -> TagSpec:
    """The level tag: a length unit, or per cent of span with the elevations [m] of 0 % and
    100 % (``level_span_low``, ``level_span_high``, in the level's own frame, above
    ``level_zero_elevation``): level = low + % / 100 · (high − low), the transmitter's linear
    scaling (common practice for a level transmitter ranged over its span)."""
    unit = (r.text("level_unit", required=False) or "").strip().lower()
    if unit not in PERCENT_UNITS:
        return tag("level", "length")
    low = r.quantity("level_span_low", "length")
    high = r.quantity("level_span_high", "length")
    if not high > low:
        r.fail("level_span_high", f"must be above level_span_low ({low:g} m)")
    return replace(tag("level", "percent"), scale=(high - low) / 100.0, offset=low)


def vessel_fields(r, tag, reference) -> dict:
    """The register fields of a vessel-fed pump (level, surface pressure, suction line)."""
    surface = (r.text("vessel_surface") or "").lower()
    if surface not in ("open", "saturated", "pressure"):
        r.fail("vessel_surface", f"{surface!r} is not 'open', 'saturated' or 'pressure'")
    out = {
        "level": _level_tag(r, tag),
        "level_zero_elevation": r.quantity("level_zero_elevation", "length"),
        "vessel_surface": surface,
    }
    if surface == "pressure":
        out["vessel_pressure"] = tag("vessel_pressure", "pressure")
        out["vessel_gauge"] = reference("vessel_pressure_reference")
    head = r.quantity("line_loss_head", "length", required=False)
    length = r.quantity("line_length", "length", required=False)
    if head is not None and length is not None:
        r.fail("line_loss_head", "give either line_loss_head/line_loss_flow or the line, not both")
    if head is not None:
        q = r.quantity("line_loss_flow", "flow")
        if head < 0 or q <= 0:
            r.fail("line_loss_flow", "needs a loss >= 0 at a flow > 0 (k = head / flow²)")
        out["suction_line"] = SuctionLine(k=head / q**2)
    elif length is not None:
        bore = r.quantity("line_bore", "length")
        rough = r.quantity("line_roughness", "length")
        fittings = r.number("line_fittings_k", 0.0, 0.0, 1000.0)
        if length < 0 or bore <= 0 or rough < 0 or rough / bore > 0.05:
            r.fail(
                "line_length",
                "the line needs length >= 0, bore > 0 and 0 <= roughness/bore <= 0.05",
            )
        out["suction_line"] = SuctionLine(None, length, bore, rough, fittings)
    return out


def line_fields(r, tag, source: str) -> dict:
    """A shared suction line: ``suction_line_id`` names the line a vessel-fed pump shares with
    others (its loss then comes from the line's total flow), ``header_flow_tag`` and
    ``header_flow_unit`` an optional flow transmitter on the common line. The line's own data
    (design point or geometry) stays in the ``line_*`` columns, the same in every member's row
    (checked by :mod:`screening.inputs.lines`)."""
    line_id = r.text("suction_line_id", required=False)
    header = r.text("header_flow_tag", required=False)
    if source != "vessel":
        for column, value in (("suction_line_id", line_id), ("header_flow_tag", header)):
            if value is not None:
                r.fail(
                    column,
                    "applies to vessel-fed pumps only (suction_source = vessel): a suction "
                    "transmitter reads the pressure after the line's loss",
                )
        return {}
    if header is None and r.text("header_flow_unit", required=False) is not None:
        r.fail("header_flow_unit", "is given but the row has no header_flow_tag")
    if header is not None and line_id is None:
        r.fail("header_flow_tag", "needs suction_line_id: it measures a shared suction line")
    if line_id is None:
        return {}
    return {"suction_line_id": line_id, "header_flow": tag("header_flow", "flow", required=False)}
