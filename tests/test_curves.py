"""NPSH3 curves: speed scaling by the affinity laws, no extrapolation, monotone interpolation.

References: the affinity laws (any pump handbook; Karassik et al., *Pump Handbook*) and the
speed-scaling worked case of Henshaw (Pumps & Systems 2009), both as gathered in
/work/shared/reference/check-values.md; Fritsch and Carlson, SIAM J. Numer. Anal. 17 (1980)
238-246 for the shape preservation of PCHIP; the ANSI/HI definition of the suction specific
speed in U.S. units.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from screening.inputs.units import to_si
from screening.physics.curves import CurveError, Npsh3Curve, suction_specific_speed

FT = 0.3048  # [m], exact


def flat_curve_14_ft():
    """A flat 14 ft curve from 100 to 1000 gpm (flat, so only the head scaling shows)."""
    return Npsh3Curve(
        "flat", to_si([100.0, 1000.0], "gpm", "flow"), to_si([14.0, 14.0], "ft", "length")
    )


def linear_curve():
    """NPSH3 = 2 m + 100 s/m² · Q over 0.01-0.05 m³/s (collinear points).

    PCHIP reproduces collinear data exactly (every node slope equals the common secant slope),
    so the interpolated values are known by hand.
    """
    flow = np.array([0.01, 0.02, 0.03, 0.05])
    return Npsh3Curve("linear", flow, 2.0 + 100.0 * flow)


# --- speed scaling --------------------------------------------------------------------------


def test_henshaw_worked_case_k_1_5():
    # Henshaw (Pumps & Systems 2009, via check-values.md): 14 ft at 3550 rpm scaled with
    # k = 1.5 to 1750 rpm gives 4.8 ft. Printed to 0.1 ft: ±0.05 ft.
    curve = flat_curve_14_ft()
    q = to_si(200.0, "gpm", "flow")  # maps to 406 gpm at 3550 rpm, on the curve
    npsh3 = curve.at_speed(q, 1750.0, reference_speed=3550.0, exponent=1.5)
    assert float(npsh3) / FT == pytest.approx(4.8, abs=0.05)
    # And the exact affinity-law figure, 14·(1750/3550)^1.5 = 4.8455 ft (our arithmetic).
    assert float(npsh3) / FT == pytest.approx(14.0 * (1750.0 / 3550.0) ** 1.5, rel=1e-12)


def test_default_exponent_is_conservative_in_each_direction():
    # Without a register value, NPSH3 takes the larger value in each direction: k = 1.5 below
    # rated speed (Henshaw, Pumps & Systems 2009, via check-values.md) and k = 2 above it
    # (affinity laws, any pump handbook). Below: 14·(1750/3550)^1.5 = 4.8455 ft, against
    # 3.4021 ft with k = 2 (our arithmetic).
    curve = flat_curve_14_ft()
    q = to_si(200.0, "gpm", "flow")
    npsh3 = float(curve.at_speed(q, 1750.0, reference_speed=3550.0)) / FT
    assert npsh3 == pytest.approx(14.0 * (1750.0 / 3550.0) ** 1.5, rel=1e-12)
    assert npsh3 == pytest.approx(4.8, abs=0.05)  # Henshaw's printed figure, to 0.1 ft
    # Above: 14·(3900/3550)² = 16.897 ft with k = 2 (16.11 ft with k = 1.5; our arithmetic).
    q = to_si(400.0, "gpm", "flow")
    npsh3 = float(curve.at_speed(q, 3900.0, reference_speed=3550.0)) / FT
    assert npsh3 == pytest.approx(14.0 * (3900.0 / 3550.0) ** 2, rel=1e-12)
    # A register value applies in both directions.
    npsh3 = float(curve.at_speed(q, 3900.0, reference_speed=3550.0, exponent=1.5)) / FT
    assert npsh3 == pytest.approx(14.0 * (3900.0 / 3550.0) ** 1.5, rel=1e-12)


def test_eighty_percent_speed_default_hand_calculation():
    # Hand calculation (our arithmetic, after the affinity laws on both axes, check-values.md):
    # at 80 % speed Q = 0.016 m³/s maps to 0.02 m³/s on the reference curve, NPSH3_ref = 4.0 m;
    # with the default k = 1.5 below rated speed: 4.0·0.8^1.5 = 2.862 m; with k = 2 it would
    # have been 4.0·0.64 = 2.56 m, 0.30 m less (non-conservative).
    curve = linear_curve()
    got = float(curve.at_speed(0.016, 2368.0, reference_speed=2960.0))
    assert got == pytest.approx(4.0 * 0.8**1.5, rel=1e-12)
    assert got == pytest.approx(2.86, abs=0.005)
    assert float(curve.at_speed(0.016, 2368.0, 2960.0, exponent=2.0)) == pytest.approx(2.56)


def test_speed_none_means_reference_speed():
    curve = linear_curve()
    q = np.array([0.015, 0.04])
    np.testing.assert_array_equal(curve.at_speed(q, None, 2960.0), curve.at_reference_speed(q))
    np.testing.assert_allclose(curve.at_speed(q, 2960.0, 2960.0), 2.0 + 100.0 * q, rtol=1e-12)


# --- no extrapolation -----------------------------------------------------------------------


def test_nan_outside_the_flow_range_at_reference_speed():
    curve = linear_curve()
    q = np.array([0.0, 0.00999, 0.01, 0.05, 0.05001, 1.0, np.nan])
    got = curve.at_reference_speed(q)
    np.testing.assert_array_equal(np.isfinite(got), [False, False, True, True, False, False, False])
    # The ends of the tested range are on the curve and give the vendor's values.
    assert got[2] == pytest.approx(3.0, rel=1e-12)
    assert got[3] == pytest.approx(7.0, rel=1e-12)


def test_nan_outside_the_flow_range_at_scaled_speeds():
    curve = linear_curve()
    # At 80 % speed the curve reaches 0.8·0.05 = 0.04 m³/s: 0.045 is off the curve although it
    # lies inside the reference range.
    assert np.isnan(curve.at_speed(0.045, 2368.0, 2960.0))
    assert np.isfinite(curve.at_speed(0.035, 2368.0, 2960.0))
    # At 120 % speed the curve spans 0.012-0.06 m³/s: 0.055 is on it, 0.011 is not.
    assert float(curve.at_speed(0.055, 3552.0, 2960.0)) == pytest.approx(
        (2.0 + 100.0 * 0.055 / 1.2) * 1.2**2, rel=1e-12
    )
    assert np.isnan(curve.at_speed(0.011, 3552.0, 2960.0))


# --- monotone interpolation -----------------------------------------------------------------


def test_monotone_data_give_a_monotone_curve():
    # PCHIP keeps monotone data monotone (Fritsch and Carlson 1980). A typical rising NPSH3
    # curve with a steep end, where a cubic spline would overshoot.
    flow = np.array([10.0, 20.0, 30.0, 50.0, 80.0, 100.0]) / 1000.0
    npsh3 = np.array([2.0, 2.05, 2.3, 3.5, 6.0, 9.5])
    curve = Npsh3Curve("rising", flow, npsh3)
    q = np.linspace(flow[0], flow[-1], 5001)
    h = curve.at_reference_speed(q)
    assert np.all(np.isfinite(h))
    assert np.all(np.diff(h) >= 0.0)
    # It passes through the vendor's points (rtol: rounding only).
    np.testing.assert_allclose(curve.at_reference_speed(flow), npsh3, rtol=1e-12)


def test_each_interval_stays_between_its_end_values():
    # A curve with a minimum near mid-range (common for NPSH3): PCHIP puts any extremum at a
    # node, so between two points the curve neither undershoots nor overshoots them.
    flow = np.array([10.0, 20.0, 30.0, 45.0, 60.0, 75.0]) / 1000.0
    npsh3 = np.array([3.0, 2.2, 2.0, 2.4, 4.0, 7.0])
    curve = Npsh3Curve("dipping", flow, npsh3)
    for i in range(len(flow) - 1):
        q = np.linspace(flow[i], flow[i + 1], 501)
        h = curve.at_reference_speed(q)
        lo, hi = sorted((npsh3[i], npsh3[i + 1]))
        assert np.all(h >= lo - 1e-12) and np.all(h <= hi + 1e-12)
        step = np.diff(h)
        assert np.all(step >= -1e-12) or np.all(step <= 1e-12)  # monotone on the interval


# --- invalid curves -------------------------------------------------------------------------


def test_decreasing_flows_raise():
    with pytest.raises(CurveError, match="strictly increasing"):
        Npsh3Curve("bad", [0.03, 0.02, 0.01], [2.0, 2.5, 3.0])


def test_repeated_flow_raises():
    with pytest.raises(CurveError, match="strictly increasing"):
        Npsh3Curve("bad", [0.01, 0.02, 0.02], [2.0, 2.5, 3.0])


def test_one_point_raises():
    with pytest.raises(CurveError, match="at least 2"):
        Npsh3Curve("bad", [0.02], [2.5])


@pytest.mark.parametrize("bad_npsh3", [0.0, -1.0])
def test_non_positive_npsh3_raises(bad_npsh3):
    with pytest.raises(CurveError, match="NPSH3 > 0"):
        Npsh3Curve("bad", [0.01, 0.02, 0.03], [2.0, bad_npsh3, 3.0])


def test_negative_flow_raises():
    with pytest.raises(CurveError, match="flows must be >= 0"):
        Npsh3Curve("bad", [-0.01, 0.02], [2.0, 3.0])


def test_missing_value_raises():
    with pytest.raises(CurveError, match="missing or non-numeric"):
        Npsh3Curve("bad", [0.01, np.nan, 0.03], [2.0, 2.5, 3.0])


# --- suction specific speed -----------------------------------------------------------------


def test_suction_specific_speed_in_us_units():
    # S = n·√Q / NPSH3^0.75 with n [rpm], Q [gpm] per eye, NPSH3 [ft] (ANSI/HI 9.6.1
    # definition). check-values.md has no published example, so our arithmetic:
    # 3550·√500 / 14^0.75 = 10967.7.
    expected = 3550.0 * math.sqrt(500.0) / 14.0**0.75
    assert expected == pytest.approx(10967.7, abs=0.05)  # our arithmetic
    s = suction_specific_speed(
        3550.0, float(to_si(500.0, "gpm", "flow")), float(to_si(14.0, "ft", "length"))
    )
    # The package converts SI back to gpm and ft; the two paths agree to rounding.
    assert s == pytest.approx(expected, rel=1e-12)


def test_suction_specific_speed_uses_flow_per_eye():
    # A double-suction impeller: Q per eye is half the pump flow (ANSI/HI definition).
    q_pump = float(to_si(1000.0, "gpm", "flow"))
    h = float(to_si(14.0, "ft", "length"))
    double = suction_specific_speed(3550.0, q_pump, h, eyes=2)
    assert double == pytest.approx(3550.0 * math.sqrt(500.0) / 14.0**0.75, rel=1e-12)
    # Our arithmetic: 3550·√1000/14^0.75 = 15510.7 for a single eye at the same flow.
    assert suction_specific_speed(3550.0, q_pump, h) == pytest.approx(15510.7, abs=0.05)
