"""Onset investigation on invented data with a planted onset of known date and cause.

The change-point method itself is checked against a brute-force least-squares split in
tests/test_episodes.py; here the whole chain (scan, residual, episodes, drivers) must put the
onset near the planted day and blame the planted input.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from plantmaker import make_plant, pump_row
from typer.testing import CliRunner

import screening
from screening.cli.main import app


def _history(tmp_path, cause: str):
    rng = np.random.default_rng(11)  # fixed random state
    times = pd.date_range("2026-01-01", "2026-04-01", freq="10min", inclusive="left")
    n = len(times)
    day = (times - times[0]).days.to_numpy()
    pressure = -40.0 + rng.normal(0, 0.8, n)  # kPa g: a suction under slight vacuum
    temp = 20.0 + 2.0 * np.sin(2 * np.pi * np.arange(n) / 144) + rng.normal(0, 0.2, n)
    flow = 90.0 + rng.normal(0, 2.0, n)
    if cause == "pressure":
        pressure[day >= 40] -= 25.0  # planted: suction pressure down 25 kPa from day 40
    elif cause == "temperature":
        temp[day >= 50] += 55.0  # planted: liquid 55 K warmer from day 50
    elif cause == "episodes":
        for a, b in EPISODES:  # planted: the suction pressure down 25 kPa for a few hours
            pressure[(times >= a) & (times < b)] -= 25.0
    frame = pd.DataFrame(
        {
            "timestamp": times.strftime("%Y-%m-%d %H:%M:%S"),
            "P1.PS": pressure.round(3),
            "P1.TT": temp.round(3),
            "P1.FT": flow.round(2),
            "P1.RUN": 1,
        }
    )
    return make_plant(
        tmp_path, wide={"a.csv": frame}, rows=[pump_row("P1", stale_limit="15 min")],
        start="2026-01-01", end="2026-04-01",
    )  # fmt: skip


EPISODES = [
    (pd.Timestamp("2026-01-31 08:00"), pd.Timestamp("2026-01-31 14:00")),
    (pd.Timestamp("2026-02-25 02:00"), pd.Timestamp("2026-02-25 03:30")),
    (pd.Timestamp("2026-03-10 22:10"), pd.Timestamp("2026-03-11 09:40")),
]
# A loss of suction pressure is a change of the suction condition (the flow-normalised margin
# steps); a hotter liquid at the same suction pressure is not (the normalisation follows vapour
# pressure and density with the recorded temperature): it is found in the exposure and blamed
# on temperature.
PLANTED = [
    ("pressure", 40, "suction_pressure", "onset"),
    ("temperature", 50, "temperature", "onset_exposure"),
]


@pytest.mark.parametrize(("cause", "day", "driver", "where"), PLANTED)
def test_planted_onset_found_and_blamed(tmp_path, cause, day, driver, where):
    path = _history(tmp_path, cause)
    r = screening.investigate(path, "P1", "2026-01-01", "2026-04-01")
    planted = pd.Timestamp("2026-01-01") + pd.Timedelta(days=day)
    found = getattr(r, where)
    assert found["onset"] is not None
    assert abs((pd.Timestamp(found["onset"]) - planted).days) <= 3
    if cause == "temperature":
        assert r.onset["onset"] is None  # no invented change of the suction condition
        assert np.nanmax(np.abs(r.daily["residual_m"])) < 0.05
    late = r.drivers.tail(20)
    shares = {k: late[f"{k}_m"].mean() for k in ("suction_pressure", "temperature", "flow")}
    assert min(shares, key=shares.get) == driver
    assert len(r.episodes) >= 1
    assert r.episodes["start"].min() >= planted.tz_localize("UTC") - pd.Timedelta(days=1)
    # per episode too, the planted input carries the loss
    per = r.episodes[[f"{k}_m" for k in ("suction_pressure", "temperature", "flow")]].mean()
    assert per.idxmin() == f"{driver}_m"


def test_onset_command_writes_page_and_tables(tmp_path):
    path = _history(tmp_path, "pressure")
    out = tmp_path / "onset"
    res = CliRunner().invoke(app, ["onset", str(path), "P1", "--from", "2026-01-01",
                                   "--to", "2026-04-01", "--failed-on", "2026-03-20",
                                   "--out", str(out)])  # fmt: skip
    assert res.exit_code == 0, res.output
    assert "fell by" in res.output and "February 2026" in res.output
    for name in ("onset_hours", "episodes", "drivers", "before_failure"):
        assert (out / f"{name}.csv").exists() and (out / f"{name}.parquet").exists()
    html = (out / "onset.html").read_text()
    assert '"text":"failure"' in html.replace(" ", "")  # the failure date is marked
    assert "screening aid, not a design or safety determination" in html
    before = pd.read_csv(out / "before_failure.csv").set_index("span_days")
    # from day 40 (2026-02-10) on, the pump is below guidance nearly all the time: the 30 days
    # before the failure are almost all exposure
    assert before.loc[30, "below_guidance_h"] > 0.9 * 30 * 24


def test_year_long_demo_history_weekly(tmp_path):
    """The invented year-long history extract (demo_exports/README.md): HX-702's cooling water
    runs 12 K warmer from 2026-04-10; a year's window is summarised per week."""
    from pathlib import Path

    config = Path(__file__).resolve().parents[1] / "configs" / "demo_history.toml"
    r = screening.investigate(config, "HX-702", "2025-11-01", "2026-11-01")
    assert r.period == "week"
    # warmer water at the same suction pressure: the suction condition (normalised with the
    # vapour pressure and density at the recorded temperature) does not change, the margin does
    assert r.onset["onset"] is None
    assert abs((pd.Timestamp(r.onset_margin["onset"]) - pd.Timestamp("2026-04-10")).days) <= 3
    assert "the NPSH margin fell by" in r.finding and "mostly from temperature" in r.finding
    weeks = r.hours["date"]
    assert (weeks.diff().dropna() == pd.Timedelta(days=7)).all()


def test_year_long_demo_history_slow_fouling(tmp_path):
    """HX-701's strainer fouls from 2026-06-15 until the pump fails on 2026-09-20 (invented
    history): a ramp, whose start the broken-stick fit finds, not a step."""
    from pathlib import Path

    config = Path(__file__).resolve().parents[1] / "configs" / "demo_history.toml"
    r = screening.investigate(config, "HX-701", "2025-11-01", "2026-11-01", failed_on="2026-09-20")
    assert r.ramp["chosen"]
    # the loss grows slowly at first (it follows the strainer's blockage), so allow two weeks
    assert abs((pd.Timestamp(r.ramp["onset"]) - pd.Timestamp("2026-06-15")).days) <= 14
    assert "a steady decline of the suction condition of" in r.finding
    assert "per month from about" in r.finding and "mostly from suction pressure" in r.finding
    # the page shows the evidence: the fitted decline over the daily points, the interval of
    # its start shaded, the failure marked; the method collapsed
    page = screening.write_onset_report(r, tmp_path / "onset")
    html = page.read_text()
    for text in ("fitted decline (broken stick)", "5-95 % interval of the start",
                 "suction condition (daily)", "<details><summary>Method</summary>"):  # fmt: skip
        assert text in html
    assert '"text":"failure"' in html.replace(" ", "")


def test_episode_settings_from_the_plant_file_and_overridden(tmp_path):
    path = _history(tmp_path, "pressure")
    text = path.read_text()
    path.write_text(text.replace("[running]", "[onset]\nmin_hours = 100000.0\n\n[running]"))
    r = screening.investigate(path, "P1", "2026-01-01", "2026-04-01")
    assert r.episodes.empty  # no episode has 100 000 h of exposure in a quarter
    again = screening.investigate(path, "P1", "2026-01-01", "2026-04-01", min_duration_h=0.5)
    assert len(again.episodes) >= 1  # the argument (the command line's option) wins
    path.write_text(text.replace("[running]", "[onset]\nleave_above = 0.9\n\n[running]"))
    with pytest.raises(screening.ConfigError, match=r"\[onset\] leave_above \(0.9\) must be"):
        screening.investigate(path, "P1", "2026-01-01", "2026-04-01")


def test_a_baseline_without_running_samples_is_a_clear_error(tmp_path):
    path = _history(tmp_path, "pressure")
    with pytest.raises(ValueError, match="has no running sample with a known margin; choose"):
        screening.investigate(path, "P1", "2026-01-01", "2026-04-01",
                              baseline="2025-06-01..2025-07-01")  # fmt: skip


def test_planted_episodes_are_found_to_the_sample(tmp_path):
    # Three planted stretches of low suction pressure (10-minute samples, UTC): each episode
    # starts at the first low sample and ends at the first normal one, so start, end and
    # duration match exactly (the tolerance the issue allows is one sample, 10 min).
    r = screening.investigate(_history(tmp_path, "episodes"), "P1", "2026-01-01", "2026-04-01")
    assert len(r.episodes) == len(EPISODES)
    for (a, b), e in zip(EPISODES, r.episodes.itertuples(), strict=True):
        assert abs(e.start - a.tz_localize("UTC")) <= pd.Timedelta(minutes=10)
        assert abs(e.end - b.tz_localize("UTC")) <= pd.Timedelta(minutes=10)
        assert e.duration_h == pytest.approx((b - a) / pd.Timedelta(hours=1), abs=1 / 6)
        assert e.suction_pressure_m < -2.0  # 25 kPa of water is about -2.5 m of margin


def test_a_clean_series_gives_no_onset_and_no_episode(tmp_path):
    r = screening.investigate(_history(tmp_path, "none"), "P1", "2026-01-01", "2026-04-01")
    assert r.onset["onset"] is None and r.onset_exposure["onset"] is None
    assert not r.ramp["chosen"]
    assert r.episodes.empty
    assert "no lasting change" in r.finding
