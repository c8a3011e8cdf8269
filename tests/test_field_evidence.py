"""Field evidence: developed head, affinity normalisation, the baseline, the field NPSH3 and the
vibration trend.

References: ISO 9906:2012 §3.2, pump total head H = (p2 − p1)/(ρg) + (v2² − v1²)/(2g) +
(z2 − z1) (from memory; the text was not at hand); water density from CoolProp (IAPWS-95) and
check-values.md (998.16 kg/m³ at 20 °C); the affinity laws Q ∝ n, H ∝ n² (Karassik, *Pump
Handbook* §2.2; check-values.md); NPSH3 as the NPSH at a 3 % head drop (ANSI/HI 1.6).
Synthetic pumps below have a known 3 % drop point (planted truth).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from CoolProp.CoolProp import PropsSI
from plantmaker import header_with, make_plant, pump_row, steady_frame

import screening
from screening.engine.field_fit import broken_stick, huber_polyfit, weighted_quantile
from screening.engine.field_head import field_npsh3_bin
from screening.engine.field_vibration import by_margin
from screening.physics.head import HeadCurve, developed_head, to_rated_speed

G = 9.80665  # standard gravity, exact by definition (check-values.md)


def test_developed_head_by_hand_with_coolprop_density():
    # ISO 9906:2012 §3.2 (from memory). Water at 20 °C, saturated liquid: CoolProp.
    rho = PropsSI("D", "T", 293.15, "Q", 0, "Water")
    assert rho == pytest.approx(998.16, abs=0.01)  # check-values.md, IAPWS-95
    # by hand: 150 kPa a in, 650 kPa a out, 0.05 m³/s, bores 200 and 150 mm, outlet tap 0.5 m up
    v1 = 0.05 / (np.pi * 0.2**2 / 4)  # 1.5915 m/s
    v2 = 0.05 / (np.pi * 0.15**2 / 4)  # 2.8294 m/s
    expected = 500_000 / (rho * G) + (v2**2 - v1**2) / (2 * G) + 0.5
    # 500000 / 9788.6 = 51.080 m of pressure head + 0.2790 m of velocity head + 0.5 m
    assert expected == pytest.approx(51.859, abs=0.001)
    got = developed_head(150_000.0, 650_000.0, rho, 0.05, 0.2, 0.15, 0.0, 0.5)
    assert float(got) == pytest.approx(expected, rel=1e-12)


def test_affinity_normalisation_by_hand():
    # Karassik §2.2: at 90 % speed a pump giving 0.09 m³/s at 40.5 m gives, at rated speed,
    # 0.09 / 0.9 = 0.1 m³/s and 40.5 / 0.81 = 50 m
    q, h = to_rated_speed(np.array([0.09]), np.array([40.5]), 0.9)
    assert q[0] == pytest.approx(0.1, rel=1e-12)
    assert h[0] == pytest.approx(50.0, rel=1e-12)


def test_vendor_head_curve_is_not_extrapolated():
    curve = HeadCurve("H1", [0.01, 0.02, 0.03], [60.0, 55.0, 45.0])
    assert curve.at(0.02) == pytest.approx(55.0)
    assert np.isnan(curve.at(0.035)) and np.isnan(curve.at(0.005))


def test_huber_baseline_ignores_outliers():
    # a quadratic head curve with 5 % of the samples 30 % low (a transmitter fault): least
    # squares would be dragged down, the Huber fit is not (Huber 1964)
    rng = np.random.default_rng(1)
    x = rng.uniform(0.6, 1.2, 4000)
    truth = 60.0 - 2.0 * x - 8.0 * x**2
    y = truth + rng.normal(0, 0.1, x.size)
    bad = rng.random(x.size) < 0.05
    y[bad] *= 0.7
    coef, scale = huber_polyfit(x, y, np.ones(x.size), 2)
    fitted = np.polynomial.polynomial.polyval(x, coef)
    assert np.max(np.abs(fitted - truth)) < 0.1
    assert scale == pytest.approx(0.1, rel=0.2)


def test_weighted_quantiles():
    # equal weights: numpy's "hazen" method (Hyndman and Fan 1996, definition 5)
    v = np.random.default_rng(0).normal(size=101)
    q = [0.05, 0.3, 0.5, 0.9]
    assert weighted_quantile(v, np.ones(v.size), q) == pytest.approx(
        np.quantile(v, q, method="hazen"), rel=1e-12
    )
    # by hand: weights 1, 1, 2 on 1, 2, 3 sit at (cumulative − half own) / total = 0.125,
    # 0.375, 0.75; the median lies a third of the way from 2 to 3
    assert weighted_quantile([1.0, 2.0, 3.0], [1.0, 1.0, 2.0], 0.5) == pytest.approx(7 / 3)


def _synthetic_bin(
    lowest: float, x3: float = 1.3, knee: float = 1.6, power: float = 1.0, random_state: int = 7
):
    """A month of one-minute pieces whose margin ratio sweeps slowly from 2.5 down to
    ``lowest`` and back each day; the head ratio is flat (1) above the knee and 3 % down at
    ``x3`` (planted truth), with transmitter noise of 0.4 %."""
    rng = np.random.default_rng(random_state)
    minutes = np.arange(30 * 1440)
    phase = (minutes % 1440) / 1440
    sigma = lowest + (2.5 - lowest) * (0.5 + 0.5 * np.cos(2 * np.pi * phase))
    depth = np.clip((knee - sigma) / (knee - x3), 0.0, None)
    ratio = 1.0 - 0.03 * depth**power + rng.normal(0.0, 0.004, minutes.size)
    w = np.full(minutes.size, 1.0 / 60.0)
    blocks = minutes // 60
    return sigma, ratio, w, blocks


def test_field_npsh3_recovered_within_its_interval():
    # planted truth: the 3 % drop at 1.3 times the vendor's NPSH3, history down to 0.9
    row = field_npsh3_bin(*_synthetic_bin(0.9))
    assert row["status"] == "estimated"
    assert row["field_to_vendor_p05"] <= 1.3 <= row["field_to_vendor_p95"]
    assert row["field_to_vendor"] == pytest.approx(1.3, abs=0.02)
    assert row["fall_begins_margin_ratio"] == pytest.approx(1.6, abs=0.04)


def test_field_npsh3_of_a_curved_fall_stays_close():
    # a fall that steepens (power 1.5) is not a straight line: the broken stick's 3 % point
    # stays within 0.05 of the truth (a tolerance of our choice for a screening estimate)
    row = field_npsh3_bin(*_synthetic_bin(0.9, power=1.5))
    assert row["status"] == "estimated"
    assert row["field_to_vendor"] == pytest.approx(1.3, abs=0.05)


def test_field_npsh3_is_a_bound_when_the_history_never_got_there():
    # the same pump, but the margin never went below 1.45: the head had begun to fall (knee
    # 1.6) but never by 3 %, so the field NPSH3 is only known to lie below 1.45 x vendor
    row = field_npsh3_bin(*_synthetic_bin(1.45))
    assert row["status"] == "not_reached"
    assert np.isnan(row["field_to_vendor"])
    assert row["lowest_margin_ratio"] == pytest.approx(1.45, abs=0.02)
    assert "bound" in row["note"] and "never went lower" in row["note"]


def test_field_npsh3_needs_hours():
    sigma, ratio, w, blocks = _synthetic_bin(0.9)
    row = field_npsh3_bin(sigma[:600], ratio[:600], w[:600], blocks[:600])  # 10 h
    assert row["status"] == "too_few_hours"


def test_broken_stick_exact_on_a_clean_stick():
    # y = 1 above 1.5, falling 0.1 per unit of ratio below: the 3 % point is 1.5 − 0.3 = 1.2
    x = np.round(np.arange(0.8, 2.5, 0.02), 2)
    y = 1.0 + 0.1 * np.minimum(x - 1.5, 0.0)
    fit = broken_stick(x, y, np.ones(x.size))
    assert fit.b == pytest.approx(1.5, abs=1e-9)
    assert fit.x3 == pytest.approx(1.2, abs=1e-9)
    assert fit.significant


def test_vibration_rises_as_the_margin_falls():
    sigma, _, w, blocks = _synthetic_bin(0.9)
    rng = np.random.default_rng(3)
    vib = 0.002 + 0.001 * np.clip(1.8 - sigma, 0, None) + rng.normal(0, 1e-4, sigma.size)
    bands, trend = by_margin("P", vib, sigma, w, blocks)
    assert trend["verdict"] == "rises as the margin falls"
    assert trend["p95"] < 0
    assert bands["hours"].sum() == pytest.approx(w.sum())
    flat = 0.002 + rng.normal(0, 1e-4, sigma.size)
    assert by_margin("P", flat, sigma, w, blocks)[1]["verdict"] == "no clear trend with the margin"


FIELD_COLUMNS = {
    "discharge_pressure_tag": "P1.PD", "discharge_pressure_unit": "kPa",
    "discharge_pressure_reference": "gauge", "discharge_elevation": "0.5 m",
    "discharge_bore": "80 mm",
}  # fmt: skip


def _field_plant(tmp_path, columns: dict, with_tag: bool = True):
    frame = steady_frame(periods=2 * 1440, pressure_kpa=100.0)
    if with_tag:
        frame["P1.PD"] = 400.0
    row = pump_row("P1", **columns)
    return make_plant(tmp_path, wide={"a.csv": frame}, rows=[row], header=header_with(*columns))


def test_developed_head_through_the_scan(tmp_path):
    # 100 kPa g in, 400 kPa g out, 80 m³/h, bores 100 mm (register default) and 80 mm, outlet
    # tap 0.5 m above the suction tap: ISO 9906 §3.2 (from memory) with CoolProp's density
    res = screening.scan(_field_plant(tmp_path, FIELD_COLUMNS))
    ev = res.evidence["P1"]
    rho = PropsSI("D", "T", 293.15, "Q", 0, "Water")
    q = 80.0 / 3600.0
    v1, v2 = q / (np.pi * 0.1**2 / 4), q / (np.pi * 0.08**2 / 4)
    expected = 300_000 / (rho * G) + (v2**2 - v1**2) / (2 * G) + 0.5  # 31.74 m
    assert ev.baseline_points["head_median_m"].iloc[0] == pytest.approx(expected, abs=0.01)
    # a steady pump at ample margin: no head loss, and nothing below the guidance
    row = res.summary.set_index("pump_id").loc["P1"]
    assert row["head_loss_hours"] == 0.0
    assert row["head_baseline"] == "fitted"


def test_missing_discharge_tag_leaves_the_pump_screened(tmp_path):
    res = screening.scan(_field_plant(tmp_path, FIELD_COLUMNS, with_tag=False))
    assert res.problems.empty
    row = res.summary.iloc[0]
    assert row["running_hours"] == pytest.approx(row["window_hours"])
    assert "P1.PD (discharge_pressure) not found" in res.evidence["P1"].notes[0]


def test_pump_without_field_tags_has_no_evidence(tmp_path):
    frame = steady_frame()
    path = make_plant(tmp_path, wide={"a.csv": frame}, rows=[pump_row("P1")])
    res = screening.scan(path)
    assert res.evidence == {}
    assert pd.isna(res.summary["head_loss_hours"].iloc[0])


@pytest.mark.parametrize(
    ("columns", "message"),
    [
        ({"discharge_bore": "80 mm"}, "discharge_bore.*no discharge_pressure_tag"),
        ({**FIELD_COLUMNS, "discharge_bore": "0.1 mm"}, "discharge_bore.*from 1 mm"),
        ({**FIELD_COLUMNS, "head_baseline": "guess"}, "head_baseline.*'fitted' or 'vendor'"),
        ({"vibration_tag": "P1.VIB", "vibration_unit": "kPa"}, "vibration_unit.*not a velocity"),
    ],
)
def test_register_refuses_bad_field_columns(tmp_path, columns, message):
    plant = screening.load_plant(_field_plant(tmp_path, columns))
    assert "P1" in plant.problems
    with pytest.raises(ValueError, match=message):
        raise ValueError(plant.problems["P1"])
