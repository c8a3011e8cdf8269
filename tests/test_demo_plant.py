"""End to end: `pumpscreen scan` on the bundled (invented) demo plant through the command line.

The planted events are listed in demo_exports/planted_events.csv and demo_exports/README.md;
the generator computed its own truth before adding data faults. These checks are of the
invented demo (the physics is checked against published references elsewhere).
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

import screening
from screening.cli.main import app

ROOT = Path(__file__).resolve().parents[1]
CONFIG = ROOT / "configs" / "demo_plant.toml"
# 2026-10-01 to 2026-11-01 in Europe/Berlin: 31 days plus the hour repeated on 10-25
WINDOW_H = 31 * 24 + 1


@pytest.fixture(scope="module")
def demo_report(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo") / "report"
    res = CliRunner().invoke(app, ["scan", str(CONFIG), "--out", str(out)])
    assert res.exit_code == 0, res.output
    return out


def _summary(out: Path) -> pd.DataFrame:
    return pd.read_csv(out / "summary.csv").set_index("pump_id")


def test_every_pump_screened_and_every_hour_counted(demo_report):
    hours = pd.read_csv(demo_report / "hours.csv")
    assert hours["pump_id"].nunique() == 37
    per_pump = hours.groupby(["pump_id", "kind"])["hours"].sum()
    assert len(per_pump) == 74  # each kind of state adds up on its own
    assert per_pump.to_numpy() == pytest.approx(WINDOW_H, rel=1e-12)
    assert pd.read_csv(demo_report / "not_screened.csv").empty


def test_planted_process_events_are_revealed(demo_report):
    s = _summary(demo_report)
    # the fouling strainer leads the ranking, with hours below NPSH3
    assert s.index[0] == "RW-502"
    assert s.loc["RW-502", "below_npsh3_hours"] > 5
    # hot spell, drive running fast: below guidance but never below NPSH3
    for pid in ("CW-103", "DH-202"):
        assert s.loc[pid, "below_guidance_hours"] > 10
        assert s.loc[pid, "below_npsh3_hours"] == 0
    # throttled methanol pump: about 69 h below the curve's first point
    assert s.loc["MT-801", "off_curve_hours"] == pytest.approx(69.0, abs=1.0)
    # vessel-fed pumps: a deaerator pressure transient (brief dips below NPSH3), a hotwell
    # drawn down (below guidance on 10-21), an intake at low water, a pump run below its
    # minimum stable flow every night
    assert s.loc["BF-311", "below_npsh3_hours"] > 0
    assert s.loc["CD-412", "below_guidance_hours"] == pytest.approx(4.75, abs=0.5)
    assert s.loc["RW-504", "below_guidance_hours"] > 10
    assert s.loc["DM-151", "below_min_flow_hours"] > 150
    # a refrigerant (R407C, bubble point) receiver pulled down one afternoon; a glycol loop
    # screened on water's vapour pressure, as its register row chooses
    assert 0.5 < s.loc["RT-951", "below_guidance_hours"] < 3
    assert s.loc["GL-121", "vapour_pressure_model"].startswith("water vapour pressure")
    # pumps without a planted event stay above guidance
    quiet = s.drop(index=["RW-502", "CW-103", "DH-202", "BF-311", "CD-412", "RW-504", "RT-951"])
    assert (quiet["below_guidance_hours"] == 0).all()


def test_planted_data_faults_are_counted(demo_report):
    s = _summary(demo_report)
    q = pd.read_csv(demo_report / "data_quality.csv")
    # frozen suction transmitter on CW-102A, 2 days minus the 6 h allowance
    assert s.loc["CW-102A", "bad_data_hours"] == pytest.approx(41.5, abs=0.5)
    assert q.query("pump_id == 'CW-102A' and role == 'suction'")["frozen"].iloc[0] > 2000
    # dropouts: no data for about as long as the gap
    assert s.loc["CW-101A", "no_data_hours"] == pytest.approx(6.5, abs=0.25)
    assert s.loc["BF-301B", "no_data_hours"] == pytest.approx(7.5, abs=0.5)
    # quality words and text values are counted with the words themselves
    assert q.query("pump_id == 'LP-901A' and role == 'suction'")["bad_quality"].iloc[0] > 0
    assert "xmtr-fault" in q.query("pump_id == 'CH-702'")["words"].str.cat()
    # duplicates and out-of-order rows in the toluene file
    tl = q.query("pump_id == 'TL-811'")
    assert tl["duplicates"].sum() > 0 and tl["out_of_order"].sum() > 0


def test_cli_and_api_agree_on_demo(demo_report):
    api = screening.scan(CONFIG)
    cli = pd.read_parquet(demo_report / "hours.parquet")
    merged = cli.merge(api.hours, on=["pump_id", "kind", "state"], suffixes=("_cli", "_api"))
    assert len(merged) == 37 * (len(screening.STATES) + len(screening.REGIONS))
    assert merged["hours_cli"].to_numpy() == pytest.approx(merged["hours_api"].to_numpy())


def test_the_hotwell_pumps_share_their_suction_header():
    # CD-412 and CD-413 on the header HW410-SUCTION (design point 0.35 m at 180 m3/h): where
    # both run, each loses k·(Q412 + Q413)² (hand calculation from the register's design
    # point), not the loss at its own flow
    plant = screening.load_plant(CONFIG)
    line = plant.pumps["CD-412"].shared_line
    assert line is not None and {m.pump_id for m in line.members} == {"CD-412", "CD-413"}
    r = screening.scan(plant, pumps=["CD-412", "CD-413"], keep_series=True)
    k = 0.35 / (180.0 / 3600.0) ** 2
    s412, s413 = r.series["CD-412"], r.series["CD-413"]
    ran = s413["state"].isin(screening.BANDS) & (s413["hours"] > 0)
    assert s413.loc[ran, "hours"].sum() == pytest.approx(88.0, abs=0.5)  # weekday mornings
    both = s412.set_index("time").loc[s413.loc[ran, "time"]]
    total = both["flow_m3_s"].to_numpy() + s413.loc[ran, "flow_m3_s"].to_numpy()
    assert both["line_flow_m3_s"].to_numpy() == pytest.approx(total, rel=1e-12)
    assert (k * total**2).mean() > 2 * (k * both["flow_m3_s"].to_numpy() ** 2).mean()
