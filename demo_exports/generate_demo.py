"""Generate the bundled demo plant of pumpscreen: historian exports and configuration.

Everything here is INVENTED. "Quillmere Demo Works" is a made-up utilities and tank-farm
site (elevation 120 m, time zone Europe/Berlin) with 36 centrifugal pumps. The data cover
October 2026 (local time) at one-minute resolution; clocks go back on 2026-10-25 at
03:00 CEST -> 02:00 CET, so that month has 44 700 minutes.

Run from the repository root:  .venv/bin/python demo_exports/generate_demo.py
The output is deterministic (fixed random state). The script (re)writes
  demo_exports/wide_csv/*.csv.gz      wide, naive LOCAL time ("timestamp"), text words in cells
                                      (vessels_2026-10.csv.gz: the four vessel-fed pumps)
  demo_exports/wide_parquet/*.parquet wide, "time_utc" (tz-aware UTC), floats, NaN for gaps
                                      (refrigeration_2026-10.parquet: GL-121 and RT-951)
  demo_exports/long_parquet/*.parquet long tag/time/value/quality, recorded by exception
  demo_exports/long_csv/*.csv.gz      long tag/time/value/quality, ISO time with local offset
  demo_exports/weather/*.csv.gz       long tag/time/value (no quality), barometer in hPa, UTC "Z"
  demo_exports/planted_events.csv     machine-readable list of the planted events
  configs/demo_pumps.csv, configs/demo_npsh3_curves.csv

Physics: suction pressures are set with CoolProp so that NPSH available
    NPSHa = (p_abs - p_vapour(T)) / (rho g) + v^2 / (2 g) + z_tap
stands at a chosen multiple of the vendor NPSH3 at best-efficiency flow (design ratio). NPSH3
curves follow from a chosen suction specific speed; at speed n they scale as
NPSH3(Q n_rated / n) (n / n_rated)^exponent. Gauge transmitters read p_abs minus the true
barometric pressure. Sources are either "open" (a basin, tank or pressurised loop: head on top
of the atmosphere) or "saturated" (deaerator, hot well, LPG vessel: head on top of the vapour
pressure, so the suction pressure tracks p_vapour(T)).
Vessel-fed pumps (BF-311, CD-412, RW-504, DM-151) have no suction transmitter: the register
gives a level tag, the level's zero above the NPSH datum, the surface (open, saturated or a
vessel pressure tag) and the suction line, and
    NPSHa = (p_surface - p_vapour(T)) / (rho g) + level + zero elevation - h_f(Q)
(no velocity head), with h_f = k Q^2 from a design point or Darcy-Weisbach with Colebrook.
They draw from their own random stream, so the 30 transmitter pumps keep their numbers.
The refrigeration plant (GL-121, RT-951) has a stream of its own too. GL-121 pumps a CoolProp
incompressible solution, INCOMP::MEG-30% (ethylene glycol 30 % by mass), for which CoolProp
gives no vapour pressure: the register's vapour_pressure column says "water" (water's vapour
pressure, the conservative bound) and the density is the solution's at 101325 Pa, as the tool
takes them; its temperatures stay at or above +3 degC (the water table starts at 0.01 degC).
RT-951 pumps R407C, a CoolProp pseudo-pure blend whose quality-0 state is the bubble point.

Planted process events (local time; the summary printed at the end gives the generator's truth):
  * RW-502 raw-water intake: suction strainer fouls from 2026-10-04; the strainer loss grows
    steadily with flow squared, taking NPSHa/NPSH3 from about 2.5 (ample) to below guidance at
    the daily flow peaks from 2026-10-19 and below NPSH3 from 2026-10-25 on. Stopped and cleaned
    2026-10-28 08:40-10:15 (RW-503 covers); back to about 2.4 after the restart.
  * Hot spell 2026-10-12..16: cooling-water basin 8-12 K warmer, peaking in the afternoons.
    CW-103 (auxiliary cooling water with a suction lift, drawing near its limit; no run tag)
    falls below guidance in the afternoons of 2026-10-13..16; CW-101A/B and CW-102A/B see the
    same warmer water but keep ample margin.
  * DH-202 district-heating booster (variable speed): drive runs at 112-118 % of rated speed
    2026-10-19 06:00 .. 2026-10-22 18:00 (NPSH3 grows with speed squared, the suction loss
    with flow squared): NPSHa/NPSH3 about 1.2-1.5, often below guidance, never below NPSH3.
  * MT-801 methanol transfer throttled to ~15 % of BEP flow 2026-10-07 14:00 .. 10-10 11:00,
    below the first curve point (25 %): "off curve".
  * BF-311 deaerator-fed boiler feed booster: three load rejections (2026-10-06 14:22, 10-15
    03:47, 10-27 19:05): the deaerator pressure falls 28-30 % within minutes while the water in
    the suction line stays hot for minutes; NPSHa/NPSH3 dips from ~6 to below guidance for
    ~2 min each time, and below NPSH3 for ~2 min on 10-27.
  * CD-412 condensate extraction from a saturated hotwell: level drawn down from ~1450 to
    ~550 mm on 2026-10-21 10:40 .. 16:30; below guidance for about 4.5 h, never below NPSH3.
  * RW-504 tidal-jetty intake (open, Darcy-Weisbach line): two tides a day; low water (river
    1.4 m down) 2026-10-08 18:00 .. 10-11 08:00; below guidance around the low tides of 10-09
    and 10-10, never below NPSH3 and never a suction lift.
  * DM-151 variable-speed demineralised-water pump (open tank): ~30 % of BEP flow every night
    22:00-05:30 at ~93 % speed, below its minimum stable flow (35 % of BEP at rated speed).
  * RT-951 R407C transfer from receiver RV-950 (bubble point, bar a transmitter): on
    2026-10-20 13:20 .. 15:20 the receiver pressure is pulled down (its saturation temperature
    5.5 K, about 1.4 bar, in 2 h) while the liquid at the pump cools ~25 min behind; NPSHa/NPSH3
    falls from ~2.2 to ~1.15, below guidance for ~1.4 h, never below NPSH3; recovered by 16:20.
    GL-121 (glycol loop) has no event: its margin stays ample.
Planted data-quality events (see planted_events.csv and demo_exports/README.md for all):
  transmitter dropouts (CW-101A flow, DH-201A temperature, BF-301B suction pressure), bad
  quality stretches (BF-301A, LP-901A, MT-801), text words instead of numbers (CW-101B, CH-701A,
  CH-702, RW-501, RW-503, MT-802, TL-811), a frozen suction transmitter (CW-102A,
  2026-10-20 08:00 .. 10-22 07:30), a barometer dropout (2026-10-17 06:10 .. 10-18 20:40),
  and duplicated / out-of-order rows in the toluene long CSV file.
Words: good quality "ok"; bad quality "suspect", "link-down", "held"; written instead of a number
in CSV cells: "not-avail", "xmtr-fault", "no-signal". Every pump also has a discharge-pressure tag
(*.DISCH_PRESS) that the register does not use, as real exports carry more tags than needed.
"""

from __future__ import annotations

import gzip
from dataclasses import dataclass, replace
from pathlib import Path

import generate_field  # the field-evidence tags, written after everything else
import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
from CoolProp.CoolProp import PropsSI

RANDOM_STATE = 20261001
ROOT = Path(__file__).resolve().parent.parent
EXPORTS = ROOT / "demo_exports"
CONFIGS = ROOT / "configs"
SITE_TZ = "Europe/Berlin"
G = 9.80665
P_ATM_STANDARD = 101325.0 * (1.0 - 2.25577e-5 * 120.0) ** 5.25588  # Pa at 120 m
BAROMETER_TAG = "SITE.BARO_PRESS"
HEARTBEAT_MIN = 10  # by-exception recording writes at least every 10 min
GOOD = "ok"
BAD_QUALITY = ("suspect", "link-down", "held")
TEXT_WORDS = ("not-avail", "xmtr-fault", "no-signal")

TO_SI = {"m": 1.0, "mm": 1e-3, "ft": 0.3048, "in": 0.0254,
         "m3/h": 1.0, "L/s": 3.6, "gpm": 0.227124707}  # lengths to m, flows to m3/h
PA_PER = {"kPa": 1e3, "bar": 1e5, "psi": 6894.757293168, "hPa": 100.0}
PRESSURE_NOISE_PA = {"kPa": 60.0, "bar": 100.0, "psi": 100.0}
RESOLUTION = {"kPa": 0.01, "bar": 0.001, "psi": 0.01, "degC": 0.1, "degF": 0.1,
              "m3/h": 0.1, "L/s": 0.01, "gpm": 1.0, "rpm": 1.0, "m": 0.001, "mm": 1.0,
              "ft": 0.01}
PLANTED: list[dict] = []  # filled by the event functions, written to planted_events.csv


@dataclass(frozen=True)
class Vessel:
    """The suction vessel of a vessel-fed pump (no suction pressure transmitter).

    NPSHa = (p_surface - p_v(T)) / (rho g) + level + zero elevation - suction-line loss(Q).
    """

    name: str  # tag prefix of the vessel: <name>.LEVEL, and <name>.PRESS for "pressure"
    surface: str  # "open" (barometric), "saturated" (p_v of the liquid) or "pressure" (tag)
    level_unit: str  # m, mm or ft
    zero_elevation: str  # register cell: level zero above the NPSH datum (m unless own unit)
    pressure_unit: str = ""  # vessel pressure tag, gauge ("pressure" surface only)
    loss_point: tuple[str, str] = ("", "")  # line_loss_head, line_loss_flow (register cells)
    line: tuple[str, str, str, str] = ("", "", "", "")  # length, bore, roughness, fittings K
    shared_line: str = ""  # register suction_line_id: a suction header shared with other pumps


@dataclass(frozen=True)
class Pump:
    pump_id: str
    service: str
    area: str
    fluid: str
    application: str
    units: tuple[str, str, str, str]  # pressure unit, gauge/absolute, temperature, flow
    rated_rpm: int
    bep_flow: str  # register cell; plain number = m3/h, or a number with its own unit
    suction_specific_speed: float  # US units; sets NPSH3 at BEP
    tap_elevation: str  # register cell (m unless own unit)
    tap_bore: str  # register cell (mm unless own unit)
    source: str  # "open" or "saturated"
    design_ratio: float  # NPSHa / NPSH3 at BEP flow, design temperature, nominal level
    design_temp: float  # degC
    friction: float  # suction-line loss at BEP flow, m
    curve_id: str
    curve_shape: tuple[float, float] = (0.5, 2.0)  # NPSH3/NPSH3_bep = a + (1 - a) x^k
    eyes: int = 1
    run_tag: bool = True
    speed_tag: bool = False
    exponent: str = ""
    stale_limit: str = ""
    shared_temperature_tag: str = ""
    fine_temperature: bool = False  # 0.01 K resolution (hot or saturated services)
    vessel: Vessel | None = None  # vessel-fed: level (and vessel pressure) instead of a suction tag
    min_stable_flow: str = ""  # register cells (m3/h unless own unit), empty: not given
    thermal_min_flow: str = ""
    allowable_max_flow: str = ""
    vapour_pressure: str = ""  # register cell: "water" or "raoult", incompressible liquids only
    eye_diameter: str = ""  # register cell (mm unless own unit): for the suction energy
    orientation: str = ""  # register cell: "vertical" for the vertical can pump

    @property
    def stem(self) -> str:  # tag prefix: CW-101A -> CW101A
        return self.pump_id.replace("-", "")

    def tag(self, what: str) -> str:
        if what == "SUCT_TEMP" and self.shared_temperature_tag:
            return self.shared_temperature_tag
        if what == "LEVEL" and self.vessel:
            return f"{self.vessel.name}.LEVEL"
        if what == "VESSEL_PRESS" and self.vessel:
            return f"{self.vessel.name}.PRESS"
        return f"{self.stem}.{what}"

    def own_tags(self) -> set[str]:
        """Tags of the pump that do not start with its stem (shared or vessel tags)."""
        tags = {self.tag("SUCT_TEMP")}
        if self.vessel:
            tags.add(self.tag("LEVEL"))
            if self.vessel.surface == "pressure":
                tags.add(self.tag("VESSEL_PRESS"))
        return tags


def cell_si(cell: str, default_unit: str) -> float:
    value, _, unit = cell.partition(" ")
    return float(value) * TO_SI[unit or default_unit]


KPA_G = ("kPa", "gauge", "degC", "m3/h")
BAR_G = ("bar", "gauge", "degC", "m3/h")
US_PSIG = ("psi", "gauge", "degF", "gpm")
LONG = "15 min"  # stale limit for tags recorded by exception (heartbeat 10 min)


def siblings(first: Pump, *pump_ids: str, **changes) -> list[Pump]:
    """The first pump and identical ones (with optional changes) under other ids."""
    return [first] + [replace(first, pump_id=pump_id, **changes) for pump_id in pump_ids]


def vessel_pump(pump_id: str, service: str, area: str, fluid: str, application: str,
                units: tuple[str, str, str, str], rated_rpm: int, bep_flow: str, s: float,
                curve_id: str, vessel: Vessel, **changes) -> Pump:
    """A pump fed from a vessel: no suction transmitter, so no tap (register cells empty).

    ``units`` as for the other pumps; its pressure unit is that of the discharge tag only.
    """
    return Pump(pump_id, service, area, fluid, application, units, rated_rpm, bep_flow, s, "", "",
                "vessel", np.nan, np.nan, 0.0, curve_id, vessel=vessel, **changes)


#: The turbine 2 hotwell: CD-412 and its assist pump CD-413 draw from it through one suction
#: header, HW410-SUCTION (design point 0.35 m at 180 m3/h: the loss at the header's total flow).
HOTWELL_410 = Vessel("HW410", "saturated", "mm", "1.1", loss_point=("0.35", "180"),
                     shared_line="HW410-SUCTION")
ASSIST_413 = ("06:00", "10:00")  # CD-413 runs with CD-412 on weekday mornings (local time)

# positional: id, service, area, fluid, application, units, rated rpm, BEP flow, S, tap elevation,
# tap bore, source, design ratio, design temperature (degC), suction loss at BEP (m), curve id
PUMPS = [
    *siblings(Pump("CW-101A", "Main cooling water (duty/standby)", "cooling water", "Water",
                   "power", KPA_G, 990, "1800", 8500, "-0.4", "600", "open", 2.6, 26, 0.6,
                   "CWP-1800", eyes=2, shared_temperature_tag="CW.BASIN_TEMP",
                   eye_diameter="560"), "CW-101B"),
    *siblings(Pump("CW-102A", "Process cooling water (duty/standby)", "cooling water", "Water",
                   "power", KPA_G, 1480, "650", 9500, "0.5", "350", "open", 2.2, 26, 0.8,
                   "CWP-650", curve_shape=(0.45, 2.2)), "CW-102B"),
    Pump("CW-103", "Auxiliary cooling water (tower cell 3)", "cooling water", "Water", "power",
         KPA_G, 1480, "320", 9000, "0.3", "250", "open", 1.42, 26, 1.2, "CWP-320",
         run_tag=False),
    *siblings(Pump("DH-201A", "District-heating supply circulation", "district heating", "Water",
                   "power", BAR_G, 1485, "900", 9000, "0.6", "400", "open", 1.2, 116, 1.0,
                   "DHP-900", eyes=2, speed_tag=True, fine_temperature=True), "DH-201B"),
    Pump("DH-202", "District-heating booster (east branch)", "district heating", "Water",
         "power", BAR_G, 2950, "240", 10000, "0.4", "200", "open", 1.13, 114, 3.0, "DHB-240",
         speed_tag=True, curve_shape=(0.45, 2.2), fine_temperature=True),
    *siblings(Pump("BF-301A", "Boiler feed water", "boiler house", "Water", "power",
                   ("bar", "absolute", "degC", "m3/h"), 2980, "160", 9000, "0.6", "150",
                   "saturated", 2.3, 130, 1.5, "BFP-160", stale_limit=LONG,
                   fine_temperature=True), "BF-301B"),
    *siblings(Pump("CD-401A", "Condensate extraction", "boiler house", "Water", "power",
                   ("kPa", "absolute", "degC", "m3/h"), 1480, "220", 12000, "2.0", "250",
                   "saturated", 2.0, 42, 0.4, "CEP-220", curve_shape=(0.55, 2.0),
                   fine_temperature=True, eye_diameter="254"), "CD-401B"),
    *siblings(Pump("CH-701A", "Dilute caustic dosing (as water)", "dosing", "Water", "chemical",
                   ("bar", "gauge", "degC", "L/s"), 2900, "4.5 L/s", 5500, "0.2", "50", "open",
                   5.5, 20, 0.5, "DOS-4.5", curve_shape=(0.6, 2.0)), "CH-701B"),
    Pump("CH-702", "Corrosion-inhibitor dosing (as water)", "dosing", "Water", "chemical",
         ("bar", "gauge", "degC", "L/s"), 2900, "1.2 L/s", 5000, "0.2", "25", "open", 6.5, 20,
         0.3, "DOS-1.2", curve_shape=(0.6, 2.0), run_tag=False),
    *siblings(Pump("RW-501", "Raw-water intake", "raw water", "Water", "water", US_PSIG, 1485,
                   "2200 gpm", 9000, "1.5 ft", "12 in", "open", 2.4, 14, 0.6, "RWP-2200",
                   eyes=2, eye_diameter="12 in"), "RW-502", "RW-503"),
    Pump("FW-601", "Fire-water jockey", "fire water", "Water", "building", US_PSIG, 2960,
         "25 gpm", 5200, "1 ft", "2 in", "open", 8.2, 12, 0.2, "JKY-25"),
    *siblings(Pump("FW-602", "Fire-water main pump (electric)", "fire water", "Water",
                   "building", US_PSIG, 1480, "1500 gpm", 8000, "1 ft", "10 in", "open", 3.8, 12,
                   0.5, "FWP-1500", eyes=2), "FW-603", speed_tag=True, exponent="1.5",
              service="Fire-water main pump (diesel)"),
    Pump("BS-111", "Chilled water for control building", "building services", "Water",
         "building", ("kPa", "gauge", "degC", "L/s"), 1450, "35 L/s", 7000, "-0.2", "150",
         "open", 8.0, 8, 0.5, "BSC-35", run_tag=False),
    Pump("BS-112", "Heating water for control building", "building services", "Water",
         "building", ("kPa", "gauge", "degC", "L/s"), 1450, "20 L/s", 7000, "0.3", "125",
         "open", 9.5, 75, 0.5, "BSH-20", speed_tag=True, exponent="1.5"),
    Pump("MT-801", "Methanol transfer to unit", "tank farm", "Methanol", "chemical", BAR_G, 2950,
         "60", 9500, "0.4", "100", "open", 2.5, 18, 0.8, "MTP-60", stale_limit=LONG),
    Pump("MT-802", "Methanol road-tanker unloading", "tank farm", "Methanol", "chemical", BAR_G,
         2950, "40", 8000, "0.3", "80", "open", 3.6, 18, 1.2, "MTU-40", run_tag=False,
         stale_limit=LONG),
    Pump("TL-811", "Toluene transfer", "tank farm", "Toluene", "chemical", US_PSIG, 2950,
         "180 gpm", 8500, "1.2 ft", "3 in", "open", 2.8, 18, 0.8, "TLT-180", stale_limit=LONG),
    Pump("TL-812", "Toluene recycle", "tank farm", "Toluene", "chemical", US_PSIG, 2950,
         "400 gpm", 11500, "0.8 ft", "4 in", "open", 2.0, 46, 0.8, "TLR-400", speed_tag=True,
         stale_limit=LONG),
    *siblings(Pump("LP-901A", "n-Butane loading", "LPG", "n-Butane", "petroleum", BAR_G, 2950,
                   "80", 9000, "0.5", "100", "saturated", 2.0, 12, 0.8, "LPB-80",
                   stale_limit=LONG, fine_temperature=True), "LP-901B"),
    Pump("LP-902", "Propane loading", "LPG", "Propane", "petroleum", US_PSIG, 2950, "300 gpm",
         9000, "1.5 ft", "4 in", "saturated", 2.0, 12, 0.8, "LPP-300", run_tag=False,
         stale_limit=LONG, fine_temperature=True),
    # vessel-fed pumps, last so that the random streams of the pumps above stay as they were;
    # positional: id, service, area, fluid, application, units (the pressure unit is the
    # discharge tag's), rated rpm, BEP flow, S, curve id, vessel (name, surface, level unit,
    # level zero above the NPSH datum, vessel pressure unit, suction-line loss)
    vessel_pump("BF-311", "Boiler feed booster (deaerator DA-310)", "boiler house", "Water",
                "power", BAR_G, 1490, "420", 9500, "BFB-420",
                Vessel("DA310", "pressure", "m", "18.0", "bar", loss_point=("1.2", "420")),
                fine_temperature=True, min_stable_flow="105", thermal_min_flow="90"),
    vessel_pump("CD-412", "Condensate extraction (turbine 2 hotwell)", "boiler house", "Water",
                "power", BAR_G, 980, "180", 13000, "CEV-180",
                HOTWELL_410, curve_shape=(0.55, 2.0), fine_temperature=True,
                min_stable_flow="45", thermal_min_flow="20"),
    vessel_pump("RW-504", "Raw-water intake, tidal jetty (vertical can pump)", "raw water",
                "Water", "water", US_PSIG, 1180, "8000 gpm", 8600, "RWV-8000",
                Vessel("JETTY", "open", "ft", "-6.5 ft",
                       line=("150 ft", "24 in", "0.02 in", "3.2")),
                allowable_max_flow="9600 gpm", orientation="vertical"),
    vessel_pump("DM-151", "Demineralised water forwarding (variable speed)", "water treatment",
                "Water", "water", BAR_G, 2950, "60", 8500, "DMF-60",
                Vessel("TK151", "open", "m", "1.5", loss_point=("0.6", "60")), speed_tag=True,
                min_stable_flow="21", thermal_min_flow="12"),
    # refrigeration plant, last again so that every pump above keeps its random stream: a
    # glycol loop (CoolProp incompressible solution, water's vapour pressure as the bound) and
    # a refrigerant transfer pump drawing from a receiver at the bubble point
    Pump("GL-121", "Glycol loop circulation (chiller / heat recovery)", "refrigeration",
         "INCOMP::MEG-30%", "building", KPA_G, 1450, "150", 8000, "0.3", "200", "open", 6.0,
         8, 0.6, "GLC-150", speed_tag=True, vapour_pressure="water"),
    Pump("RT-951", "Refrigerant transfer from receiver RV-950", "refrigeration", "R407C",
         "chemical", ("bar", "absolute", "degC", "m3/h"), 2900, "40", 8500, "0.4", "100",
         "saturated", 2.0, 16, 0.5, "RTP-40", fine_temperature=True),
    # the assist pump of CD-412 on the same hotwell suction header, last so that every pump
    # above keeps its random stream
    vessel_pump("CD-413", "Condensate extraction assist (turbine 2 hotwell)", "boiler house",
                "Water", "power", BAR_G, 980, "180", 13000, "CEV-180", HOTWELL_410,
                curve_shape=(0.55, 2.0), fine_temperature=True, min_stable_flow="45",
                thermal_min_flow="20"),
]
BY_ID = {p.pump_id: p for p in PUMPS}


# ----------------------------------------------------------------------------- time and noise
@dataclass
class Clock:
    utc: pd.DatetimeIndex
    local: pd.DatetimeIndex
    hour: np.ndarray  # local hour of day (float)
    month_fraction: np.ndarray  # 0 at the start of the month, 1 at the end
    weekend: np.ndarray
    n: int

    @classmethod
    def october(cls) -> Clock:
        start = local_time("2026-10-01")
        end = local_time("2026-11-01")
        utc = pd.date_range(start.tz_convert("UTC"), end.tz_convert("UTC"), freq="min",
                            inclusive="left")
        local = utc.tz_convert(SITE_TZ)
        hour = (local.hour + local.minute / 60.0).to_numpy(dtype=float)
        fraction = np.arange(len(utc)) / len(utc)
        weekend = np.asarray(local.day_of_week >= 5)
        return cls(utc, local, hour, fraction, weekend, len(utc))

    @property
    def seconds(self) -> np.ndarray:
        return np.arange(self.n) * 60.0

    def seconds_at(self, when: str) -> float:
        return (local_time(when) - self.utc[0]).total_seconds()

    def window(self, start: str, end: str) -> np.ndarray:
        lo, hi = local_time(start), local_time(end)
        return np.asarray((self.utc >= lo) & (self.utc < hi))

    def daily(self, peak_hour: float) -> np.ndarray:
        return np.cos(2 * np.pi * (self.hour - peak_hour) / 24.0)

    def wander(self, rng: np.random.Generator, sd: float, knot_hours: float = 3.0) -> np.ndarray:
        knots = np.arange(0, self.n + knot_hours * 60, knot_hours * 60)
        return np.interp(np.arange(self.n), knots, rng.normal(0.0, sd, len(knots)))


def local_time(text: str) -> pd.Timestamp:
    """A local wall-clock time; inside the repeated hour of 2026-10-25 the first (CEST) one."""
    return pd.Timestamp(text).tz_localize(SITE_TZ, ambiguous=True)


def planted(pump_id: str, event: str, tag: str, start: str, end: str, expect: str) -> None:
    PLANTED.append({"pump_id": pump_id, "event": event, "tag": tag, "start_local": start,
                    "end_local": end, "expectation": expect})


@dataclass
class State:
    """Process truth of one pump, per minute (SI: load = Q / Q_bep, speed = n / n_rated)."""

    run: np.ndarray
    load: np.ndarray
    temp: np.ndarray  # degC at the pump suction
    speed: np.ndarray | float = 1.0
    source_temp: np.ndarray | None = None  # vessel temperature (saturated sources)
    level: np.ndarray | float = 0.0  # change of static head, m (vessel pumps: the level, m)
    extra_loss: np.ndarray | float = 0.0  # extra suction loss at BEP flow, m (scales with Q^2)
    surface_pressure: np.ndarray | None = None  # Pa absolute, vessels with a pressure tag
    line_others: np.ndarray | float = 0.0  # m3/s of the other pumps on a shared suction line


def lag(x: np.ndarray, minutes: float) -> np.ndarray:
    return pd.Series(x, dtype=float).ewm(alpha=1.0 / minutes, adjust=False).mean().to_numpy()


def duty_pair(clock: Clock, changeovers: list[str]) -> tuple[np.ndarray, np.ndarray]:
    """A runs first; at each changeover the incoming pump starts, the outgoing stops 3 min later."""
    a, b = np.ones(clock.n, bool), np.zeros(clock.n, bool)
    for k, when in enumerate(changeovers):
        t = local_time(when)
        incoming, outgoing = (b, a) if k % 2 == 0 else (a, b)
        incoming[clock.utc >= t] = True
        outgoing[clock.utc >= t + pd.Timedelta(minutes=3)] = False
    return a, b


def pair(clock: Clock, changeovers: list[str], load, temp, standby_cooling: float = 0.0,
         **extra) -> tuple[State, State]:
    states = []
    runs = duty_pair(clock, changeovers)
    both = runs[0] & runs[1]
    for run in runs:
        share = np.where(both, 0.55, 1.0) * load
        t = temp - standby_cooling * lag((~run).astype(float), 120.0)
        states.append(State(run, share, t, source_temp=temp, **extra))
    return states[0], states[1]


def batches(clock: Clock, windows: list[tuple[str, str]]) -> np.ndarray:
    run = np.zeros(clock.n, bool)
    for start, end in windows:
        run |= clock.window(start, end)
    return run


def days(first: int = 1, last: int = 31, weekdays_only: bool = False) -> list[str]:
    out = []
    for d in range(first, last + 1):
        day = pd.Timestamp(2026, 10, d)
        if not (weekdays_only and day.weekday() >= 5):
            out.append(day.strftime("%Y-%m-%d"))
    return out


# ----------------------------------------------------------------------------- process events
def hot_spell(clock: Clock) -> np.ndarray:
    """Extra cooling-water temperature (K): 8-12 K afternoon peaks 2026-10-12..16."""
    knots = ["2026-10-11 12:00", "2026-10-12 15:30", "2026-10-13 15:30", "2026-10-14 15:30",
             "2026-10-15 15:30", "2026-10-16 15:30", "2026-10-17 12:00"]
    peaks = [0.0, 8.5, 10.5, 12.0, 11.0, 9.0, 0.0]
    amplitude = np.interp(clock.seconds, [clock.seconds_at(k) for k in knots], peaks)
    for pump_id in ("CW-103", "CW-101A", "CW-101B", "CW-102A", "CW-102B"):
        expect = ("margin below guidance in the afternoons" if pump_id == "CW-103"
                  else "warmer water, margin stays ample")
        planted(pump_id, "hot spell", BY_ID[pump_id].tag("SUCT_TEMP"), knots[0], knots[-1],
                expect)
    return amplitude * (0.6 + 0.4 * clock.daily(15.5))


def hot_spell_demand(state: State, extra_temp: np.ndarray) -> None:
    """More heat to reject: CW-103 flow rises by up to 10 % with the water temperature."""
    state.load = state.load + 0.10 * extra_temp / 12.0


def strainer_fouling(state: State, clock: Clock) -> None:
    """RW-502: strainer loss grows steadily from 10-04 to 5 m at BEP flow; cleaned 10-28 08:40."""
    start, cleaned = clock.seconds_at("2026-10-04"), "2026-10-28 08:40"
    progress = np.clip((clock.seconds - start) / (clock.seconds_at(cleaned) - start), 0.0, None)
    state.extra_loss = np.where(progress <= 1.0, 5.0 * progress, 0.05)
    state.run = state.run & ~clock.window(cleaned, "2026-10-28 10:15")
    planted("RW-502", "strainer fouling", "RW502.SUCT_PRESS", "2026-10-04 00:00", cleaned,
            "margin from ample to below guidance (from ~10-19 at flow peaks), below NPSH3 "
            "(from ~10-25)")
    planted("RW-502", "strainer cleaned", "RW502.SUCT_PRESS", cleaned, "2026-10-28 10:15",
            "pump stopped for cleaning, RW-503 covers; margin ample again after restart")


def drive_running_fast(state: State, clock: Clock, rng: np.random.Generator) -> None:
    """DH-202: speed 112-118 % of rated with flow rising in proportion."""
    start, end = "2026-10-19 06:00", "2026-10-22 18:00"
    fast = clock.window(start, end)
    speed = np.clip(1.15 + 0.015 * clock.daily(14) + clock.wander(rng, 0.01), 1.12, 1.18)
    state.load = np.where(fast, state.load * speed / state.speed, state.load)
    state.speed = np.where(fast, speed, state.speed)
    planted("DH-202", "drive running fast", "DH202.SPEED", start, end,
            "speed 112-118 % of rated; NPSH3 up with speed squared; margin below guidance")


def throttled_low_flow(state: State, clock: Clock, rng: np.random.Generator) -> None:
    """MT-801: discharge throttled, flow ~15 % of BEP, below the first curve point (25 %)."""
    start, end = "2026-10-07 14:00", "2026-10-10 11:00"
    state.load = np.where(clock.window(start, end), 0.15 + clock.wander(rng, 0.004), state.load)
    planted("MT-801", "throttled to low flow", "MT801.FLOW", start, end,
            "flow ~15 % of BEP: off curve (below first NPSH3 point at 25 %)")


# ----------------------------------------------------------------------------- plant operation
def plant_operation(clock: Clock, rng: np.random.Generator) -> dict[str, State]:
    ops: dict[str, State] = {}
    mf, wander, daily = clock.month_fraction, clock.wander, clock.daily
    hot = hot_spell(clock)
    basin = 23.0 - 3.0 * mf + 1.5 * daily(16) + wander(rng, 0.4) + hot
    ops["CW-101A"], ops["CW-101B"] = pair(
        clock, ["2026-10-08 09:12", "2026-10-18 14:40", "2026-10-29 08:05"],
        0.9 + 0.05 * daily(15) + wander(rng, 0.02), basin)
    ops["CW-102A"], ops["CW-102B"] = pair(
        clock, ["2026-10-13 11:30", "2026-10-17 16:00"],
        0.85 + 0.06 * daily(14) + wander(rng, 0.02), basin + 0.3, standby_cooling=0.8)
    cw103 = ~clock.window("2026-10-03 09:00", "2026-10-03 13:30")
    ops["CW-103"] = State(cw103, 0.95 + 0.04 * daily(15) + wander(rng, 0.015), basin + 0.5)
    hot_spell_demand(ops["CW-103"], hot)

    cold = np.clip(0.25 + 0.5 * mf + 0.15 * daily(5) + wander(rng, 0.08, 6), 0.0, 1.0)
    dh_load = 0.55 + 0.35 * cold + wander(rng, 0.02)
    ops["DH-201A"], ops["DH-201B"] = pair(
        clock, ["2026-10-11 07:30", "2026-10-24 07:15"], dh_load, 100.0 + 16.0 * cold,
        standby_cooling=25.0, speed=0.45 + 0.5 * dh_load)
    booster = 0.7 + 0.2 * cold + wander(rng, 0.02)
    ops["DH-202"] = State(np.ones(clock.n, bool), booster, 98.0 + 16.0 * cold,
                          speed=0.5 + 0.45 * booster)
    drive_running_fast(ops["DH-202"], clock, rng)

    plant = np.clip(0.8 + 0.15 * daily(13) - 0.1 * clock.weekend + wander(rng, 0.03), 0.55, 1.05)
    deaerator = 112.0 + 33.0 * (plant - 0.55) / 0.5 + wander(rng, 0.3)
    ops["BF-301A"], ops["BF-301B"] = pair(
        clock, ["2026-10-14 10:00", "2026-10-27 09:30"], plant, deaerator, standby_cooling=15.0)
    hotwell = 38.0 + 6.0 * (plant - 0.55) / 0.5 + 0.3 * hot + wander(rng, 0.3)
    ops["CD-401A"], ops["CD-401B"] = pair(
        clock, ["2026-10-16 08:00", "2026-10-26 13:20"], 0.95 * plant, hotwell,
        standby_cooling=3.0)

    dosing_temp = 19.0 - 3.0 * mf + 2.0 * daily(15) + wander(rng, 0.3)
    ops["CH-701A"], ops["CH-701B"] = pair(
        clock, ["2026-10-09 10:00", "2026-10-23 10:00"], 0.8 + wander(rng, 0.05), dosing_temp)
    inhibitor = batches(clock, [(f"{d} {h:02d}:30", f"{d} {h + 2:02d}:30")
                                for d in days() for h in (0, 8, 16)])
    ops["CH-702"] = State(inhibitor, 0.85 + wander(rng, 0.03), dosing_temp + 0.4)

    river = 13.5 - 2.5 * mf + 0.3 * daily(16) + wander(rng, 0.2, 6)
    rw_load = 0.92 + 0.06 * daily(14) + wander(rng, 0.02)
    rw501 = ~clock.window("2026-10-10 07:00", "2026-10-12 15:00")
    rw503 = ~rw501 | clock.window("2026-10-28 08:30", "2026-10-28 10:25")
    level = wander(rng, 0.15, 12)
    ops["RW-501"] = State(rw501, rw_load, river, level=level)
    ops["RW-502"] = State(np.ones(clock.n, bool), rw_load, river, level=level)
    strainer_fouling(ops["RW-502"], clock)
    ops["RW-503"] = State(rw503, rw_load, river, level=level)

    reservoir = 12.0 - 1.5 * mf + wander(rng, 0.1, 12)
    jockey = np.zeros(clock.n, bool)
    t = int(rng.integers(60, 200))
    while t < clock.n:
        jockey[t:t + int(rng.integers(4, 9))] = True
        t += int(rng.integers(150, 300))
    ops["FW-601"] = State(jockey, 0.6 + wander(rng, 0.1, 6), reservoir)
    tests = [d for d in days() if pd.Timestamp(d).weekday() == 2]
    ops["FW-602"] = State(batches(clock, [(f"{d} 10:00", f"{d} 10:30") for d in tests]),
                          1.0 + wander(rng, 0.01), reservoir)
    ops["FW-603"] = State(batches(clock, [(f"{d} 10:45", f"{d} 11:15") for d in tests]),
                          1.0 + wander(rng, 0.01), reservoir, speed=1.005 + wander(rng, 0.004))

    office = batches(clock, [(f"{d} 06:00", f"{d} 19:00") for d in days(weekdays_only=True)])
    ops["BS-111"] = State(office, 0.75 + 0.15 * daily(15) + wander(rng, 0.03),
                          7.0 + 0.5 * daily(15) + wander(rng, 0.3))
    heating = 0.6 + 0.3 * cold + wander(rng, 0.03)
    ops["BS-112"] = State(np.ones(clock.n, bool), heating, 68.0 + 6.0 * cold + wander(rng, 0.5),
                          speed=0.5 + 0.45 * heating)

    tank = 15.0 - 3.0 * mf + 2.0 * daily(16) + wander(rng, 0.4)
    ops["MT-801"] = State(~clock.window("2026-10-02 08:00", "2026-10-02 20:00"),
                          0.85 + wander(rng, 0.04), tank, level=wander(rng, 0.4, 24))
    throttled_low_flow(ops["MT-801"], clock, rng)
    unloading = []
    for d in days(weekdays_only=True):
        for start in sorted(rng.choice(np.arange(8, 16), int(rng.integers(1, 3)), replace=False)):
            minute = int(rng.integers(0, 4)) * 15
            unloading.append((f"{d} {start:02d}:{minute:02d}", f"{d} {start + 1:02d}:{minute:02d}"))
    ops["MT-802"] = State(batches(clock, unloading), 0.9 + wander(rng, 0.03), tank + 1.0)
    transfer = batches(clock, [(f"{d} 06:00", f"{d} 14:00") for d in days()
                               if pd.Timestamp(d).weekday() != 6])
    ops["TL-811"] = State(transfer, 0.9 + wander(rng, 0.03), tank + 0.5,
                          level=wander(rng, 0.3, 24))
    recycle = 0.8 + wander(rng, 0.04)
    ops["TL-812"] = State(np.ones(clock.n, bool), recycle, 44.0 + wander(rng, 1.0),
                          speed=0.55 + 0.45 * recycle)

    ambient = 13.0 - 4.0 * mf + 2.0 * daily(15) + wander(rng, 0.5, 6)
    sphere_level = 0.8 * np.cos(2 * np.pi * mf * 31 / 7) + wander(rng, 0.1, 12)
    loading = [(f"{d} 07:00", f"{d} 10:30") for d in days(weekdays_only=True)]
    loading += [(f"{d} 13:00", f"{d} 16:00") for d in days(weekdays_only=True)]
    odd = [w for w in loading if int(w[0][8:10]) % 2 == 1]
    even = [w for w in loading if int(w[0][8:10]) % 2 == 0]
    for pump_id, windows in (("LP-901A", odd), ("LP-901B", even)):
        ops[pump_id] = State(batches(clock, windows), 0.97 + wander(rng, 0.02), ambient,
                             level=sphere_level)
    ops["LP-902"] = State(batches(clock, [(f"{d} 09:00", f"{d} 12:00")
                                          for d in days(weekdays_only=True)]),
                          1.0 + wander(rng, 0.02), ambient - 1.0, level=wander(rng, 0.4, 24))
    return ops


# ----------------------------------------------------------------------------- vessel-fed pumps
VESSEL_STREAM = 1000  # the vessel pumps draw from their own random stream, not the main one
LOAD_REJECTIONS = (  # local time, fall of the deaerator pressure (absolute), outcome
    ("2026-10-06 14:22", 0.28, "below guidance for ~2 min"),
    ("2026-10-15 03:47", 0.29, "below guidance for ~2 min"),
    ("2026-10-27 19:05", 0.30, "below guidance and below NPSH3 for ~2 min"))


def saturation_temperature(p_abs: np.ndarray) -> np.ndarray:
    """Saturation temperature of water (degC) at the absolute pressure p_abs (Pa)."""
    grid = np.arange(90.0, 200.0, 0.01) + 273.15
    return np.interp(p_abs, PropsSI("P", "T", grid, "Q", 0, "Water"), grid) - 273.15


def load_rejections(clock: Clock) -> np.ndarray:
    """Fraction by which the deaerator pressure has fallen: within ~5 min, back over ~1 h."""
    dip = np.zeros(clock.n)
    for when, depth, outcome in LOAD_REJECTIONS:
        t = (clock.seconds - clock.seconds_at(when)) / 60.0  # minutes since the rejection
        shape = (1.0 - np.exp(-np.clip(t, 0.0, None) / 2.0)) * np.exp(
            -np.clip(t - 5.0, 0.0, None) / 18.0)
        dip = np.maximum(dip, np.where(t >= 0, depth * shape, 0.0))
        end = (local_time(when) + pd.Timedelta(minutes=60)).strftime("%Y-%m-%d %H:%M")
        planted("BF-311", "load rejection: deaerator pressure transient", "DA310.PRESS", when,
                end, f"deaerator pressure falls {100 * depth:.0f} % (absolute) within ~5 min while "
                "the suction temperature lags (3 min dead time, 4.5 min lag): NPSHa/NPSH3 "
                f"from ~6 to {outcome}")
    return dip


def hotwell_drawdown(clock: Clock) -> np.ndarray:
    """CD-412: hotwell level drawn down (spill valve stuck open), m below normal."""
    knots = ["2026-10-21 10:40", "2026-10-21 11:30", "2026-10-21 15:20", "2026-10-21 16:30"]
    planted("CD-412", "hotwell level drawn down", "HW410.LEVEL", knots[0], knots[-1],
            "level ~1450 -> ~550 mm: margin below guidance for about 4.5 h, never below NPSH3")
    return np.interp(clock.seconds, [clock.seconds_at(k) for k in knots], [0.0, 0.92, 0.85, 0.0])


def low_water(clock: Clock) -> np.ndarray:
    """RW-504: river low-water period (dry spell), m below the usual tide levels."""
    knots = ["2026-10-08 18:00", "2026-10-09 06:00", "2026-10-10 20:00", "2026-10-11 08:00"]
    planted("RW-504", "low water", "JETTY.LEVEL", knots[0], knots[-1],
            "river 1.4 m below its usual level: margin below guidance around the low tides, "
            "never below NPSH3, no suction lift")
    return np.interp(clock.seconds, [clock.seconds_at(k) for k in knots], [0.0, 1.4, 1.4, 0.0])


def vessel_operation(clock: Clock, ops: dict[str, State]) -> dict[str, State]:
    """Operation of the vessel-fed pumps (own random stream; the river temperature is shared)."""
    rng = np.random.default_rng([RANDOM_STATE, VESSEL_STREAM])
    wander, daily, n = clock.wander, clock.daily, clock.n
    always = np.ones(n, bool)
    out: dict[str, State] = {}

    # unit 2: deaerator DA-310 held at ~5.7-6.2 bar g; on a load rejection the pressure falls,
    # the stored water flashes and the water in the suction line stays hot for minutes
    unit2 = np.clip(0.86 + 0.08 * daily(13) - 0.06 * clock.weekend + wander(rng, 0.03), 0.6, 1.0)
    dip = load_rejections(clock)
    p_deaerator = (P_ATM_STANDARD + 1e5 * (5.2 + 0.9 * unit2 + wander(rng, 0.02)))
    p_deaerator = p_deaerator * (1.0 - dip)
    saturated = saturation_temperature(p_deaerator)
    delayed = np.r_[np.full(3, saturated[0]), saturated[:-3]]  # 3 min dead time
    out["BF-311"] = State(always, 0.95 * unit2 * (1.0 - 1.6 * dip), lag(delayed, 4.5) - 0.4,
                          level=1.6 + wander(rng, 0.05) + 0.4 * dip, surface_pressure=p_deaerator)

    # unit 2 condenser hotwell: saturated, level held at ~1450 mm
    hotwell = 36.0 + 6.0 * (unit2 - 0.6) / 0.4 + wander(rng, 0.3)
    level = 1.45 + wander(rng, 0.03, 2) - hotwell_drawdown(clock)
    out["CD-412"] = State(always, 0.95 * unit2 * (1.0 - 0.8 * dip), hotwell, level=level)

    # tidal jetty: two tides a day (12.42 h and 12 h constituents: springs and neaps)
    hours = clock.seconds / 3600.0 - clock.seconds_at("2026-10-09 12:00") / 3600.0
    tide = 0.9 * np.cos(2 * np.pi * hours / 12.42) + 0.25 * np.cos(2 * np.pi * hours / 12.0)
    jetty = 4.82 + tide + wander(rng, 0.05, 6) - low_water(clock)  # m above the gauge zero
    load = np.clip(0.98 + 0.02 * daily(14) + wander(rng, 0.01), 0.9, 1.04)
    out["RW-504"] = State(always, load, ops["RW-501"].temp + 0.3, level=jetty)

    # demineralised water forwarding: constant discharge pressure, so the speed stays up when
    # the demand falls to ~30 % of BEP flow at night (22:00-05:30), below the minimum flow
    night = lag(((clock.hour >= 22.0) | (clock.hour < 5.5)).astype(float), 15.0)
    load = ((0.92 + 0.05 * daily(14) + wander(rng, 0.02)) * (1.0 - night)
            + (0.30 + wander(rng, 0.006)) * night)
    speed = 0.985 - 0.055 * night + wander(rng, 0.004)
    tank = 4.0 + 1.3 * np.sin(2 * np.pi * clock.seconds / (27 * 3600.0)) + wander(rng, 0.1, 6)
    out["DM-151"] = State(always, load, 18.0 + 1.0 * daily(15) + wander(rng, 0.2), speed=speed,
                          level=tank)
    planted("DM-151", "low flow at night", "DM151.FLOW", "2026-10-01 00:00", "2026-11-01 00:00",
            "~30 % of BEP flow 22:00-05:30 every night at ~93 % speed, below the minimum stable "
            "flow (35 % of BEP at rated speed, scaled with speed): hours below minimum flow")

    # CD-413, the assist pump on CD-412's suction header: weekday mornings (the load ramp) at
    # ~45 % of BEP flow; while both run the header carries both flows, and its loss (k Q^2 at
    # the header's total flow) is taken from both pumps' NPSHa
    assist = batches(clock, [(f"{d} {ASSIST_413[0]}", f"{d} {ASSIST_413[1]}")
                             for d in days(weekdays_only=True)])
    out["CD-413"] = State(assist, 0.45 + wander(rng, 0.02), hotwell, level=level)
    bep = cell_si(BY_ID["CD-412"].bep_flow, "m3/h") / 3600.0  # both pumps: 180 m3/h
    q412 = np.where(out["CD-412"].run, out["CD-412"].load, 0.0) * bep
    q413 = np.where(assist, out["CD-413"].load, 0.0) * bep
    out["CD-412"] = replace(out["CD-412"], line_others=q413)
    out["CD-413"] = replace(out["CD-413"], line_others=q412)
    planted("CD-413", "assist pump on the shared suction header HW410-SUCTION", "CD413.RUN",
            f"2026-10-01 {ASSIST_413[0]}", "2026-11-01 00:00",
            f"runs with CD-412 on weekdays {ASSIST_413[0]}-{ASSIST_413[1]} at ~45 % of BEP "
            "flow: the header's loss rises from ~0.2 m (CD-412 alone) to ~0.6 m for both pumps")
    return out


# ----------------------------------------------------------------------------- refrigeration plant
REFRIGERATION_STREAM = 2000  # own random stream again: the pumps above keep their numbers
RECEIVER_PULL_DOWN = ("2026-10-20 13:20", "2026-10-20 15:20", "2026-10-20 16:20")
PULL_DOWN_K = 5.5  # fall of the receiver's saturation temperature over the pull-down, K
LIQUID_LAG_MIN = 25.0  # the liquid in the receiver and suction line cools by flashing, lagging


def receiver_pull_down(clock: Clock) -> np.ndarray:
    """RT-951: receiver pressure pulled down (equalising valve to the compressor suction left
    open); the fall of the receiver's saturation temperature, K (positive = colder)."""
    start, closed, recovered = RECEIVER_PULL_DOWN
    planted("RT-951", "receiver pressure pulled down", "RT951.SUCT_PRESS", start, recovered,
            f"receiver saturation temperature pulled down {PULL_DOWN_K:.1f} K (about 1.4 bar) over "
            "2 h while the liquid at the pump cools ~25 min behind: margin below guidance for "
            "about 1.5 h in the afternoon, never below NPSH3; back to ~2 after the valve is shut")
    knots = [clock.seconds_at(k) for k in RECEIVER_PULL_DOWN]
    return np.interp(clock.seconds, knots, [0.0, PULL_DOWN_K, 0.0])


def refrigeration_operation(clock: Clock) -> dict[str, State]:
    """Operation of the refrigeration plant's pumps (own random stream)."""
    rng = np.random.default_rng([RANDOM_STATE, REFRIGERATION_STREAM])
    wander, daily, mf = clock.wander, clock.daily, clock.month_fraction
    out: dict[str, State] = {}

    # glycol loop (ethylene glycol 30 % by mass), pressurised by an expansion vessel; the pump
    # sits on the warm return, 4-12 degC, cooler as the month goes on; never below +3 degC
    loop = np.clip(0.72 + 0.12 * daily(14) - 0.06 * clock.weekend + wander(rng, 0.02),
                   0.5, 0.95)
    glycol = np.clip(10.5 - 3.5 * mf + 1.2 * daily(15) + wander(rng, 0.3), 3.0, None)
    out["GL-121"] = State(np.ones(clock.n, bool), loop, glycol, speed=0.5 + 0.5 * loop)

    # refrigerant transfer from receiver RV-950 (liquid at its bubble point in the plant room,
    # 14-20 degC), weekdays 07:00-17:00; static head over the bubble pressure
    transfers = batches(clock, [(f"{d} 07:00", f"{d} 17:00") for d in days(weekdays_only=True)])
    receiver = 17.5 - 2.5 * mf + 1.0 * daily(16) + wander(rng, 0.25)
    pull_down = receiver_pull_down(clock)
    out["RT-951"] = State(transfers, 0.9 + wander(rng, 0.02), receiver - lag(pull_down,
                          LIQUID_LAG_MIN), source_temp=receiver - pull_down,
                          level=wander(rng, 0.05, 12))
    return out


# ----------------------------------------------------------------------------- curves and physics
CURVE_FRACTIONS_SI = (0.25, 0.4, 0.55, 0.7, 0.85, 1.0, 1.15, 1.3)
CURVE_FRACTIONS_US = (0.25, 0.5, 0.75, 1.0, 1.15, 1.3)
GPM = TO_SI["gpm"]


def curve_table(p: Pump) -> pd.DataFrame:
    """Vendor NPSH3 curve at rated speed, rounded as a data sheet would print it."""
    bep = cell_si(p.bep_flow, "m3/h")
    npsh3_bep_ft = (p.rated_rpm * np.sqrt(bep / GPM / p.eyes) / p.suction_specific_speed) ** (4 / 3)
    a, k = p.curve_shape
    us = p.units[3] == "gpm"
    rows = []
    for x in CURVE_FRACTIONS_US if us else CURVE_FRACTIONS_SI:
        head_ft = npsh3_bep_ft * (a + (1 - a) * x**k)
        if us:
            q = round(x * bep / GPM, 1 if bep / GPM < 100 else 0)
            rows.append((p.curve_id, q, "gpm", round(head_ft, 1), "ft"))
        else:
            rows.append((p.curve_id, round(x * bep, 2 if bep < 20 else 1), "m3/h",
                         round(head_ft * 0.3048, 2), "m"))
    return pd.DataFrame(rows, columns=["curve_id", "flow", "flow_unit", "npsh3", "npsh3_unit"])


def curve_si(p: Pump) -> tuple[np.ndarray, np.ndarray]:
    """The rounded curve as (flow / BEP flow, NPSH3 in m)."""
    t = curve_table(p)
    flow = t["flow"].to_numpy() * np.where(t["flow_unit"] == "gpm", GPM, 1.0)
    head = t["npsh3"].to_numpy() * np.where(t["npsh3_unit"] == "ft", 0.3048, 1.0)
    return flow / cell_si(p.bep_flow, "m3/h"), head


def fluid_tables(fluid: str, temps: np.ndarray, vapour_pressure: str = ""
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Saturated-liquid vapour pressure (Pa) and density (kg/m3) on a fine temperature grid.

    A pure fluid: quality 0; a pseudo-pure blend (R407C): its bubble point. A CoolProp
    incompressible solution (INCOMP::...) has no vapour pressure in CoolProp: with
    ``vapour_pressure = "water"`` water's (the conservative bound the tool uses, whose table starts
    at the triple point), and the density of the solution at 101325 Pa, as the tool takes it.
    """
    if fluid.startswith("INCOMP::"):
        assert vapour_pressure == "water", "the demo's incompressible liquids use water's p_v"
        lo = max(np.nanmin(temps) - 2.0, 0.02)
        grid = np.arange(lo, np.nanmax(temps) + 2.0, 0.02) + 273.15
        pv = PropsSI("P", "T", grid, "Q", 0, "Water")
        rho = PropsSI("D", "T", grid, "P", np.full(grid.size, 101325.0), fluid)
        return grid - 273.15, pv, rho
    grid = np.arange(np.nanmin(temps) - 2.0, np.nanmax(temps) + 2.0, 0.02) + 273.15
    pv, rho = (PropsSI(what, "T", grid, "Q", 0, fluid) for what in ("P", "D"))
    return grid - 273.15, pv, rho


@dataclass
class Truth:
    run: np.ndarray
    npsha: np.ndarray
    npsh3: np.ndarray  # NaN where off curve or stopped
    required: np.ndarray  # guidance: max(ratio * NPSH3, NPSH3 + margin)
    suction_specific_speed: float
    below_min: np.ndarray  # running below the minimum flow (register min_stable/thermal_min)


RATED_HEAD_M = {  # pump head at BEP: only for the discharge pressure tags, which the tool ignores
    "CWP-1800": 28, "CWP-650": 42, "CWP-320": 35, "DHP-900": 65, "DHB-240": 48, "BFP-160": 1250,
    "CEP-220": 150, "DOS-4.5": 45, "DOS-1.2": 55, "RWP-2200": 48, "JKY-25": 105, "FWP-1500": 95,
    "BSC-35": 24, "BSH-20": 18, "MTP-60": 70, "MTU-40": 35, "TLT-180": 55, "TLR-400": 38,
    "LPB-80": 140, "LPP-300": 120, "BFB-420": 180, "CEV-180": 160, "RWV-8000": 35, "DMF-60": 60,
    "GLC-150": 32, "RTP-40": 60,
}
POLICY = {  # application: [(min S, max S, ratio, margin m)] as in configs/demo_plant.toml
    "petroleum": [(0, np.inf, 1.1, 1.0)],
    "chemical": [(0, 11000, 1.1, 0.6), (11000, np.inf, 1.2, 1.0)],
    "power": [(0, 7500, 1.1, 0.6), (7500, np.inf, 1.2, 1.0)],
    "water": [(0, 7500, 1.1, 0.6), (7500, np.inf, 1.2, 1.0)],
    "building": [(0, 7500, 1.05, 0.0), (7500, np.inf, 1.1, 0.6)],
}
#: Suction-energy rules of configs/demo_plant.toml (ratio, margin m) by class, and where high
#: suction energy begins for single- and double-suction impellers (De in x rpm x S x SG).
ENERGY_RULES = {"power": {"very_high": (2.0, 1.0), "high": (1.3, 1.0)},
                "water": {"very_high": (2.0, 1.0), "high": (1.3, 1.0)}}
HIGH_ENERGY = {1: 160e6, 2: 120e6}


def npsh3_and_guidance(p: Pump, st: State, load: np.ndarray, speed: np.ndarray):
    """NPSH3 at the running point (NaN off curve or stopped), the guidance and S (US units)."""
    fractions, heads = curve_si(p)
    npsh3_bep = float(np.interp(1.0, fractions, heads))
    # register k, else the conservative default: 1.5 below rated speed, 2 above
    exponent = float(p.exponent) if p.exponent else np.where(speed < 1.0, 1.5, 2.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        at_rated = load / speed
        npsh3 = np.interp(at_rated, fractions, heads) * speed**exponent
    npsh3[~st.run | (at_rated < fractions[0]) | (at_rated > fractions[-1])] = np.nan
    bep = cell_si(p.bep_flow, "m3/h")
    s_us = p.rated_rpm * np.sqrt(bep / GPM / p.eyes) / (npsh3_bep / 0.3048) ** 0.75
    ratio, margin = next((r, m) for lo, hi, r, m in POLICY[p.application] if lo <= s_us < hi)
    if p.eye_diameter:  # suction energy, water's SG taken as 1 for the demo's water pumps
        energy = cell_si(p.eye_diameter, "mm") / 0.0254 * p.rated_rpm * s_us
        high = HIGH_ENERGY[p.eyes]
        grade = "very_high" if energy >= 1.5 * high else "high" if energy >= high else "low"
        ratio, margin = ENERGY_RULES.get(p.application, {}).get(grade, (ratio, margin))
    return npsh3, np.maximum(ratio * npsh3, npsh3 + margin), s_us


def below_min_flow(p: Pump, st: State, load: np.ndarray, speed: np.ndarray) -> np.ndarray:
    """Running below the minimum flow: the larger of the minimum stable flow (scaled with
    speed) and the thermal minimum flow."""
    bep = cell_si(p.bep_flow, "m3/h")
    q_min = np.zeros(len(load))
    if p.min_stable_flow:
        q_min = np.maximum(q_min, cell_si(p.min_stable_flow, "m3/h") * speed)
    if p.thermal_min_flow:
        q_min = np.maximum(q_min, cell_si(p.thermal_min_flow, "m3/h"))
    return st.run & (load * bep < q_min)


def simulate(p: Pump, st: State, clock: Clock, baro: np.ndarray, rng: np.random.Generator):
    """Return the process truth and the transmitter readings (register units) of one pump."""
    if p.vessel:
        return simulate_vessel(p, st, clock, baro, rng)
    source_temp = st.temp if st.source_temp is None else st.source_temp
    grid, pv_grid, rho_grid = fluid_tables(p.fluid, np.r_[st.temp, source_temp, p.design_temp],
                                           p.vapour_pressure)
    pv, rho = np.interp(st.temp, grid, pv_grid), np.interp(st.temp, grid, rho_grid)
    pv_d, rho_d = np.interp(p.design_temp, grid, pv_grid), np.interp(p.design_temp, grid, rho_grid)
    bep = cell_si(p.bep_flow, "m3/h")
    z, bore = cell_si(p.tap_elevation, "m"), cell_si(p.tap_bore, "mm")
    fractions, heads = curve_si(p)
    npsh3_bep = float(np.interp(1.0, fractions, heads))
    v_bep = bep / 3600 / (np.pi / 4 * bore**2)
    base_design = pv_d if p.source == "saturated" else P_ATM_STANDARD
    head = (p.design_ratio * npsh3_bep - v_bep**2 / (2 * G) - z + p.friction
            - (base_design - pv_d) / (rho_d * G))  # static head above the base pressure, m
    load = np.where(st.run, st.load, 0.0)
    speed = np.where(st.run, st.speed, 0.0)
    base = np.interp(source_temp, grid, pv_grid) if p.source == "saturated" else baro
    p_abs = base + rho * G * (head + st.level - (p.friction + st.extra_loss) * load**2)
    velocity = load * v_bep
    npsha = (p_abs - pv) / (rho * G) + velocity**2 / (2 * G) + z
    npsh3, required, s_us = npsh3_and_guidance(p, st, load, speed)
    truth = Truth(st.run, npsha, npsh3, required, s_us, below_min_flow(p, st, load, speed))
    return (truth, *recorded(transmitters(p, st, clock, rng, p_abs, rho, load, speed, baro)))


def transmitters(p: Pump, st: State, clock: Clock, rng: np.random.Generator, p_abs: np.ndarray,
                 rho: np.ndarray, load: np.ndarray, speed: np.ndarray, baro: np.ndarray) -> dict:
    """Readings in register units by tag: (values, resolution, deadband of by-exception)."""
    bep = cell_si(p.bep_flow, "m3/h")
    p_unit, reference, t_unit, q_unit = p.units
    noise_pa = PRESSURE_NOISE_PA[p_unit]
    offset = baro if reference == "gauge" else 0.0
    reading = p_abs + rng.normal(0, noise_pa, clock.n) - offset
    pump_head = rho * G * RATED_HEAD_M[p.curve_id] * (1.2 * speed**2 - 0.2 * load**2)
    discharge = p_abs + pump_head + rng.normal(0, 3 * noise_pa, clock.n) - offset
    temp = st.temp + rng.normal(0, 0.03, clock.n)
    q_factor = 1.0 / TO_SI[q_unit]
    flow = load * bep + np.where(st.run, rng.normal(0, 0.004 * bep, clock.n), 0.0)
    if not p.run_tag or p.area == "cooling water":  # meters without low-flow cut-off
        flow = np.where(st.run, flow, rng.normal(0, 0.004 * bep, clock.n))
    readings = {
        p.tag("SUCT_PRESS"): (reading / PA_PER[p_unit], RESOLUTION[p_unit],
                              1.5 * noise_pa / PA_PER[p_unit]),
        p.tag("DISCH_PRESS"): (discharge / PA_PER[p_unit], RESOLUTION[p_unit],
                               4.5 * noise_pa / PA_PER[p_unit]),
        p.tag("SUCT_TEMP"): (temp * 1.8 + 32 if t_unit == "degF" else temp,
                             0.01 if p.fine_temperature else RESOLUTION[t_unit], -1.0),
        p.tag("FLOW"): (flow * q_factor, 0.1 if q_unit == "gpm" and bep / GPM < 100
                        else RESOLUTION[q_unit], 0.01 * bep * q_factor),
    }
    if p.speed_tag:
        rpm = speed * p.rated_rpm + np.where(st.run, rng.normal(0, 1.5, clock.n), 0.0)
        readings[p.tag("SPEED")] = (rpm, 1.0, 4.0)
    if p.run_tag:
        readings[p.tag("RUN")] = (st.run.astype(float), 1.0, 0.5)
    return readings


def recorded(readings: dict) -> tuple[dict, dict, dict]:
    """Values rounded to the transmitters' resolution, their decimals and deadbands by tag."""
    measured = {tag: np.round(v / res) * res + 0.0 for tag, (v, res, _) in readings.items()}
    decimals = {tag: max(0, -int(np.floor(np.log10(res) + 1e-9)))
                for tag, (_, res, _) in readings.items()}
    deadbands = {tag: band for tag, (_, _, band) in readings.items()}
    return measured, decimals, deadbands


def line_loss(v: Vessel, flow: np.ndarray, rho: np.ndarray, mu: np.ndarray) -> np.ndarray:
    """Suction-line loss (m) at the flow (m3/s): k Q^2 from the design point, or Darcy-Weisbach
    with the Colebrook friction factor (plain fixed-point iteration)."""
    if v.loss_point[0]:
        q_design = cell_si(v.loss_point[1], "m3/h") / 3600.0
        return cell_si(v.loss_point[0], "m") / q_design**2 * flow**2
    length, bore = cell_si(v.line[0], "m"), cell_si(v.line[1], "mm")
    relative = cell_si(v.line[2], "mm") / bore
    speed = flow / (np.pi / 4 * bore**2)
    reynolds = np.maximum(rho * speed * bore / mu, 1.0)
    f = np.full(len(flow), 0.02)
    for _ in range(60):
        f = (-2.0 * np.log10(relative / 3.7 + 2.51 / (reynolds * np.sqrt(f)))) ** -2
    return (f * length / bore + float(v.line[3])) * speed**2 / (2 * G)


def simulate_vessel(p: Pump, st: State, clock: Clock, baro: np.ndarray,
                    rng: np.random.Generator):
    """Truth and readings of a vessel-fed pump:
    NPSHa = (p_surface - p_v) / (rho g) + level + zero elevation - line loss."""
    v = p.vessel
    grid, pv_grid, rho_grid = fluid_tables(p.fluid, st.temp)
    pv, rho = np.interp(st.temp, grid, pv_grid), np.interp(st.temp, grid, rho_grid)
    mu = np.interp(st.temp, grid, PropsSI("V", "T", grid + 273.15, "Q", 0, p.fluid))
    bep = cell_si(p.bep_flow, "m3/h")
    load = np.where(st.run, st.load, 0.0)
    speed = np.where(st.run, st.speed, 0.0)
    if v.surface == "saturated":
        pressure_head = np.zeros(clock.n)  # the surface is at the vapour pressure
        p_surface = pv
    else:
        p_surface = baro if v.surface == "open" else st.surface_pressure
        pressure_head = (p_surface - pv) / (rho * G)
    # a shared suction header carries the other pumps' flows too (State.line_others)
    loss = line_loss(v, load * bep / 3600.0 + st.line_others, rho, mu)
    npsha = pressure_head + st.level + cell_si(v.zero_elevation, "m") - loss
    npsh3, required, s_us = npsh3_and_guidance(p, st, load, speed)
    truth = Truth(st.run, npsha, npsh3, required, s_us, below_min_flow(p, st, load, speed))
    p_suction = pv + rho * G * npsha  # absolute, at the pump (velocity head neglected)
    readings = transmitters(p, st, clock, rng, p_suction, rho, load, speed, baro)
    del readings[p.tag("SUCT_PRESS")]  # vessel-fed: no suction pressure transmitter
    unit = v.level_unit
    level = (st.level + rng.normal(0, 0.004, clock.n)) / TO_SI[unit]
    readings[p.tag("LEVEL")] = (level, RESOLUTION[unit], 0.01 / TO_SI[unit])
    if v.surface == "pressure":
        gauge = p_surface + rng.normal(0, 100.0, clock.n) - baro
        readings[p.tag("VESSEL_PRESS")] = (gauge / PA_PER[v.pressure_unit],
                                           RESOLUTION[v.pressure_unit],
                                           150.0 / PA_PER[v.pressure_unit])
    return (truth, *recorded(readings))


def barometer(clock: Clock, rng: np.random.Generator) -> tuple[np.ndarray, pd.DataFrame]:
    """True station pressure (Pa) and the 10-minute barometer records (hPa) with a dropout."""
    weather = 800.0 * np.sin(2 * np.pi * clock.month_fraction * 31 / 5.3) + clock.wander(
        rng, 450.0, 12)
    true_pa = P_ATM_STANDARD + 150.0 + weather
    every10 = np.arange(0, clock.n, 10)
    hpa = np.round((true_pa[every10] + rng.normal(0, 5.0, every10.size)) / 100.0, 1) + 0.0
    start, end = "2026-10-17 06:10", "2026-10-18 20:40"
    keep = ~clock.window(start, end)[every10]
    planted("(site)", "barometer dropout", BAROMETER_TAG, start, end,
            "no barometer rows: the tool falls back to the standard atmosphere at 120 m")
    records = pd.DataFrame({"tag": BAROMETER_TAG, "time": clock.utc[every10][keep],
                            "value": hpa[keep], "quality": GOOD, "text": None})
    return true_pa, records


# ----------------------------------------------------------------------------- recording
def by_exception(values: np.ndarray, deadband: float, every: int = 1) -> np.ndarray:
    """Minutes a by-exception historian stores: on a change beyond the deadband or heartbeat."""
    keep, last_value, last_minute = [], np.nan, -HEARTBEAT_MIN
    for minute in range(0, values.size, every):
        value = values[minute]
        if (deadband < 0 or minute - last_minute >= HEARTBEAT_MIN
                or abs(value - last_value) > deadband):
            keep.append(minute)
            last_value, last_minute = value, minute
    return np.asarray(keep, dtype=int)


def long_records(measured: dict, deadbands: dict, clock: Clock,
                 rng: np.random.Generator) -> pd.DataFrame:
    frames = []
    for tag, values in measured.items():
        temperature = tag.endswith("SUCT_TEMP")
        minutes = by_exception(values, deadbands[tag], every=5 if temperature else 1)
        jitter = pd.to_timedelta(rng.integers(0, 50, minutes.size), unit="s")
        frames.append(pd.DataFrame({"tag": tag, "time": clock.utc[minutes] + jitter,
                                    "value": values[minutes], "quality": GOOD, "text": None}))
    return pd.concat(frames, ignore_index=True)


# ----------------------------------------------------------------------------- data-quality events
def in_window(times: pd.Series | pd.DatetimeIndex, start: str, end: str) -> np.ndarray:
    lo, hi = local_time(start), local_time(end)
    return np.asarray((times >= lo) & (times < hi))


def pump_of(tag: str) -> str:
    return next((p.pump_id for p in PUMPS if tag.partition(".")[0] == p.stem), "(shared)")


def transmitter_dropout(measured: dict, tag: str, clock: Clock, start: str, end: str) -> None:
    measured[tag][clock.window(start, end)] = np.nan
    planted(pump_of(tag), "transmitter dropout", tag, start, end, "empty cells: no data")


def frozen_transmitter(measured: dict, tag: str, clock: Clock, start: str, end: str) -> None:
    window = clock.window(start, end)
    measured[tag][window] = measured[tag][np.argmax(window)]
    planted(pump_of(tag), "frozen transmitter", tag, start, end,
            "identical value while running: bad data after 'frozen_after' (6 h)")


def text_stretch(texts: dict, tag: str, clock: Clock, start: str, end: str, word: str) -> None:
    assert word in TEXT_WORDS
    texts.setdefault(tag, []).append((clock.window(start, end), word))
    planted(pump_of(tag), f"text '{word}'", tag, start, end, "word instead of a number")


def text_scatter(texts: dict, tag: str, clock: Clock, rng: np.random.Generator, count: int,
                 word: str, start: str = "2026-10-01", end: str = "2026-11-01") -> None:
    assert word in TEXT_WORDS
    mask = np.zeros(clock.n, bool)
    mask[rng.choice(np.flatnonzero(clock.window(start, end)), count, replace=False)] = True
    texts.setdefault(tag, []).append((mask, word))
    planted(pump_of(tag), f"text '{word}' in {count} single cells", tag, start, end,
            "word instead of a number")


def long_dropout(records: pd.DataFrame, tag: str, start: str, end: str) -> pd.DataFrame:
    planted(pump_of(tag), "transmitter dropout", tag, start, end, "no rows: no data")
    return records[~((records["tag"] == tag) & in_window(records["time"], start, end))]


def bad_quality(records: pd.DataFrame, tag: str, start: str, end: str, word: str,
                rng: np.random.Generator) -> None:
    """Mark a stretch with a bad quality word; the values are held or erratic."""
    assert word in BAD_QUALITY
    rows = (records["tag"] == tag) & in_window(records["time"], start, end)
    if word == "suspect":
        records.loc[rows, "value"] += np.round(rng.normal(0, 4.0, int(rows.sum())), 2)
    else:
        before = records.loc[(records["tag"] == tag) & ~rows
                             & (records["time"] < local_time(start)), "value"]
        records.loc[rows, "value"] = before.iloc[-1]
    records.loc[rows, "quality"] = word
    planted(pump_of(tag), f"quality '{word}'", tag, start, end, "bad quality: no data")


def long_text(records: pd.DataFrame, tag: str, word: str, start: str, end: str,
              rng: np.random.Generator | None = None, count: int = 0) -> None:
    assert word in TEXT_WORDS
    rows = np.flatnonzero((records["tag"] == tag) & in_window(records["time"], start, end))
    if count:
        rows = rng.choice(rows, count, replace=False)
    records.loc[records.index[rows], ["text", "quality"]] = [word, "suspect"]
    what = f"text '{word}'" + (f" in {count} single rows" if count else "")
    planted(pump_of(tag), what, tag, start, end, "word instead of a number, quality 'suspect'")


def duplicates_and_disorder(records: pd.DataFrame, rng: np.random.Generator) -> pd.DataFrame:
    """Four exact duplicate rows on each of 10-09 and 10-19; six rows of 10-20 written ~40 late."""
    records = records.reset_index(drop=True)
    picks = [rng.choice(np.flatnonzero(in_window(records["time"], d, d + " 23:59")), 4, False)
             for d in ("2026-10-09", "2026-10-19")]
    order = np.sort(np.r_[np.arange(len(records)), np.concatenate(picks)])
    first = int(np.flatnonzero(in_window(records["time"], "2026-10-20 12:00", "2026-10-21"))[0])
    order = list(order)
    at = order.index(first)
    block = order[at:at + 6]
    del order[at:at + 6]
    order[at + 40:at + 40] = block
    for day in ("2026-10-09", "2026-10-19"):
        planted("TL-811/TL-812", "4 duplicated rows", "(toluene file)", day, day + " 23:59",
                "exact duplicate rows: the loader must drop them")
    planted("TL-811/TL-812", "6 rows out of order", "(toluene file)", "2026-10-20 12:00",
            "2026-10-20 13:00", "rows written ~40 rows late: the loader must sort")
    return records.iloc[order]


def wide_data_faults(measured: dict, clock: Clock, rng: np.random.Generator) -> dict:
    """Dropouts, a frozen transmitter and text words in the wide-layout data; returns the texts."""
    texts: dict = {}
    transmitter_dropout(measured, "CW101A.FLOW", clock, "2026-10-21 02:00", "2026-10-21 08:30")
    transmitter_dropout(measured, "DH201A.SUCT_TEMP", clock, "2026-10-05 10:00",
                        "2026-10-05 14:00")
    frozen_transmitter(measured, "CW102A.SUCT_PRESS", clock, "2026-10-20 08:00",
                       "2026-10-22 07:30")
    text_scatter(texts, "CW101B.SUCT_PRESS", clock, rng, 12, "not-avail", "2026-10-12",
                 "2026-10-18")
    text_scatter(texts, "CH701A.SUCT_TEMP", clock, rng, 30, "not-avail")
    text_stretch(texts, "CH702.SUCT_PRESS", clock, "2026-10-13 09:00", "2026-10-13 15:30",
                 "xmtr-fault")
    text_stretch(texts, "RW501.SUCT_TEMP", clock, "2026-10-20 22:00", "2026-10-21 01:00",
                 "no-signal")
    text_scatter(texts, "RW503.FLOW", clock, rng, 25, "not-avail")
    return texts


def long_data_faults(long: dict[str, pd.DataFrame], rng: np.random.Generator) -> None:
    """Dropout, bad-quality stretches and text words in the long-layout records (in place)."""
    long["boiler_feed"] = long_dropout(long["boiler_feed"], "BF301B.SUCT_PRESS",
                                       "2026-10-22 09:00", "2026-10-22 16:30")
    bad_quality(long["boiler_feed"], "BF301A.SUCT_TEMP", "2026-10-06 13:00", "2026-10-06 19:00",
                "suspect", rng)
    bad_quality(long["lpg"], "LP901A.SUCT_PRESS", "2026-10-23 06:30", "2026-10-23 11:00",
                "link-down", rng)
    bad_quality(long["methanol"], "MT801.FLOW", "2026-10-26 10:00", "2026-10-26 14:00", "held", rng)
    long_text(long["methanol"], "MT802.SUCT_TEMP", "not-avail", "2026-10-01", "2026-11-01", rng, 15)
    long_text(long["toluene"], "TL811.SUCT_PRESS", "xmtr-fault", "2026-10-15 07:00",
              "2026-10-15 09:00")


# ----------------------------------------------------------------------------- writers
def write_gzip(path: Path, text: str) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(gzip.compress(text.encode(), compresslevel=9, mtime=0))


def cells(values: np.ndarray, decimals: int) -> np.ndarray:
    out = np.char.mod(f"%.{decimals}f", np.round(values, decimals) + 0.0).astype(object)
    out[np.isnan(values)] = ""
    return out


def write_wide_csv(path: Path, clock: Clock, rows: np.ndarray, columns: dict, decimals: dict,
                   texts: dict) -> None:
    frame = {"timestamp": clock.local[rows].strftime("%Y-%m-%d %H:%M:%S")}
    for tag, values in columns.items():
        column = cells(values, decimals[tag])
        for mask, word in texts.get(tag, []):
            column[mask] = word
        frame[tag] = column[rows]
    write_gzip(path, pd.DataFrame(frame).to_csv(index=False, lineterminator="\n"))


def utc_array(times) -> pa.Array:
    naive = pd.DatetimeIndex(times).tz_convert("UTC").tz_localize(None)
    return pa.array(naive.to_numpy().astype("datetime64[ms]"), pa.timestamp("ms", tz="UTC"))


def write_parquet(path: Path, table: pa.Table) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    pq.write_table(table, path, compression="zstd")


def write_wide_parquet(path: Path, clock: Clock, columns: dict) -> None:
    arrays = {"time_utc": utc_array(clock.utc)}
    arrays.update({tag: pa.array(values, pa.float64()) for tag, values in columns.items()})
    write_parquet(path, pa.table(arrays))


def write_long_parquet(path: Path, records: pd.DataFrame) -> None:
    records = records.sort_values(["tag", "time"], kind="stable")
    write_parquet(path, pa.table({
        "tag": pa.array(records["tag"].tolist(), pa.string()),
        "time": utc_array(records["time"]),
        "value": pa.array(records["value"].to_numpy(float), pa.float64()),
        "quality": pa.array(records["quality"].tolist(), pa.string()),
    }))


def iso_times(times: pd.Series, utc: bool) -> np.ndarray:
    index = pd.DatetimeIndex(times)
    if utc:
        return np.asarray(index.tz_convert("UTC").strftime("%Y-%m-%dT%H:%M:%SZ"), dtype=object)
    local = index.tz_convert(SITE_TZ)
    offset = local.tz_localize(None) - index.tz_convert("UTC").tz_localize(None)
    suffix = np.where(offset == pd.Timedelta(hours=2), "+02:00", "+01:00")
    return np.asarray(local.strftime("%Y-%m-%dT%H:%M:%S"), dtype=object) + suffix


def write_long_csv(path: Path, records: pd.DataFrame, decimals: dict, utc: bool = False,
                   quality: bool = True) -> None:
    values = np.empty(len(records), dtype=object)
    for tag, rows in records.groupby("tag", sort=False).indices.items():
        values[rows] = cells(records["value"].to_numpy(float)[rows], decimals[tag])
    words = records["text"].to_numpy(object)
    values = np.where(pd.isna(words), values, words)
    frame = pd.DataFrame({"tag": records["tag"].to_numpy(object),
                          "time": iso_times(records["time"], utc), "value": values})
    if quality:
        frame["quality"] = records["quality"].to_numpy(object)
    write_gzip(path, frame.to_csv(index=False, lineterminator="\n"))


def register_row(p: Pump) -> dict:
    p_unit, reference, t_unit, q_unit = p.units
    v = p.vessel
    return {
        "pump_id": p.pump_id, "service": p.service, "area": p.area, "fluid": p.fluid,
        "application": p.application,
        "suction_pressure_tag": "" if v else p.tag("SUCT_PRESS"),
        "suction_pressure_unit": "" if v else p_unit,
        "suction_pressure_reference": "" if v else reference,
        "temperature_tag": p.tag("SUCT_TEMP"), "temperature_unit": t_unit,
        "flow_tag": p.tag("FLOW"), "flow_unit": q_unit,
        "speed_tag": p.tag("SPEED") if p.speed_tag else "",
        "speed_unit": "rpm" if p.speed_tag else "",
        "run_tag": p.tag("RUN") if p.run_tag else "",
        "tap_elevation [m]": p.tap_elevation, "tap_bore [mm]": p.tap_bore,
        # the demo's suction transmitters are close-coupled to their taps
        "pressure_reference_point": "" if v else "tap", "orientation": p.orientation,
        "impeller_eye_diameter [mm]": p.eye_diameter,
        "rated_speed [rpm]": p.rated_rpm, "bep_flow [m3/h]": p.bep_flow,
        "curve_id": p.curve_id, "npsh3_exponent": p.exponent, "impeller_eyes": p.eyes,
        "stale_limit": p.stale_limit,
        # vessel-fed pumps (empty: the suction pressure transmitter above)
        "suction_source": "vessel" if v else "",
        "level_tag": p.tag("LEVEL") if v else "", "level_unit": v.level_unit if v else "",
        "level_zero_elevation [m]": v.zero_elevation if v else "",
        "vessel_surface": v.surface if v else "",
        "vessel_pressure_tag": p.tag("VESSEL_PRESS") if v and v.pressure_unit else "",
        "vessel_pressure_unit": v.pressure_unit if v else "",
        "vessel_pressure_reference": "gauge" if v and v.pressure_unit else "",
        "line_loss_head [m]": v.loss_point[0] if v else "",
        "line_loss_flow [m3/h]": v.loss_point[1] if v else "",
        "line_length [m]": v.line[0] if v else "", "line_bore [mm]": v.line[1] if v else "",
        "line_roughness [mm]": v.line[2] if v else "", "line_fittings_k": v.line[3] if v else "",
        "suction_line_id": v.shared_line if v else "",
        # operating region (empty: no minimum flow, POR 70-120 % of BEP, AOR to the curve's end)
        "min_stable_flow [m3/h]": p.min_stable_flow, "thermal_min_flow [m3/h]": p.thermal_min_flow,
        "preferred_low": "", "preferred_high": "",
        "allowable_max_flow [m3/h]": p.allowable_max_flow,
        # incompressible liquids only (empty: CoolProp's own vapour pressure)
        "vapour_pressure": p.vapour_pressure,
        # today's operating limits, for the what-if comparison (empty: not known)
        **dict(zip(("low_pressure_setpoint", "low_level_setpoint", "high_temperature_setpoint"),
                   TODAY_SETPOINTS.get(p.pump_id, ("", "", "")), strict=True)),
        # field evidence: discharge pressure and vibration tags (generate_field.py)
        **generate_field.register_cells(p.pump_id),
    }


#: Invented operating limits of a few pumps (register cells, with their units; pressures in
#: the suction transmitter's reference, levels in the level transmitter's frame).
TODAY_SETPOINTS: dict[str, tuple[str, str, str]] = {
    "CD-412": ("", "800 mm", ""),
    "RW-504": ("", "2.2 m", ""),
    "CW-103": ("", "", "35 degC"),
    "RW-502": ("-85 kPa", "", ""),
    "DH-202": ("110 kPa", "", "110 degC"),
}


def write_configs() -> None:
    CONFIGS.mkdir(exist_ok=True)
    (CONFIGS / "demo_pumps.csv").write_text(
        pd.DataFrame([register_row(p) for p in PUMPS]).to_csv(index=False, lineterminator="\n"))
    curves = pd.concat([curve_table(p) for p in PUMPS]).drop_duplicates()
    (CONFIGS / "demo_npsh3_curves.csv").write_text(curves.to_csv(index=False, lineterminator="\n"))


# ----------------------------------------------------------------------------- summary
def summary(truths: dict[str, Truth], clock: Clock) -> pd.DataFrame:
    rows = []
    for p in PUMPS:
        t = truths[p.pump_id]
        ratio = (t.npsha / t.npsh3)[t.run & ~np.isnan(t.npsh3)]
        below_guidance = t.run & (t.npsha < t.required)
        below_npsh3 = t.run & (t.npsha < t.npsh3)
        first = [clock.local[np.argmax(m)].strftime("%m-%d %H:%M") if m.any() else ""
                 for m in (below_guidance, below_npsh3)]
        rows.append({
            "pump": p.pump_id, "service": p.service, "fluid": p.fluid,
            "S": round(t.suction_specific_speed), "run %": round(100 * t.run.mean(), 1),
            "ratio p50": round(float(np.median(ratio)), 2) if ratio.size else np.nan,
            "ratio min": round(float(ratio.min()), 2) if ratio.size else np.nan,
            "off curve min": int((t.run & np.isnan(t.npsh3)).sum()),
            "<guid min": int(below_guidance.sum()), "first <guid": first[0],
            "<NPSH3 min": int(below_npsh3.sum()), "first <NPSH3": first[1],
            "<min flow min": int(t.below_min.sum()),
            "events": "; ".join(dict.fromkeys(e["event"] for e in PLANTED
                                              if p.pump_id in e["pump_id"])),
        })
    return pd.DataFrame(rows)


# ----------------------------------------------------------------------------- main
WIDE_CSV = {"dosing": ["CH-701A", "CH-701B", "CH-702"],
            "raw_and_fire_water": ["RW-501", "RW-502", "RW-503", "FW-601", "FW-602", "FW-603"],
            "vessels": ["BF-311", "CD-412", "RW-504", "DM-151", "CD-413"]}
WEEKLY_WIDE_CSV = {"cooling_water": ["CW-101A", "CW-101B", "CW-102A", "CW-102B", "CW-103"]}
WIDE_PARQUET = {"district_heating": ["DH-201A", "DH-201B", "DH-202"],
                "condensate": ["CD-401A", "CD-401B"], "building_services": ["BS-111", "BS-112"],
                "refrigeration": ["GL-121", "RT-951"]}
LONG_PARQUET = {"boiler_feed": ["BF-301A", "BF-301B"], "lpg": ["LP-901A", "LP-901B", "LP-902"]}
LONG_CSV = {"methanol": ["MT-801", "MT-802"], "toluene": ["TL-811", "TL-812"]}


def main() -> None:
    rng = np.random.default_rng(RANDOM_STATE)
    clock = Clock.october()
    ops = plant_operation(clock, rng)
    ops.update(vessel_operation(clock, ops))
    ops.update(refrigeration_operation(clock))
    baro_pa, baro_records = barometer(clock, rng)
    truths, measured, decimals, deadbands = {}, {}, {}, {}
    for number, p in enumerate(PUMPS):
        pump_rng = np.random.default_rng([RANDOM_STATE, number])
        truth, readings, places, bands = simulate(p, ops[p.pump_id], clock, baro_pa, pump_rng)
        if p.vessel and p.tag("LEVEL") in measured:  # a shared vessel: its level is read once
            del readings[p.tag("LEVEL")]
        truths[p.pump_id] = truth
        measured.update(readings)
        decimals.update(places)
        deadbands.update(bands)

    for folder in ("wide_csv", "wide_parquet", "long_parquet", "long_csv", "weather"):
        for old in (EXPORTS / folder).glob("*"):
            old.unlink()
    texts = wide_data_faults(measured, clock, rng)

    def tags_of(pump_ids: list[str]) -> dict:
        return {tag: measured[tag] for pid in pump_ids for tag in measured
                if tag.partition(".")[0] == BY_ID[pid].stem or tag in BY_ID[pid].own_tags()}

    everything = np.ones(clock.n, bool)
    for name, pump_ids in WIDE_CSV.items():
        write_wide_csv(EXPORTS / "wide_csv" / f"{name}_2026-10.csv.gz", clock, everything,
                       tags_of(pump_ids), decimals, texts)
    weeks = clock.local.isocalendar().week.to_numpy()
    for name, pump_ids in WEEKLY_WIDE_CSV.items():
        for week in np.unique(weeks):
            write_wide_csv(EXPORTS / "wide_csv" / f"{name}_2026-W{week}.csv.gz", clock,
                           weeks == week, tags_of(pump_ids), decimals, texts)
    for name, pump_ids in WIDE_PARQUET.items():
        write_wide_parquet(EXPORTS / "wide_parquet" / f"{name}_2026-10.parquet", clock,
                           tags_of(pump_ids))

    long = {name: long_records(tags_of(ids), deadbands, clock, rng)
            for name, ids in {**LONG_PARQUET, **LONG_CSV}.items()}
    long_data_faults(long, rng)
    folder = EXPORTS / "long_parquet"
    write_long_parquet(folder / "boiler_feed_2026-10.parquet", long["boiler_feed"])
    half = in_window(long["lpg"]["time"], "2026-10-01", "2026-10-16")
    write_long_parquet(folder / "lpg_2026-10-01_to_15.parquet", long["lpg"][half])
    write_long_parquet(folder / "lpg_2026-10-16_to_31.parquet", long["lpg"][~half])
    for name in LONG_CSV:
        records = long[name].sort_values(["time", "tag"], kind="stable")
        if name == "toluene":
            records = duplicates_and_disorder(records, rng)
        write_long_csv(EXPORTS / "long_csv" / f"{name}_2026-10.csv.gz", records, decimals)
    write_long_csv(EXPORTS / "weather" / "barometer_2026-10.csv.gz", baro_records,
                   {BAROMETER_TAG: 1}, utc=True, quality=False)
    # the field-evidence tags last, from their own random stream: nothing above changes
    generate_field.write(EXPORTS / "wide_parquet", clock, ops, truths, BY_ID, baro_pa,
                         RATED_HEAD_M, (fluid_tables, cell_si, write_wide_parquet, planted))
    write_configs()
    events = pd.DataFrame(PLANTED).sort_values(["pump_id", "start_local"], kind="stable")
    (EXPORTS / "planted_events.csv").write_text(events.to_csv(index=False, lineterminator="\n"))

    table = summary(truths, clock)
    with pd.option_context("display.width", 250, "display.max_columns", 30,
                           "display.max_colwidth", 48):
        print(table.to_string(index=False))
    size = sum(f.stat().st_size for f in EXPORTS.rglob("*") if f.is_file())
    print(f"\ndemo_exports/: {size / 1e6:.1f} MB")


if __name__ == "__main__":
    main()
