"""Shared suction lines: the loss of a header carrying several pumps' flows.

Invented plants (tests/plantmaker.py). A line's loss grows with the square of its flow
(h = k·Q², Darcy–Weisbach at a constant friction factor; Karassik et al., *Pump Handbook*,
4th ed., §2.3): two equal pumps running at Q on one header lose k·(2Q)² = 4·k·Q², four times
what one loses alone. The Darcy–Weisbach case is checked against the ``fluids`` package
(``fluids.friction.friction_factor``, Clamond's exact Colebrook solution) and CoolProp's
viscosity, evaluated here directly at the line's total flow.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from plantmaker import header_with, make_plant, pump_row

import screening
from screening.engine.calculator import NS_PER_HOUR, Settings, calculate_pump
from screening.engine.drivers import npsh_pair
from screening.engine.scan import _batches
from screening.inputs.loader import open_exports
from screening.inputs.pumpspec import LineMember, PumpSpec, SharedLine, SuctionLine, TagSpec
from screening.inputs.tagdata import TagQuality, TagSeries
from screening.inputs.window import day_edges
from screening.physics.curves import Npsh3Curve
from screening.physics.margin import Guidance
from screening.physics.properties import fluid_table
from screening.scenarios.scenario import Change
from screening.scenarios.whatif import apply_changes

LINE_COLUMNS = (
    "suction_source", "level_tag", "level_unit", "level_zero_elevation", "vessel_surface",
    "line_loss_head", "line_loss_flow", "line_length", "line_bore", "line_roughness",
    "line_fittings_k", "suction_line_id", "header_flow_tag", "header_flow_unit",
)  # fmt: skip
HOUR = 60  # one-minute samples per hour


def vessel_row(pid, line_id="H1", loss=("1.0 m", "80 m3/h"), geometry=("", "", "", ""),
               header=("", ""), **kw):  # fmt: skip
    """A pump fed from the open tank TK (level tag TK.LT, m) through line ``line_id``."""
    cells = {
        "suction_source": "vessel", "level_tag": "TK.LT", "level_unit": "m",
        "level_zero_elevation": "0 m", "vessel_surface": "open",
        "line_loss_head": loss[0], "line_loss_flow": loss[1],
        "line_length": geometry[0], "line_bore": geometry[1], "line_roughness": geometry[2],
        "line_fittings_k": geometry[3], "suction_line_id": line_id,
        "header_flow_tag": header[0], "header_flow_unit": header[1],
    }  # fmt: skip
    return pump_row(pid, suction_pressure_tag="", suction_pressure_unit="",
                    suction_pressure_reference="", tap_bore="", **kw, **cells)  # fmt: skip


def frame(**columns) -> pd.DataFrame:
    """One day of one-minute samples: 20 °C water, level 5 m, both pumps at 80 m3/h."""
    times = pd.date_range("2026-10-01", periods=1440, freq="1min")
    data = {"timestamp": times.strftime("%Y-%m-%d %H:%M:%S"), "TK.LT": 5.0}
    for pid in ("P1", "P2"):
        data.update({f"{pid}.TT": 20.0, f"{pid}.FT": 80.0, f"{pid}.RUN": 1})
    data.update(columns)
    return pd.DataFrame(data)


def plant(tmp_path, rows, data=None):
    return make_plant(tmp_path, wide={"a.csv": frame() if data is None else data}, rows=rows,
                      header=header_with(*LINE_COLUMNS))  # fmt: skip


def series(path, pid="P1"):
    r = screening.scan(path, keep_series=True)
    assert r.problems.empty, r.problems.to_dict("records")
    return r, r.series[pid]


def running(s):
    return s[s["state"].isin(screening.BANDS) & (s["hours"] > 0)]


def test_two_equal_pumps_on_one_line_lose_four_times_the_single_loss(tmp_path):
    # design point 1.0 m at 80 m3/h: alone k·Q² = 1.0 m; with the other pump at 80 m3/h
    # k·(2Q)² = 4·k·Q² = 4.0 m (hand calculation), so NPSHa is 3.0 m lower
    alone = plant(tmp_path / "alone", [vessel_row("P1", line_id="")])
    shared = plant(tmp_path / "shared", [vessel_row("P1"), vessel_row("P2")])
    _, a = series(alone)
    r, s = series(shared)
    assert r.problems.empty
    assert running(s)["line_flow_m3_s"].to_numpy() == pytest.approx(160.0 / 3600.0, rel=1e-12)
    drop = running(a)["npsha_m"].to_numpy() - running(s)["npsha_m"].to_numpy()
    assert drop == pytest.approx(np.full(len(drop), 3.0), abs=1e-9)
    # the other member sees the same line
    assert r.series["P2"]["npsha_m"].equals(s["npsha_m"])


def test_darcy_weisbach_line_at_the_total_flow_matches_fluids(tmp_path):
    from CoolProp.CoolProp import PropsSI
    from fluids.friction import friction_factor

    geometry = ("50 m", "150 mm", "0.045 mm", "2.0")
    none = plant(tmp_path / "none", [vessel_row("P1", line_id="", loss=("", ""))])
    shared = plant(
        tmp_path / "dw",
        [
            vessel_row("P1", loss=("", ""), geometry=geometry),
            vessel_row("P2", loss=("", ""), geometry=geometry),
        ],
    )
    _, bare = series(none)
    _, s = series(shared)
    loss = (running(bare)["npsha_m"].to_numpy() - running(s)["npsha_m"].to_numpy())[0]
    # reference: the line's total flow 160 m3/h through 150 mm, water at 20 °C (CoolProp
    # density and viscosity of the saturated liquid, as the tool), friction factor from
    # fluids.friction.friction_factor (Colebrook solved exactly), h = (f·L/D + K)·v²/(2g)
    t = 293.15
    rho, mu = PropsSI("D", "T", t, "Q", 0, "Water"), PropsSI("V", "T", t, "Q", 0, "Water")
    d, q = 0.150, 160.0 / 3600.0
    v = q / (np.pi * d * d / 4)
    f = friction_factor(Re=rho * v * d / mu, eD=0.045e-3 / d)
    expected = (f * 50.0 / d + 2.0) * v * v / (2 * 9.80665)
    # the tool's tables: density, viscosity and friction factor each within 1e-6 relative
    assert loss == pytest.approx(expected, rel=1e-5)
    # the loss at one pump's flow is not a quarter of it: f falls as Re rises (Colebrook)
    alone = plant(tmp_path / "alone", [vessel_row("P1", line_id="", loss=("", ""),
                                                  geometry=geometry)])  # fmt: skip
    _, one = series(alone)
    single = (running(bare)["npsha_m"].to_numpy() - running(one)["npsha_m"].to_numpy())[0]
    assert 3.5 < loss / single < 4.0


def test_a_stopped_member_contributes_nothing(tmp_path):
    # P2 stops at noon: from then on P1 loses k·Q² = 1.0 m, as alone
    data = frame(**{"P2.RUN": [1] * 720 + [0] * 720, "P2.FT": [80.0] * 720 + [0.0] * 720})
    _, s = series(plant(tmp_path, [vessel_row("P1"), vessel_row("P2")], data))
    _, a = series(plant(tmp_path / "alone", [vessel_row("P1", line_id="")]))
    afternoon = s["time"] >= pd.Timestamp("2026-10-01 12:00", tz="UTC")
    drop = (a["npsha_m"] - s["npsha_m"]).to_numpy()
    assert drop[afternoon.to_numpy()] == pytest.approx(0.0, abs=1e-12)
    assert drop[~afternoon.to_numpy()] == pytest.approx(3.0, abs=1e-9)


def test_a_members_stale_flow_is_no_data_for_the_other_member(tmp_path):
    # P2 running, its flow transmitter silent 06:00-08:00 (empty cells): its 05:59 sample
    # stands 5 min, so P1's line flow is unknown from 06:04 to 08:00, 116 min of no data
    flow = [80.0] * 1440
    flow[360:480] = [np.nan] * 120
    data = frame(**{"P2.FT": flow})
    r, s = series(plant(tmp_path, [vessel_row("P1"), vessel_row("P2")], data))
    hours = r.hours.set_index(["pump_id", "kind", "state"])["hours"]
    assert hours[("P1", "margin", "no_data")] == pytest.approx(116 / 60, abs=1e-9)
    assert hours.loc["P1", "margin"].sum() == pytest.approx(24.0, abs=1e-9)
    # the region of P1 needs only its own flow: no gap there
    assert hours[("P1", "region", "no_data")] == 0.0
    # stopped in the same gap, P2 carries nothing whatever its flow says: no gap for P1
    data = frame(**{"P2.FT": flow, "P2.RUN": [1] * 360 + [0] * 120 + [1] * 960})
    r, _ = series(plant(tmp_path / "stopped", [vessel_row("P1"), vessel_row("P2")], data))
    hours = r.hours.set_index(["pump_id", "kind", "state"])["hours"]
    assert hours[("P1", "margin", "no_data")] == 0.0


def test_a_members_bad_flow_is_bad_data_for_the_other_member(tmp_path):
    flow = ["80.0"] * 1440
    flow[600:630] = ["xmtr-fault"] * 30  # P2 running: 30 min without its flow
    r, _ = series(plant(tmp_path, [vessel_row("P1"), vessel_row("P2")], frame(**{"P2.FT": flow})))
    hours = r.hours.set_index(["pump_id", "kind", "state"])["hours"]
    assert hours[("P1", "margin", "bad_data")] == pytest.approx(0.5, abs=1e-9)


def test_the_header_flow_is_used_where_fresh_else_the_members_sum(tmp_path):
    # the header transmitter reads 170 m3/h (the members' meters say 160); silent 10:00-14:00
    header = [170.0] * 1440
    header[600:840] = [np.nan] * 240
    rows = [vessel_row(p, header=("H1.FT", "m3/h")) for p in ("P1", "P2")]
    r, s = series(plant(tmp_path, rows, frame(**{"H1.FT": header})))
    hours = r.hours.set_index(["pump_id", "kind", "state"])["hours"]
    assert hours.loc["P1", "margin"].sum() == pytest.approx(24.0, abs=1e-9)
    assert hours[("P1", "margin", "no_data")] == 0.0
    w = s["hours"].to_numpy()
    q = s["line_flow_m3_s"].to_numpy() * 3600.0
    # the last header sample (09:59) stands 5 min; from 10:04 to 14:00 the sum stands
    assert w[np.isclose(q, 160.0)].sum() == pytest.approx(236 / 60, abs=1e-9)
    assert w[np.isclose(q, 170.0)].sum() == pytest.approx(24.0 - 236 / 60, abs=1e-9)
    k = 1.0 / (80.0 / 3600.0) ** 2  # design point 1.0 m at 80 m3/h
    _, bare = series(plant(tmp_path / "none", [vessel_row("P1", line_id="", loss=("", ""))]))
    loss = (bare["npsha_m"] - s["npsha_m"]).to_numpy()
    assert loss[np.isclose(q, 170.0)] == pytest.approx(k * (170.0 / 3600.0) ** 2, rel=1e-12)
    # the header tag is one of each member's tags in the quality table
    assert set(r.quality.loc[r.quality.role == "header_flow", "pump_id"]) == {"P1", "P2"}


def test_a_header_flow_in_another_unit_is_converted(tmp_path):
    # 170 m3/h written in L/s (47.2222 L/s): the same loss as in m3/h
    rows = [vessel_row(p, header=("H1.FT", "L/s")) for p in ("P1", "P2")]
    _, s = series(plant(tmp_path, rows, frame(**{"H1.FT": 170.0 / 3.6})))
    assert running(s)["line_flow_m3_s"].to_numpy() == pytest.approx(170.0 / 3600.0, rel=1e-12)


def test_disagreeing_line_data_is_refused_naming_the_rows(tmp_path):
    rows = [vessel_row("P1"), vessel_row("P2", loss=("1.2 m", "80 m3/h"))]
    p = screening.load_plant(plant(tmp_path, rows))
    assert not p.pumps
    for pid in ("P1", "P2"):
        assert re.search(r"suction line 'H1': line 2 \(pump P1\) and line 3 \(pump P2\) disagree "
                         r"on the line's loss", p.problems[pid])  # fmt: skip
    # the same value in another unit agrees (3.28084 ft is 1.0 m to 1e-6)
    rows = [vessel_row("P1"), vessel_row("P2", loss=("3.280840 ft", "80 m3/h"))]
    assert set(screening.load_plant(plant(tmp_path / "ft", rows)).pumps) == {"P1", "P2"}
    rows = [vessel_row("P1"), vessel_row("P2", header=("H1.FT", "m3/h"))]
    p = screening.load_plant(plant(tmp_path / "header", rows))
    assert "disagree on the header flow tag" in p.problems["P2"]
    rows = [vessel_row("P1", loss=("", "")), vessel_row("P2", loss=("", ""))]
    p = screening.load_plant(plant(tmp_path / "none", rows))
    assert "no member row gives the line's loss" in p.problems["P1"]


def test_a_line_with_an_unreadable_member_row_is_refused(tmp_path):
    rows = [vessel_row("P1"), vessel_row("P2").replace(",open,", ",vented,")]
    p = screening.load_plant(plant(tmp_path, rows))
    assert "'vented' is not" in p.problems["P2"]
    assert re.search(r"the row on line 3 \(pump P2\) names this line but could not be read",
                     p.problems["P1"])  # fmt: skip


def test_a_transmitter_pump_cannot_name_a_suction_line(tmp_path):
    row = pump_row("P1", **{c: "" for c in LINE_COLUMNS[:-3]}, suction_line_id="H1",
                   header_flow_tag="", header_flow_unit="")  # fmt: skip
    p = screening.load_plant(plant(tmp_path, [row]))
    assert re.search(r"column 'suction_line_id': applies to vessel-fed pumps only",
                     p.problems["P1"])  # fmt: skip


def test_line_members_share_a_batch(tmp_path):
    rows = [vessel_row("A1", line_id=""), vessel_row("P1"), vessel_row("B1", line_id=""),
            vessel_row("P2")]  # fmt: skip
    p = screening.load_plant(plant(tmp_path, rows))
    # a window of 800 days: one pump per batch, except the line's two members
    batches = _batches(p, open_exports(p), ["P2", "A1", "P1", "B1"], pd.Timedelta(days=800))
    assert sorted(map(sorted, batches)) == [["A1"], ["B1"], ["P1", "P2"]]
    # a member screened alone still reads the other member's tags
    r = screening.scan(p, pumps=["P1"], keep_series=True)
    assert running(r.series["P1"])["line_flow_m3_s"].to_numpy() == pytest.approx(160.0 / 3600)


def test_the_replay_uses_the_line_flow_and_reproduces_the_scan(tmp_path):
    flow = 60.0 + 30.0 * np.sin(np.arange(1440) / 100.0)
    data = frame(**{"P2.FT": flow, "P2.RUN": [1] * 1000 + [0] * 440})
    path = plant(tmp_path, [vessel_row("P1"), vessel_row("P2")], data)
    p = screening.load_plant(path)
    _, s = series(path)
    pump = p.pumps["P1"]
    ran = s["state"].isin(screening.BANDS).to_numpy()
    inputs, _ = apply_changes(s, pump, [])
    npsha, _ = npsh_pair(pump, p.curves["C1"], fluid_table("Water"), inputs)
    assert (npsha[ran] == s["npsha_m"].to_numpy()[ran]).all()  # exactly, as the calculator
    # a flow cap on P1 (80 -> 60 m3/h) lowers the line's flow by 20 m3/h
    cap = Change("flow_cap", "flow", "cap", 60.0 / 3600.0, "60 m3/h")
    changed, _ = apply_changes(s, pump, [cap])
    line = s["line_flow_m3_s"].to_numpy()
    assert changed["line_flow"][ran] == pytest.approx(line[ran] - 20.0 / 3600.0, rel=1e-12)
    scenarios = tmp_path / "nothing.toml"
    scenarios.write_text(
        '[[scenario]]\nname = "nothing"\n  [[scenario.change]]\n'
        '  pumps = ["P*"]\n  level_add = "0 m"\n  flow_cap = "1000 m3/h"\n'
    )
    w = screening.whatif(path, scenarios)
    plain = screening.scan(path).hours.set_index(["pump_id", "kind", "state"])["hours"]
    h = w.hours.set_index(["pump_id", "kind", "state"])
    assert (h["after_h"] == plain.loc[h.index]).all()  # exactly, not approximately
    assert w.moves.empty


def test_onset_drivers_name_the_line_flow(tmp_path):
    # P2 starts at noon: P1's margin falls by 3 m, all of it the line's flow
    data = frame(**{"P2.RUN": [0] * 720 + [1] * 720, "P2.FT": [0.0] * 720 + [80.0] * 720})
    path = plant(tmp_path, [vessel_row("P1"), vessel_row("P2")], data)
    from screening.engine.drivers import driver_shares

    p = screening.load_plant(path)
    _, s = series(path)
    base = (s["time"] < pd.Timestamp("2026-10-01 12:00", tz="UTC")).to_numpy()
    shares = driver_shares(s, p.pumps["P1"], p.curves["C1"], fluid_table("Water"), base)
    late = shares["time"] >= pd.Timestamp("2026-10-01 12:00", tz="UTC")
    assert shares.loc[late, "line_flow_m"].to_numpy() == pytest.approx(-3.0, abs=1e-9)


# --- accounting with a shared line (hypothesis, as tests/test_accounting.py) ----------------

NS_MIN = 60 * 10**9
START = pd.Timestamp("2026-10-01", tz="UTC")
LINE = SharedLine("H", (
    LineMember("V1", TagSpec("FT", "m3/s", "flow"), TagSpec("RUN", "", "status"), None, 0.02,
               1480.0),
    LineMember("V2", TagSpec("FT2", "m3/s", "flow"), None, TagSpec("ST2", "rpm", "speed"), 0.02,
               1480.0),
), TagSpec("HF", "m3/s", "flow", stale_limit=420.0))  # fmt: skip
VESSEL_PUMP = PumpSpec(
    pump_id="V1", service="", area="", fluid="Water", application="water", suction=None,
    gauge=False, temperature=TagSpec("TT", "K", "temperature"),
    flow=TagSpec("FT", "m3/s", "flow"), speed=None, run=TagSpec("RUN", "", "status"),
    tap_elevation=0.0, tap_bore=1.0, rated_speed=1480.0, bep_flow=0.02, curve_id="C",
    source="vessel", level=TagSpec("LT", "m", "length"), vessel_surface="open",
    suction_line=SuctionLine(k=2000.0), suction_line_id="H", header_flow=LINE.header_flow,
    shared_line=LINE,
)  # fmt: skip


@st.composite
def tag_series(draw, name: str, low: float, high: float):
    n = draw(st.integers(0, 40))
    offsets = draw(st.lists(st.integers(-120, 3000), min_size=n, max_size=n))
    times = np.unique(np.sort(np.array(offsets, dtype=np.int64)) * NS_MIN + START.value)
    values = np.array(draw(st.lists(st.floats(low, high), min_size=len(times),
                                    max_size=len(times))))  # fmt: skip
    bad = np.array(draw(st.lists(st.booleans(), min_size=len(times), max_size=len(times))))
    return TagSeries(name, times, values, bad.astype(bool), TagQuality(name))


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    tt=tag_series("TT", 270.0, 400.0), lt=tag_series("LT", -1.0, 8.0),
    ft=tag_series("FT", -0.01, 0.05), run=tag_series("RUN", 0.0, 1.0),
    ft2=tag_series("FT2", -0.01, 0.05), st2=tag_series("ST2", 0.0, 2000.0),
    hf=tag_series("HF", 0.0, 0.08), stale_min=st.integers(1, 240),
    window_min=st.integers(1, 3 * 1440),
)  # fmt: skip
def test_hours_add_up_to_the_window_on_a_shared_line(tt, lt, ft, run, ft2, st2, hf, stale_min,
                                                     window_min):  # fmt: skip
    end = START + pd.Timedelta(minutes=window_min)
    edges = day_edges(START, end, "Europe/Berlin")
    s = Settings(stale_min * 60.0, None, 0.05, 0.2, 2.0, 0.0)
    curve = Npsh3Curve("C", np.array([0.005, 0.02, 0.03]), np.array([2.0, 3.0, 4.5]))
    tags = {"temperature": tt, "level": lt, "flow": ft, "run": run, "header_flow": hf,
            "V2:flow": ft2, "V2:speed": st2}  # fmt: skip
    result = calculate_pump(VESSEL_PUMP, curve, Guidance(1.1, 0.6, "test"), fluid_table("Water"),
                            tags, None, s, START.value, end.value, edges)  # fmt: skip
    window_h = (end.value - START.value) / NS_PER_HOUR
    assert result.hours.sum() == pytest.approx(window_h, rel=1e-12, abs=1e-12)
    assert result.region_hours.sum() == pytest.approx(window_h, rel=1e-12, abs=1e-12)
    assert result.daily.sum(axis=1) == pytest.approx(np.diff(edges) / NS_PER_HOUR, abs=1e-9)


def test_where_the_header_goes_stale_mid_piece_the_members_sum_takes_over():
    # members sampled every 10 min (stale limit 15 min), the header once at 0 min (its stale
    # limit 7 min): the header's expiry cuts the first piece, 7 min on the header's 0.05 m³/s
    # and then the sum 0.01 + 0.015 m³/s, with no minute of no data
    def series_of(name, values):
        times = START.value + np.arange(len(values), dtype=np.int64) * 10 * NS_MIN
        bad = np.zeros(len(values), dtype=bool)
        return TagSeries(name, times, np.array(values, float), bad, TagQuality(name))

    tags = {
        "temperature": series_of("TT", [293.15] * 3), "level": series_of("LT", [5.0] * 3),
        "flow": series_of("FT", [0.01] * 3), "run": series_of("RUN", [1.0] * 3),
        "V2:flow": series_of("FT2", [0.015] * 3), "V2:speed": series_of("ST2", [1480.0] * 3),
        "header_flow": series_of("HF", [0.05]),
    }  # fmt: skip
    end = START + pd.Timedelta(minutes=30)
    curve = Npsh3Curve("C", np.array([0.005, 0.02, 0.03]), np.array([2.0, 3.0, 4.5]))
    result = calculate_pump(
        VESSEL_PUMP, curve, Guidance(1.1, 0.6, "test"), fluid_table("Water"), tags, None,
        Settings(900.0, None, 0.05, 0.2, 2.0, 0.0), START.value, end.value,
        day_edges(START, end, "UTC"), keep_series=True,
    )  # fmt: skip
    s = result.series
    assert result.hours[screening.STATES.index("no_data")] == 0.0
    q = s["line_flow_m3_s"].to_numpy()
    assert s["hours"][np.isclose(q, 0.05)].sum() == pytest.approx(7 / 60, abs=1e-12)
    assert s["hours"][np.isclose(q, 0.025)].sum() == pytest.approx(23 / 60, abs=1e-12)
