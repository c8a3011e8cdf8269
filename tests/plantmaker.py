"""Build small invented plants in a temporary folder for the tests (not a reference)."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

PLANT_TOML = """
[site]
name = "Test bench plant (invented)"
elevation = "{elevation}"
timezone = "{timezone}"
{barometer}

[register]
pumps = "pumps.csv"
curves = "curves.csv"

[data]
stale_limit = "{stale}"
frozen_after = "{frozen}"
good_quality = ["ok"]

[running]
min_flow_fraction = 0.05
min_speed_fraction = 0.2

[window]
start = "{start}"
end = "{end}"

{exports}

[policy]
ample_ratio = 2.0
[[policy.rules]]
application = "water"
max_suction_specific_speed = 7500
ratio = 1.1
margin = "0.6 m"
[[policy.rules]]
application = "water"
min_suction_specific_speed = 7500
ratio = 1.2
margin = "1.0 m"
"""

WIDE_EXPORT = """
[[exports]]
files = "exports/*.csv"
layout = "wide"
time_column = "timestamp"
"""

LONG_EXPORT = """
[[exports]]
files = "long/*.csv"
layout = "long"
tag_column = "tag"
time_column = "time"
value_column = "value"
quality_column = "quality"
"""

PUMP_HEADER = (
    "pump_id,service,area,fluid,application,suction_pressure_tag,suction_pressure_unit,"
    "suction_pressure_reference,temperature_tag,temperature_unit,flow_tag,flow_unit,speed_tag,"
    "speed_unit,run_tag,tap_elevation [m],tap_bore [mm],rated_speed [rpm],bep_flow [m3/h],"
    "curve_id,npsh3_exponent,impeller_eyes,stale_limit"
)

CURVES = """curve_id,flow,flow_unit,npsh3,npsh3_unit
C1,20,m3/h,2.0,m
C1,50,m3/h,2.5,m
C1,80,m3/h,3.2,m
C1,100,m3/h,4.0,m
C1,120,m3/h,5.2,m
"""


def pump_row(pid: str = "P1", **kw) -> str:
    """One register row; keyword arguments replace the defaults."""
    row = {
        "pump_id": pid,
        "service": "test service",
        "area": "A",
        "fluid": "Water",
        "application": "water",
        "suction_pressure_tag": f"{pid}.PS",
        "suction_pressure_unit": "kPa",
        "suction_pressure_reference": "gauge",
        "temperature_tag": f"{pid}.TT",
        "temperature_unit": "degC",
        "flow_tag": f"{pid}.FT",
        "flow_unit": "m3/h",
        "speed_tag": "",
        "speed_unit": "",
        "run_tag": f"{pid}.RUN",
        "tap_elevation": "0",
        "tap_bore": "100",
        "rated_speed": "1480",
        "bep_flow": "80",
        "curve_id": "C1",
        "npsh3_exponent": "",
        "impeller_eyes": "",
        "stale_limit": "",
    }
    row.update(kw)
    return ",".join(str(v) for v in row.values())


def header_with(*extra: str) -> str:
    """The register header with extra columns appended, in the order that the extra keyword
    arguments of :func:`pump_row` are given (they are appended to the row in that order)."""
    return ",".join([PUMP_HEADER, *extra])


def make_plant(
    folder: Path,
    wide: dict[str, pd.DataFrame] | None = None,
    long: dict[str, str] | None = None,
    rows: list[str] | None = None,
    curves: str = CURVES,
    start: str = "2026-10-01",
    end: str = "2026-10-02",
    stale: str = "5 min",
    frozen: str = "off",
    timezone: str = "UTC",
    elevation: str = "0 m",
    barometer: str = "",
    header: str = PUMP_HEADER,
) -> Path:
    """Write a plant file, register, curves and exports; return the plant file's path."""
    folder = Path(folder)
    (folder / "exports").mkdir(parents=True, exist_ok=True)
    (folder / "long").mkdir(parents=True, exist_ok=True)
    exports = WIDE_EXPORT + (LONG_EXPORT if long else "")
    (folder / "plant.toml").write_text(
        PLANT_TOML.format(
            elevation=elevation,
            timezone=timezone,
            stale=stale,
            frozen=frozen,
            start=start,
            end=end,
            exports=exports,
            barometer=barometer,
        )  # fmt: skip
    )
    rows = rows if rows is not None else [pump_row("P1")]
    (folder / "pumps.csv").write_text(header + "\n" + "\n".join(rows) + "\n")
    (folder / "curves.csv").write_text(curves)
    for name, frame in (wide or {}).items():
        frame.to_csv(folder / "exports" / name, index=False)
    for name, text in (long or {}).items():
        (folder / "long" / name).write_text(text)
    return folder / "plant.toml"


def steady_frame(
    pid: str = "P1",
    start: str = "2026-10-01",
    periods: int = 1440,
    freq: str = "1min",
    pressure_kpa: float = 100.0,
    temperature_c: float = 20.0,
    flow_m3h: float = 80.0,
    run: int = 1,
) -> pd.DataFrame:
    """A wide export of one pump with constant readings (naive timestamps)."""
    times = pd.date_range(start, periods=periods, freq=freq)
    return pd.DataFrame(
        {
            "timestamp": times.strftime("%Y-%m-%d %H:%M:%S"),
            f"{pid}.PS": pressure_kpa,
            f"{pid}.TT": temperature_c,
            f"{pid}.FT": flow_m3h,
            f"{pid}.RUN": run,
        }
    )
