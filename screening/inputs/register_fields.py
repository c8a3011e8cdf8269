"""Groups of register columns read together: the speed tag and how to read it, a suction
transmitter's tap, a suction vessel and its line.

Each function takes the row reader of :mod:`screening.inputs.register` (``r``: ``text``,
``quantity``, ``number``, ``fail``) and returns keyword arguments of
:class:`screening.inputs.pumpspec.PumpSpec`. Errors name the file, line, pump and column.
"""

from __future__ import annotations

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
    spec = TagSpec(speed.tag, speed.unit, speed.kind, speed.stale_limit, rated / f_rated)
    return {"speed": spec, "speed_signal": signal, "rated_frequency": f_rated / 60.0}


def transmitter_fields(r, tag, reference) -> dict:
    """The register fields of a pump with a suction pressure transmitter (tag, reference,
    tap elevation [m] and bore [m])."""
    out = {
        "suction": tag("suction_pressure", "pressure"),
        "gauge": reference("suction_pressure_reference"),
        "tap_elevation": r.quantity("tap_elevation", "length"),
        "tap_bore": r.quantity("tap_bore", "length"),
    }
    if out["tap_bore"] <= 0:
        r.fail("tap_bore", "must be a positive pipe bore")
    return out


def vessel_fields(r, tag, reference) -> dict:
    """The register fields of a vessel-fed pump (level, surface pressure, suction line)."""
    surface = (r.text("vessel_surface") or "").lower()
    if surface not in ("open", "saturated", "pressure"):
        r.fail("vessel_surface", f"{surface!r} is not 'open', 'saturated' or 'pressure'")
    out = {
        "level": tag("level", "length"),
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
