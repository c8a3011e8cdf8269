"""What the register says about one pump, in SI units: its tags, suction line and data.

Read from the register table by :mod:`screening.inputs.register`.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class TagSpec:
    """A historian tag of a pump: its name, unit as written, and quantity kind."""

    tag: str
    unit: str
    kind: str
    stale_limit: float | None = None  # [s]; None: the plant default
    #: Factor applied after the SI conversion [-]: a drive's output frequency read as shaft
    #: speed, n = n_rated · f / f_rated (slip neglected).
    scale: float = 1.0
    #: Added after the scale [SI]: a level in per cent of span becomes metres,
    #: span_low + % / 100 · (span_high − span_low).
    offset: float = 0.0
    #: "step" or "linear" for this tag whatever its export family says; None: the family's.
    reconstruction: str | None = None


@dataclass(frozen=True)
class SuctionLine:
    """The suction line from the vessel to the pump, for the friction loss at each flow.

    Either a loss coefficient ``k`` [s²/m⁵] (head = k·Q², from a design point) or the line
    itself: ``length`` [m], ``bore`` [m], ``roughness`` [m], ``fittings_k`` [-] for
    Darcy-Weisbach (see :mod:`screening.physics.suction`).
    """

    k: float | None = None
    length: float | None = None
    bore: float | None = None
    roughness: float | None = None
    fittings_k: float = 0.0


@dataclass(frozen=True)
class LineMember:
    """A pump on a shared suction line, as much of it as the line's flow needs: its flow,
    run-status and speed tags, BEP flow [m³/s] and rated speed [rpm] (to decide running
    without a run tag, as for the pump itself)."""

    pump_id: str
    flow: TagSpec
    run: TagSpec | None
    speed: TagSpec | None
    bep_flow: float
    rated_speed: float


@dataclass(frozen=True)
class SharedLine:
    """A suction line shared by several vessel-fed pumps (a common suction header).

    Its loss is computed from the line's total flow: the ``header_flow`` tag (a flow
    transmitter on the common line) where fresh and good, else the sum of the flows of the
    ``members`` that are running. The line's geometry or design point is the members'
    ``PumpSpec.suction_line`` (the same in every member's row; see
    :mod:`screening.inputs.lines`).
    """

    line_id: str
    members: tuple[LineMember, ...]
    header_flow: TagSpec | None = None


@dataclass(frozen=True)
class PumpSpec:
    """One pump of the register, in SI units.

    Attributes: tap_elevation [m] (elevation above the NPSH datum of the point whose
    pressure the transmitter reads: the tap, or the sensing element on a liquid-filled impulse
    line; see ``pressure_point``), tap_bore [m], can_loss_k [s²/m⁵], rated_speed [rpm],
    bep_flow [m³/s],
    npsh3_exponent [-], impeller_eyes [-], guidance_margin [m], min_stable_flow,
    thermal_min_flow and allowable_max_flow [m³/s] at rated speed, preferred_low and
    preferred_high [-] as fractions of BEP flow.
    """

    pump_id: str
    service: str
    area: str
    fluid: str
    application: str
    suction: TagSpec | None
    gauge: bool
    temperature: TagSpec
    flow: TagSpec
    speed: TagSpec | None
    run: TagSpec | None
    tap_elevation: float
    tap_bore: float
    rated_speed: float
    bep_flow: float
    curve_id: str
    npsh3_exponent: float | None = None  # None: 1.5 below rated speed, 2 above
    impeller_eyes: int = 1
    impeller_eye_diameter: float | None = None  # [m], for the suction energy
    suction_specific_speed: float | None = None
    guidance_ratio: float | None = None
    guidance_margin: float | None = None
    min_stable_flow: float | None = None
    thermal_min_flow: float | None = None
    preferred_low: float = 0.70
    preferred_high: float = 1.20
    allowable_max_flow: float | None = None
    vapour_pressure: str | None = None
    source: str = "transmitter"
    level: TagSpec | None = None
    level_zero_elevation: float = 0.0
    vessel_surface: str | None = None
    vessel_pressure: TagSpec | None = None
    vessel_gauge: bool = False
    suction_line: SuctionLine | None = None
    line: int = 0
    #: The suction line this pump shares with others (register ``suction_line_id``), its
    #: header flow tag, and the joined line (set by :mod:`screening.inputs.lines`).
    suction_line_id: str | None = None
    header_flow: TagSpec | None = None
    shared_line: SharedLine | None = None
    #: Today's operating limits, for the what-if comparison: the low suction-pressure
    #: setpoint [Pa, in the suction transmitter's reference], the low vessel-level setpoint
    #: [m, in the level transmitter's frame] and the high liquid-temperature setpoint [K].
    low_pressure_setpoint: float | None = None
    low_level_setpoint: float | None = None
    high_temperature_setpoint: float | None = None
    #: How the speed tag was read: "" (rpm and the like), "shaft" (revolutions per second) or
    #: "drive_frequency" (n = rated speed · f / rated_frequency [Hz], slip neglected).
    speed_signal: str = ""
    #: The NPSH datum: orientation ("horizontal" or "vertical"), the datum's name, the point
    #: whose pressure is read ("tap" or "sensor"), a note where the register was ambiguous,
    #: and the loss coefficient of a vertical can from its nozzle to the impeller eye.
    orientation: str = "horizontal"
    datum: str = "shaft centreline"
    pressure_point: str = "tap"
    datum_note: str = ""
    can_loss_k: float | None = None
    rated_frequency: float | None = None
    #: Field evidence (optional; :mod:`screening.inputs.field_register`): the discharge
    #: pressure tag and its reference, the elevation of the point it reads above the NPSH datum
    #: [m] and the bore at its tap [m]; the head baseline ("fitted" or "vendor"); a vibration
    #: tag (velocity [m/s]).
    discharge: TagSpec | None = None
    discharge_gauge: bool = False
    discharge_elevation: float = 0.0
    discharge_bore: float = 1.0
    head_baseline: str = "fitted"
    vibration: TagSpec | None = None

    @property
    def needs_barometer(self) -> bool:
        """True when the barometric pressure enters NPSHa (gauge readings, open vessels)."""
        if self.source == "transmitter":
            return self.gauge
        if self.vessel_surface == "open":
            return True
        return self.vessel_surface == "pressure" and self.vessel_gauge

    def tags(self) -> dict[str, TagSpec]:
        """The pump's tags by role (suction, temperature, flow, speed, run, level, vessel
        pressure, and the header flow of a shared suction line)."""
        roles = {"temperature": self.temperature, "flow": self.flow}
        if self.suction is not None:
            roles["suction"] = self.suction
        if self.level is not None:
            roles["level"] = self.level
        if self.vessel_pressure is not None:
            roles["vessel_pressure"] = self.vessel_pressure
        if self.speed is not None:
            roles["speed"] = self.speed
        if self.run is not None:
            roles["run"] = self.run
        if self.header_flow is not None:
            roles["header_flow"] = self.header_flow
        return roles

    def field_tags(self) -> dict[str, TagSpec]:
        """The field-evidence tags by role (discharge pressure, vibration): read with the
        pump, never needed to screen it (a missing one leaves only the evidence out)."""
        roles = {}
        if self.discharge is not None:
            roles["discharge_pressure"] = self.discharge
        if self.vibration is not None:
            roles["vibration"] = self.vibration
        return roles

    def all_tags(self) -> list[TagSpec]:
        """Every tag read for this pump: its own, its field evidence's and its line's other
        members'."""
        return (
            list(self.tags().values())
            + list(self.field_tags().values())
            + list(self.peer_tags().values())
        )

    def peers(self) -> tuple[LineMember, ...]:
        """The other pumps on this pump's shared suction line (none without one)."""
        if self.shared_line is None:
            return ()
        return tuple(m for m in self.shared_line.members if m.pump_id != self.pump_id)

    def peer_tags(self) -> dict[str, TagSpec]:
        """The other line members' flow, run and speed tags, keyed ``<pump_id>:<role>``:
        read with this pump so that the line's total flow is known at every instant."""
        out: dict[str, TagSpec] = {}
        for m in self.peers():
            for role in ("flow", "run", "speed"):
                spec = getattr(m, role)
                if spec is not None:
                    out[f"{m.pump_id}:{role}"] = spec
        return out
