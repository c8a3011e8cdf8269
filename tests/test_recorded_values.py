"""Compressed historian records drawn by straight lines, gaps by the longest interval, starts.

References outside the project:
- NPSHa = (p_abs − p_v)/(ρ·g) + v²/(2g) + z (ISO 9906:2012, definition of NPSH), with p_v and
  ρ of water from IAPWS-IF97 through the ``iapws`` package (independent of CoolProp);
- a compressed record is redrawn by straight lines between its stored points, each sample of
  the original within the deviation of that line (swinging-door trending, E. H. Bristol,
  ISA 1990, recalled from memory; the compressor is in ``tests/swinging_door.py``);
- the crossing of a straight line with a level: t* = t0 + (t1 − t0)·(A0 − N)/(A0 − A1)
  (linear interpolation), and the area of the triangle below a level, ½·depth·duration.
"""

from __future__ import annotations

import iapws
import numpy as np
import pandas as pd
import pytest
from plantmaker import make_plant, pump_row
from swinging_door import swinging_door

import screening
from screening.engine.calculator import NS_PER_HOUR, Settings, calculate_pump
from screening.inputs.register import PumpSpec, TagSpec
from screening.inputs.tagdata import TagQuality, TagSeries
from screening.inputs.window import day_edges
from screening.physics.curves import Npsh3Curve
from screening.physics.margin import Guidance
from screening.physics.properties import fluid_table
from screening.scenarios.setpoints import one_sample

START = pd.Timestamp("2026-10-01", tz="UTC")
G = 9.80665
H = 3600 * 10**9
PUMP = PumpSpec(
    pump_id="P1", service="", area="", fluid="Water", application="water",
    suction=TagSpec("PS", "Pa", "pressure"), gauge=False,
    temperature=TagSpec("TT", "K", "temperature"), flow=TagSpec("FT", "m3/s", "flow"),
    speed=TagSpec("ST", "rpm", "speed"), run=TagSpec("RUN", "", "status"),
    tap_elevation=1.0, tap_bore=0.1, rated_speed=1480.0, bep_flow=0.02, curve_id="C",
)  # fmt: skip
CURVE = Npsh3Curve("C", np.array([0.005, 0.02, 0.03]), np.array([2.0, 3.0, 4.5]))
GUIDE = Guidance(1.1, 0.6, "test")  # guidance head at NPSH3 3 m: max(3.3, 3.6) = 3.6 m
T_K, Q = 293.15, 0.02  # 20 °C; at Q = 0.02 m³/s the curve's NPSH3 is 3.0 m


def _water():
    w = iapws.IAPWS97(T=T_K, x=0)  # saturated liquid, IAPWS-IF97
    return w.P * 1e6, w.rho


def _pressure_for(npsha: float) -> float:
    """Absolute suction pressure [Pa] giving ``npsha`` [m] (ISO 9906 definition, IAPWS-IF97)."""
    p_v, rho = _water()
    v = Q / (np.pi * 0.1**2 / 4)
    return p_v + (npsha - v**2 / (2 * G) - 1.0) * rho * G


def _series(name, times, values, max_interval=None):
    times = np.asarray(times, dtype=np.int64)
    values = np.asarray(values, dtype=np.float64)
    bad = np.zeros(len(times), dtype=bool)
    return TagSeries(name, times, values, bad, TagQuality(name), max_interval)


def _steady(name, value, t_from, t_to):
    """A constant sampled every 30 min from ``t_from`` to ``t_to`` [ns] (held as steps)."""
    times = np.append(np.arange(t_from, t_to, H // 2), t_to)
    return _series(name, times, np.full(len(times), value))


def _run(suction, end_ns, start_ns=START.value, settings=None):
    s = settings or Settings(2 * 3600.0, None, 0.05, 0.2, 2.0, 0.0)
    before, after = start_ns - 60 * 10**9, end_ns
    tags = {
        "suction": suction,
        "temperature": _steady("TT", T_K, before, after),
        "flow": _steady("FT", Q, before, after),
        "speed": _steady("ST", 1480.0, before, after),
        "run": _steady("RUN", 1.0, before, after),
    }
    edges = day_edges(pd.Timestamp(start_ns, tz="UTC"), pd.Timestamp(end_ns, tz="UTC"), "UTC")
    return calculate_pump(
        PUMP, CURVE, GUIDE, fluid_table("Water"), tags, None, s, start_ns, end_ns, edges
    )


def test_a_ramp_stored_as_two_points_crosses_npsh3_at_the_interpolated_instant():
    # NPSHa falls on a straight line from 5 m at t0 to 2 m at t1 = t0 + 1 h (two stored points,
    # the second after the window's end). NPSH3 is 3.0 m, the guidance head 3.6 m: the line
    # crosses 3.6 m at (5 − 3.6)/3 = 0.4667 h and 3.0 m at (5 − 3)/3 = 0.6667 h.
    t0, t1 = START.value, START.value + H
    ps = [_pressure_for(5.0), _pressure_for(2.0)]
    r = _run(_series("PS", [t0, t1], ps, max_interval=8 * 3600.0), t1)
    hours = dict(zip(screening.STATES, r.hours, strict=True))
    # tolerance 1 s: CoolProp's tabulated water against IAPWS-IF97 moves NPSHa by < 1e-4 m,
    # the crossing by < 0.1 s; the bisection itself is exact to the nanosecond
    assert hours["below_npsh3"] == pytest.approx(1 / 3, abs=1 / 3600)
    assert hours["below_guidance"] == pytest.approx(0.2, abs=1 / 3600)
    assert hours["meets_guidance"] == pytest.approx(1.4 / 3, abs=1 / 3600)
    assert r.hours.sum() == pytest.approx(1.0, rel=1e-12)
    # depth times duration: triangles ½·1 m·(1/3) h and ½·1.6 m·(1.6/3) h; longest 1/3 h
    assert r.severity.below_npsh3_m_h == pytest.approx(1 / 6, rel=1e-3)
    assert r.severity.below_guidance_m_h == pytest.approx(0.5 * 1.6 * 1.6 / 3, rel=1e-3)
    assert r.severity.longest_below_npsh3_h == pytest.approx(1 / 3, abs=1 / 3600)
    # read as steps, the first point holds for the hour: the decline is not seen at all
    step = _run(_series("PS", [t0, t1], ps), t1)
    assert step.hours[screening.STATES.index("below_npsh3")] == 0.0


def test_a_gap_longer_than_the_longest_interval_is_no_data():
    # points 10 h apart with a longest interval of 8 h: no line; the first point stands for
    # 8 h, the last 2 h of the gap are no data (as a sampled export beyond its stale limit)
    t0, t1 = START.value, START.value + 10 * H
    p = _pressure_for(5.0)
    r = _run(_series("PS", [t0, t1], [p, p], max_interval=8 * 3600.0), t1,
             settings=Settings(12 * 3600.0, None, 0.05, 0.2, 2.0, 0.0))  # fmt: skip
    hours = dict(zip(screening.STATES, r.hours, strict=True))
    assert hours["no_data"] == pytest.approx(2.0, rel=1e-12)
    assert hours["meets_guidance"] == pytest.approx(8.0, rel=1e-12)


def _dense_signal(days: int = 2):
    """One-minute suction pressure whose NPSHa swings smoothly between 1.7 and 6.9 m (7 h period)
    with a slow drift: it crosses NPSH3 (3 m), the guidance head (3.6 m) and the ample edge
    (6 m) many times."""
    t = START.value + np.arange(days * 1440, dtype=np.int64) * 60 * 10**9
    hours = (t - START.value) / H
    npsha = 4.3 + 2.3 * np.sin(2 * np.pi * hours / 7.0) - 0.3 * np.sin(2 * np.pi * hours / 40)
    return t, np.array([_pressure_for(a) for a in npsha])


def test_a_swinging_door_record_gives_the_hours_of_the_dense_series():
    t, p = _dense_signal()
    end = int(t[-1])
    deviation = 20.0  # [Pa]: 0.002 m of water
    kept = swinging_door(t, p, deviation, 8 * H)
    assert len(kept) < len(t) / 5  # a real compression
    # the compressor's promise (Bristol 1990): every sample within E of the stored line
    redrawn = np.interp(t.astype(float), t[kept].astype(float), p[kept])
    assert np.max(np.abs(redrawn - p)) <= deviation * (1 + 1e-9)
    compressed = _run(_series("PS", t[kept], p[kept], max_interval=8 * 3600.0), end)
    dense_step = _run(_series("PS", t, p), end)  # the sampled export as read so far
    dense_line = _run(_series("PS", t, p, max_interval=8 * 3600.0), end)
    for name in ("below_npsh3", "below_guidance", "meets_guidance", "ample_margin"):
        i = screening.STATES.index(name)
        assert dense_line.hours[i] > 1.0
        # within 0.5 % of the dense series, read either way (the bound)
        assert compressed.hours[i] == pytest.approx(dense_line.hours[i], rel=5e-3), name
        assert compressed.hours[i] == pytest.approx(dense_step.hours[i], rel=5e-3), name
    assert compressed.hours.sum() == pytest.approx((end - START.value) / NS_PER_HOUR, rel=1e-12)
    assert compressed.severity.below_npsh3_m_h == pytest.approx(
        dense_line.severity.below_npsh3_m_h, rel=5e-3
    )


def _transient_plant(folder, settle: str):
    """A day of one-minute data: the pump starts at 02:00 and 12:00 (stops 10:00) and its
    suction pressure dips for the first 3 minutes of each start to NPSHa below NPSH3."""
    times = pd.date_range("2026-10-01", periods=1440, freq="1min")
    minute = np.arange(1440)
    run = ((minute >= 120) & (minute < 600)) | (minute >= 720)
    dip = ((minute >= 120) & (minute < 123)) | ((minute >= 720) & (minute < 723))
    frame = pd.DataFrame(
        {
            "timestamp": times.strftime("%Y-%m-%d %H:%M:%S"),
            "P1.PS": np.where(dip, -85.0, 100.0),  # kPa gauge: NPSHa about 1.6 m in a dip
            "P1.TT": 20.0,
            "P1.FT": np.where(run, 80.0, 0.0),
            "P1.RUN": run.astype(int),
        }
    )
    path = make_plant(folder, wide={"a.csv": frame}, rows=[pump_row("P1")])
    text = path.read_text().replace("[running]\n", f'[running]\nsettle_after_start = "{settle}"\n')
    path.write_text(text)
    return path


def test_the_settling_time_after_each_start_is_counted_apart(tmp_path):
    plain = screening.scan(_transient_plant(tmp_path / "a", "0 s"), "2026-10-01", "2026-10-02")
    settled = screening.scan(_transient_plant(tmp_path / "b", "5 min"), "2026-10-01", "2026-10-02")
    h0 = plain.hours[plain.hours.kind == "margin"].set_index("state")["hours"]
    h5 = settled.hours[settled.hours.kind == "margin"].set_index("state")["hours"]
    # 3 one-minute samples below NPSH3 at each of 2 starts (time weighting: 6 min) ...
    assert h0["below_npsh3"] == pytest.approx(6 / 60, rel=1e-12)
    assert h0["starting"] == 0.0
    # ... counted instead as 2 × 5 min of starting, out of the bands
    assert h5["below_npsh3"] == 0.0
    assert h5["starting"] == pytest.approx(10 / 60, rel=1e-12)
    assert h5.sum() == pytest.approx(24.0, rel=1e-12)
    assert h5["stopped"] == pytest.approx(h0["stopped"], rel=1e-12)
    s = settled.summary.iloc[0]
    assert s["running_hours"] == pytest.approx(plain.summary.iloc[0]["running_hours"], rel=1e-12)
    assert s["below_npsh3_metre_hours"] == 0.0
    assert plain.summary.iloc[0]["below_npsh3_metre_hours"] > 0.0
    r = settled.hours[settled.hours.kind == "region"].set_index("state")["hours"]
    assert r["starting"] == pytest.approx(10 / 60, rel=1e-12)


def test_a_recorded_values_export_is_drawn_by_lines_through_the_loader(tmp_path):
    # the ramp of the first test as a long "recorded values" export: two stored points of the
    # suction pressure (gauge kPa at sea level, 101.325 kPa; U.S. Standard Atmosphere 1976)
    p0, p1 = (_pressure_for(a) / 1000 - 101.325 for a in (5.0, 2.0))
    lines = ["tag,time,value,quality"]
    for t, v in (("00:00", p0), ("01:00", p1)):
        lines.append(f"P1.PS,2026-10-01T{t}:00Z,{v},ok")
    for tag, v in (("P1.TT", 20.0), ("P1.FT", 72.0), ("P1.RUN", 1)):
        lines += [f"{tag},2026-09-30T23:59:00Z,{v},ok", f"{tag},2026-10-01T01:00:00Z,{v},ok"]
    path = make_plant(tmp_path, long={"a.csv": "\n".join(lines)}, rows=[pump_row("P1")],
                      stale="2 h", end="2026-10-01T01:00")  # fmt: skip
    text = path.read_text().replace(
        'layout = "long"\n', 'layout = "long"\nreconstruction = "linear"\nmax_interval = "8 h"\n'
    )
    path.write_text(text)
    r = screening.scan(path)
    assert r.problems.empty, r.problems
    h = r.hours[r.hours.kind == "margin"].set_index("state")["hours"]
    # 72 m³/h = 0.02 m³/s: NPSH3 on the plant's curve C1 at 72 m³/h is 2.5 + (3.2 − 2.5)·22/30
    # (PCHIP between points; the crossing is where NPSHa meets it, between 0.25 h and 0.75 h)
    assert 0.25 < h["below_npsh3"] < 0.75
    assert h.sum() == pytest.approx(1.0, rel=1e-12)
    step_plant = make_plant(tmp_path / "s", long={"a.csv": "\n".join(lines)},
                            rows=[pump_row("P1")], stale="2 h", end="2026-10-01T01:00")  # fmt: skip
    step = screening.scan(step_plant)
    hs = step.hours[step.hours.kind == "margin"].set_index("state")["hours"]
    assert hs["below_npsh3"] == 0.0


def test_a_register_word_settles_a_tag_in_families_drawn_differently(tmp_path):
    lines = "tag,time,value,quality\nP1.PS,2026-10-01T00:00:00Z,100,ok\n"
    frame = pd.DataFrame({"timestamp": ["2026-10-01 00:00:00"], "P1.PS": [100.0],
                          "P1.TT": [20.0], "P1.FT": [80.0], "P1.RUN": [1]})  # fmt: skip
    path = make_plant(tmp_path, wide={"a.csv": frame}, long={"b.csv": lines})
    text = path.read_text().replace(
        'layout = "long"\n', 'layout = "long"\nreconstruction = "linear"\n'
    )
    path.write_text(text)
    r = screening.scan(path)
    assert r.problems["message"].str.contains("drawn differently").any()


def test_one_sample_setting_the_full_share_is_named():
    # time-weighted quantile as the inverse of the empirical distribution (Hyndman & Fan 1996,
    # definition 1): 1000 pieces of 0.1 h below guidance needing 1..1000 kPa, one extra piece
    # of 0.01 h needing 5000 kPa: the 100 % floor is that piece's alone
    need = np.append(np.arange(1, 1001, dtype=float), 5000.0)
    ok = np.zeros(len(need), dtype=bool)
    w = np.append(np.full(1000, 0.1), 0.01)
    times = np.arange(len(need), dtype=np.int64)
    found = one_sample(need, ok, w, times)
    assert found is not None
    i, near = found
    assert i == 1000
    # 99.9 % of 100.01 h = 99.91 h: reached after 999 of the 0.1 h pieces
    assert near == 1000.0
    # two pieces above the 99.9 % value: not one sample
    need[999] = 4000.0
    w[999] = 0.01
    assert one_sample(need, ok, w, times) is None


def test_register_override_reads_the_point_after_the_window(tmp_path):
    # A suction pressure stored hourly at -45 kPa gauge until 20:00, then at -95 kPa at 02:00
    # the next day (after the window's end): drawn by lines, NPSHa crosses NPSH3 (3.2 m at
    # 80 m3/h) at about 23:12 inside the window. Declared linear in the register only, the
    # point after the window must be read as it is for a family declared linear: the hours are
    # the same both ways, and more than half an hour below NPSH3 (a step would give none).
    from plantmaker import header_with, make_plant, pump_row, steady_frame

    frame = steady_frame()
    frame["P1.PS"] = np.nan
    frame.loc[frame.index % 60 == 0, "P1.PS"] = -45.0
    frame.loc[frame.index > 20 * 60, "P1.PS"] = np.nan
    late = pd.DataFrame({"timestamp": ["2026-10-02 02:00:00"], "P1.PS": [-95.0]})
    frame = pd.concat([frame, late], ignore_index=True)

    def plant(folder, register_word, family_word):
        rows = [pump_row("P1", reconstruction=register_word)]
        path = make_plant(folder, wide={"a.csv": frame}, rows=rows)
        (folder / "pumps.csv").write_text(header_with("reconstruction") + "\n" + rows[0] + "\n")
        if family_word:
            text = path.read_text().replace(
                'layout = "wide"', 'layout = "wide"\nreconstruction = "linear"'
            )
            path.write_text(text)
        return screening.scan(path)

    by_register = plant(tmp_path / "a", "suction=linear", False)
    by_family = plant(tmp_path / "b", "", True)
    h1 = by_register.hours.set_index(["kind", "state"])["hours"]
    h2 = by_family.hours.set_index(["kind", "state"])["hours"]
    assert h1[("margin", "below_npsh3")] > 0.5
    assert h1[("margin", "below_npsh3")] == pytest.approx(h2[("margin", "below_npsh3")], abs=1e-9)
