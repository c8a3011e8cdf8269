"""Onset findings for a failure review: normalisation by the physics, known events, clear
errors for a failure date outside the window and a window without data (API and command line).
Invented plants (tests/plantmaker.py); the physics reference is CoolProp (IAPWS-95 for water).
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from plantmaker import make_plant, pump_row
from typer.testing import CliRunner

import screening
from screening.cli.main import app
from screening.inputs.config import ConfigError

ROOT = Path(__file__).resolve().parents[1]
G = 9.80665  # standard gravity [m/s²] (CGPM 1901)


def _hot_history(tmp_path, events: str | None = None, hot_from_day: int = 45):
    """90 days of 10-minute samples: 58-62 °C (a daily swing), then 80 °C from ``hot_from_day``
    with nothing else changed (suction pressure 100 kPa g, flow 90 m3/h, both with noise)."""
    rng = np.random.default_rng(5)  # fixed random state
    times = pd.date_range("2026-01-01", "2026-04-01", freq="10min", inclusive="left")
    n = len(times)
    day = (times - times[0]).days.to_numpy()
    temp = 60.0 + 2.0 * np.sin(2 * np.pi * np.arange(n) / 144) + rng.normal(0, 0.1, n)
    temp[day >= hot_from_day] = 80.0 + rng.normal(0, 0.1, (day >= hot_from_day).sum())
    frame = pd.DataFrame(
        {
            "timestamp": times.strftime("%Y-%m-%d %H:%M:%S"),
            "P1.PS": (100.0 + rng.normal(0, 0.5, n)).round(3),
            "P1.TT": temp.round(3),
            "P1.FT": (90.0 + rng.normal(0, 2.0, n)).round(2),
            "P1.RUN": 1,
        }
    )
    path = make_plant(
        tmp_path, wide={"a.csv": frame}, rows=[pump_row("P1", stale_limit="15 min")],
        start="2026-01-01", end="2026-04-01",
    )  # fmt: skip
    if events is not None:
        (tmp_path / "events.csv").write_text(events)
        text = path.read_text().replace('curves = "curves.csv"',
                                        'curves = "curves.csv"\nevents = "events.csv"')  # fmt: skip
        path.write_text(text)
    return path


def test_a_hotter_liquid_outside_the_baseline_range_invents_no_loss(tmp_path):
    # The case: a baseline at 58-62 °C, later 80 °C, nothing else changed. A fit linear in
    # temperature on the baseline extrapolates the vapour pressure's curve as a straight line:
    # with CoolProp's IAPWS-95 water at 201 325 Pa absolute it misses NPSHa at 80 °C by
    # 0.94 m, a false onset. The suction condition normalised with the vapour pressure and
    # density at the recorded temperature stays at zero.
    import CoolProp.CoolProp as CP

    p = 201325.0  # 100 kPa gauge at sea level [Pa]
    temps = np.linspace(58.0, 62.0, 41) + 273.15

    def head(t):
        return (p - CP.PropsSI("P", "T", t, "Q", 0, "Water")) / (
            CP.PropsSI("D", "T", t, "P", p, "Water") * G
        )

    coef = np.polyfit(temps, [head(t) for t in temps], 1)
    assert np.polyval(coef, 353.15) - head(353.15) == pytest.approx(0.94, abs=0.01)

    r = screening.investigate(_hot_history(tmp_path), "P1", "2026-01-01", "2026-04-01")
    assert r.onset["onset"] is None and not r.ramp["chosen"]
    assert np.nanmax(np.abs(r.daily["residual_m"])) < 0.05  # noise only (0.5 kPa ~ 0.05 m)
    # the margin itself did fall (vapour pressure 19.9 -> 47.4 kPa): found, blamed on temperature
    assert abs((r.onset_margin["onset"] - pd.Timestamp("2026-02-15")).days) <= 2
    assert "the NPSH margin fell by" in r.finding and "mostly from temperature" in r.finding
    drop = head(333.15) - head(353.15)  # CoolProp: NPSHa lost between 60 and 80 °C
    assert r.onset_margin["mean_before"] - r.onset_margin["mean_after"] == pytest.approx(
        drop, abs=0.1
    )


EVENTS = """pump_id,area,time,kind,note
P1,,2026-01-20T08:00,strainer_cleaned,invented
,A,2026-03-01T12:00,inspection,invented: an event of the pump's area (A)
P1,,2026-03-20T06:30,failure,invented: tripped
"""

NO_AREA = "\n".join(line for line in EVENTS.splitlines() if ",A," not in line) + "\n"


def test_known_events_give_the_failure_and_split_the_baseline(tmp_path):
    plant = screening.load_plant(_hot_history(tmp_path, EVENTS))
    r = screening.investigate(plant, "P1", "2026-01-01", "2026-04-01")
    assert r.failed_on == pd.Timestamp("2026-03-20T06:30", tz="UTC")
    assert r.failed_on_source == "event"
    assert r.search_from == pd.Timestamp("2026-01-20T08:00", tz="UTC")
    assert r.baseline[0] == r.search_from  # the baseline starts after the maintenance
    # from the cleaning on (the pieces after 08:00 that day), to the day before the failure
    assert r.daily["date"].min() == pd.Timestamp("2026-01-20")
    assert r.daily["date"].max() == pd.Timestamp("2026-03-19")  # the day before the failure
    assert list(r.events["kind"]) == ["strainer_cleaned", "inspection", "failure"]
    assert any("taken from the known events" in n for n in r.notes)
    # --failed-on wins over the event
    given = screening.investigate(plant, "P1", "2026-01-01", "2026-04-01", failed_on="2026-03-25")
    assert given.failed_on_source == "given"
    assert given.failed_on == pd.Timestamp("2026-03-25", tz="UTC")


def test_the_onset_command_shows_the_events_and_writes_them(tmp_path):
    path = _hot_history(tmp_path, NO_AREA)
    out = tmp_path / "onset"
    res = CliRunner().invoke(app, ["onset", str(path), "P1", "--from", "2026-01-01",
                                   "--to", "2026-04-01", "--out", str(out)])  # fmt: skip
    assert res.exit_code == 0, res.output
    api = screening.investigate(path, "P1", "2026-01-01", "2026-04-01")
    assert api.finding in res.output  # the command prints the API's finding
    html = (out / "onset.html").read_text()
    assert "strainer_cleaned" in html and "<details><summary>Method</summary>" in html
    assert "failure" in html and "against the baseline [m]" in html  # the evidence figure
    events = pd.read_csv(out / "events.csv")
    assert list(events["kind"]) == ["strainer_cleaned", "failure"]
    daily = pd.read_csv(out / "onset_daily.csv")
    assert len(daily) == len(api.daily)


@pytest.mark.parametrize(
    ("row", "match"),
    [
        ("P9,,2026-01-20T08:00,failure,x", r"events.csv line 2, column pump_id: 'P9' is not"),
        ("P1,,2026-01-20T08:00,broke,x", r"line 2, column kind: 'broke' is not one of failure"),
        ("P1,,20.01.2026,failure,x", r"line 2, column time: time '20.01.2026' is not ISO 8601"),
        (",,2026-01-20T08:00,failure,x", r"line 2: give either pump_id or area"),
    ],
)
def test_a_bad_events_row_is_named(tmp_path, row, match):
    path = _hot_history(tmp_path, "pump_id,area,time,kind,note\n" + row + "\n")
    with pytest.raises(ConfigError, match=match):
        screening.load_plant(path)


def test_the_scan_report_shows_events_on_the_pump_page(tmp_path):
    path = _hot_history(tmp_path, NO_AREA)
    out = tmp_path / "report"
    res = CliRunner().invoke(app, ["scan", str(path), "--out", str(out), "--processes", "1",
                                   "--quiet"])  # fmt: skip
    assert res.exit_code == 0, res.output
    page = next((out / "pumps").glob("*.html")).read_text()
    assert "Known events" in page and "strainer cleaned" in page
    assert '"text":"failure"' in page.replace(" ", "")  # marked on the NPSH plot
    assert list(pd.read_csv(out / "events.csv")["kind"]) == ["strainer_cleaned", "failure"]


def test_a_failure_date_after_the_window_is_a_clear_error(tmp_path):
    path = _hot_history(tmp_path)
    match = r"failure date 2026-05-02 00:00 is after the window's end"
    with pytest.raises(ValueError, match=match):
        screening.investigate(path, "P1", "2026-01-01", "2026-04-01", failed_on="2026-05-02")
    res = CliRunner().invoke(app, ["onset", str(path), "P1", "--from", "2026-01-01",
                                   "--to", "2026-04-01", "--failed-on", "2026-05-02",
                                   "--out", str(tmp_path / "o")])  # fmt: skip
    assert res.exit_code == 1
    assert "failure date 2026-05-02 00:00 is after the window's end" in res.output
    assert not (tmp_path / "o" / "onset.html").exists()


def test_a_window_without_data_is_a_clear_error(tmp_path):
    path = _hot_history(tmp_path)
    match = r"pump P1: the window 2025-06-01 .* has no running sample with a known margin \(hours"
    with pytest.raises(ValueError, match=match):
        screening.investigate(path, "P1", "2025-06-01", "2025-07-01")
    res = CliRunner().invoke(app, ["onset", str(path), "P1", "--from", "2025-06-01",
                                   "--to", "2025-07-01", "--out", str(tmp_path / "o")])  # fmt: skip
    assert res.exit_code == 1
    assert "has no running sample with a known margin" in res.output
    assert "check the window against the exports' time range" in res.output


FT = 0.3048  # the international foot [m] (exact; international yard and pound, 1959)


def test_the_onset_page_and_finding_in_us_units(tmp_path):
    """``--units us``: the printed finding, the page's finding, its charts and its episode
    table in feet; the tables beside the page stay in metres (issue 19)."""
    path = _hot_history(tmp_path)
    out = tmp_path / "onset_us"
    args = ["onset", str(path), "P1", "--from", "2026-01-01", "--to", "2026-04-01"]
    res = CliRunner().invoke(app, [*args, "--out", str(out), "--units", "us"])
    assert res.exit_code == 0, res.output
    api = screening.investigate(path, "P1", "2026-01-01", "2026-04-01")
    size = api.onset_margin["mean_before"] - api.onset_margin["mean_after"]
    assert f"fell by {abs(size):.2f} m" in api.finding
    assert f"fell by {abs(size) / FT:.2f} ft" in res.output  # the same step, in feet
    assert " m " not in res.output.split("\n")[0]  # no length left in metres
    html = (out / "onset.html").read_text()
    assert f"fell by {abs(size) / FT:.2f} ft" in html
    assert "against the baseline [ft]" in html and "margin change against baseline [ft]" in html
    daily = pd.read_csv(out / "onset_daily.csv")
    assert "residual_m" in daily.columns  # the tables stay SI
    # a unit system the tool does not know is refused before any work
    bad = CliRunner().invoke(app, ["onset", str(path), "P1", "--from", "2026-01-01",
                                   "--to", "2026-04-01", "--out", str(tmp_path / "x"),
                                   "--units", "imperial"])  # fmt: skip
    assert bad.exit_code == 2 and "'imperial' is not 'si' or 'us'" in bad.output
    assert not (tmp_path / "x").exists()


def test_the_onset_episode_table_in_feet(tmp_path):
    """The episode table of the invented year-long history (HX-701) in feet: each length cell
    is the CSV's metres over 0.3048, to 0.01 ft."""
    r = screening.investigate(ROOT / "configs" / "demo_history.toml", "HX-701",
                              "2025-11-01", "2026-11-01")  # fmt: skip
    page = screening.write_onset_report(r, tmp_path / "us", units="us")
    html = page.read_text()
    table = html[html.index("Episodes below the guidance") :].split("</table>")[0]
    heads = re.findall(r"<th>([^<]*)</th>", table)
    assert "suction_pressure [ft]" in heads and not any(h.endswith("_m") for h in heads)
    first = re.findall(r"<td>([^<]*)</td>", table.split("<tbody>")[1].split("</tr>")[0])
    metres = pd.read_csv(tmp_path / "us" / "episodes.csv")["suction_pressure_m"].iloc[0]
    assert first[heads.index("suction_pressure [ft]")] == f"{metres / FT:.2f}"
    with pytest.raises(ValueError, match="units must be one of"):
        screening.write_onset_report(r, tmp_path / "x", units="imperial")
