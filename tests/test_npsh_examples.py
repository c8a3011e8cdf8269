"""Worked NPSH-available examples from pump literature, through the public functions.

All inputs are given in U.S. customary units in the sources and go through ``to_si``; the
water properties come from ``fluid_table("Water")``; the results are turned back into feet by
dividing by 0.3048 m (exact, see test_units.py). Sources and check values are those of
/work/shared/reference/check-values.md ("Worked NPSH-available examples", "Constants").

``npsha_from_pressure`` has no friction term: the tank cases are written as an absolute
pressure at the liquid surface with zero velocity and the static head as the elevation, and
the suction friction loss is subtracted afterwards.
"""

from __future__ import annotations

import numpy as np
import pytest

from screening.inputs.units import to_si
from screening.physics.npsh import (
    G,
    absolute_pressure,
    head_from_pressure,
    npsha_from_pressure,
    velocity_head,
)
from screening.physics.properties import fluid_table

FT = 0.3048  # [m] international foot, exact (1959 agreement; NIST SP 811)
BORE = 0.15405  # [m] any pipe bore; the tank cases have zero flow, so it does not matter


def ft(x):
    """Length in feet -> metres through the units layer."""
    return float(to_si(x, "ft", "length"))


def psi(x):
    return float(to_si(x, "psi", "pressure"))


def water_at(deg_f):
    p_v, rho = fluid_table("Water").properties(to_si(deg_f, "degF", "temperature"))
    return float(p_v), float(rho)


def tank_npsha_ft(static_ft, friction_ft, deg_f=68.0, surface_psia=14.7):
    """NPSHa [ft] of an open tank: surface pressure, static head, friction, water at deg_f."""
    p_v, rho = water_at(deg_f)
    npsha = npsha_from_pressure(
        psi(surface_psia), p_v, rho, flow=0.0, bore=BORE, elevation=ft(static_ft)
    )
    return (float(npsha) - ft(friction_ft)) / FT


# --- open tank, flooded suction and suction lift --------------------------------------------


def test_open_tank_flooded_suction():
    # Pumps & Systems (2018), "NPSH" article series part 1, adapted from a hydraulic data
    # handbook: 68 °F water, open tank at sea level (14.7 psia), liquid 10 ft above the datum,
    # suction friction 3.2 ft -> NPSHa 40 ft.
    npsha = tank_npsha_ft(static_ft=10.0, friction_ft=3.2)
    # Published to the whole foot: half a foot either way.
    assert npsha == pytest.approx(40.0, abs=0.5)
    # Recomputed in SI (check-values.md): 39.98 ft, printed to 0.01 ft. Allow one unit of the
    # last place (0.01 ft): the recomputation used the density at 1 atm, ours the saturated
    # liquid, 5e-5 apart (0.002 ft here).
    assert npsha == pytest.approx(39.98, abs=0.01)


def test_open_tank_suction_lift():
    # Same series, part 2: as above but the liquid 10 ft below the datum -> 19.98 ft
    # recomputed (check-values.md; the published figure was not seen). Tolerance as above.
    npsha = tank_npsha_ft(static_ft=-10.0, friction_ft=3.2)
    assert npsha == pytest.approx(19.98, abs=0.01)


def test_lift_and_flooded_differ_by_twice_the_static_head():
    # Moving the liquid surface from 10 ft above to 10 ft below the datum costs 20 ft of NPSHa
    # (definition of NPSH as head above vapour pressure at the datum, ISO 9906 / ANSI/HI 1.3).
    flooded = tank_npsha_ft(static_ft=10.0, friction_ft=3.2)
    lift = tank_npsha_ft(static_ft=-10.0, friction_ft=3.2)
    assert flooded - lift == pytest.approx(20.0, abs=1e-9)


# --- hot water (Mackay) ---------------------------------------------------------------------

# Mackay, *The Practical Pumping Handbook* (2004) §4.4.2.5: 140 °F water, SG 0.985, 14.7 psia,
# p_v 2.889 psia, +45 ft static, friction 0.378 ft; printed parts: atmosphere 34.474 ft,
# vapour 6.775 ft. Those printed parts are 14.7·2.31/0.985 and 2.889·2.31/0.985 exactly: the
# book converts with the 2.31 ft/psi rule, which is 4.2e-4 above the exact 2.3090 ft/psi of
# 60 °F water. Hence rtol 6e-4 on each part: that rule difference plus the rounding of the
# printed figures (1.5e-5 and 7e-5 relative).
MACKAY_RTOL = 6e-4


def mackay_density():
    # Specific gravity of a liquid is referred to water at 60 °F (common practice).
    return 0.985 * water_at(60.0)[1]


def test_mackay_atmosphere_head():
    head = float(head_from_pressure(psi(14.7), mackay_density())) / FT
    assert head == pytest.approx(34.474, rel=MACKAY_RTOL)


def test_mackay_vapour_pressure_head():
    head = float(head_from_pressure(psi(2.889), mackay_density())) / FT
    assert head == pytest.approx(6.775, rel=MACKAY_RTOL)


def test_mackay_total_with_the_books_properties():
    # Total 34.474 + 45 − 6.775 − 0.378 = 72.32 ft (check-values.md: "by our arithmetic").
    # Tolerance 0.02 ft: the 2.31 ft/psi rule on the net 11.811 psi is 0.0115 ft, plus
    # rounding of the printed value (0.005 ft).
    npsha = npsha_from_pressure(
        psi(14.7), psi(2.889), mackay_density(), flow=0.0, bore=BORE, elevation=ft(45.0)
    )
    assert (float(npsha) - ft(0.378)) / FT == pytest.approx(72.32, abs=0.02)


def test_mackay_vapour_pressure_vs_our_properties():
    # The book's 2.889 psia at 140 °F is the figure of older steam tables (from memory); our
    # IAPWS-95 value is 2.893 psia, 1.4e-3 higher. Tolerance 2e-3: that formulation gap plus
    # the book's 4-digit rounding (1.7e-4). It still fails a 1 °F error in the temperature
    # conversion (about 3 % in p_v) or a gauge/absolute mix-up.
    p_v, _ = water_at(140.0)
    assert p_v == pytest.approx(psi(2.889), rel=2e-3)


def test_mackay_total_with_our_properties():
    # The same case with our own p_v and rho at 140 °F (SG 0.9842 against 60 °F water instead
    # of the printed 0.985). Tolerance 0.05 ft: the SG difference (8.4e-4 of 27.7 ft of net
    # pressure head, 0.023 ft), the p_v difference (0.004 psi, 0.009 ft) and the book's
    # 2.31 ft/psi rule (0.012 ft) added up.
    p_v, rho = water_at(140.0)
    npsha = npsha_from_pressure(psi(14.7), p_v, rho, flow=0.0, bore=BORE, elevation=ft(45.0))
    assert (float(npsha) - ft(0.378)) / FT == pytest.approx(72.32, abs=0.05)


# --- from a suction gauge -------------------------------------------------------------------


def test_npsha_from_a_suction_gauge():
    # NPSHa = (p_gauge + p_atm − p_v)/(ρg) + v²/(2g) + z_gauge (ISO 9906 and pump handbooks):
    # 68 °F water, 14.7 psia, gauge 2.4 psig, gauge 1 ft above the datum, velocity 10 ft/s
    # -> 41.28 ft (check-values.md, our arithmetic). Printed to 0.01 ft; allow one unit of the
    # last place (the recomputation used the 1 atm density, 5e-5 from the saturated liquid).
    p_v, rho = water_at(68.0)
    p_abs = absolute_pressure(psi(2.4), psi(14.7), gauge=True)
    area = np.pi * BORE**2 / 4.0
    flow = ft(10.0) * area  # [m³/s] giving 10 ft/s at the tap
    npsha = npsha_from_pressure(p_abs, p_v, rho, flow=flow, bore=BORE, elevation=ft(1.0))
    assert float(npsha) / FT == pytest.approx(41.28, abs=0.01)
    # Its velocity-head part, printed as 1.55 ft: half a unit of the last digit.
    assert float(velocity_head(flow, BORE)) / FT == pytest.approx(1.55, abs=0.005)


def test_absolute_transmitter_reading_is_used_as_is():
    assert float(absolute_pressure(psi(17.1), psi(14.7), gauge=False)) == psi(17.1)
    assert float(absolute_pressure(psi(2.4), psi(14.7), gauge=True)) == pytest.approx(
        psi(17.1), rel=1e-15
    )


def test_saturated_vessel_leaves_only_the_static_head():
    # A vessel at saturation has p_surface = p_v (design; any pump handbook): with no flow the
    # NPSHa is the static head alone, whatever the fluid.
    p_v, rho = water_at(220.0)
    assert float(npsha_from_pressure(p_v, p_v, rho, 0.0, BORE, ft(12.0))) == ft(12.0)


# --- velocity head --------------------------------------------------------------------------


def test_velocity_head_in_us_units():
    # v²/(2g) with v = Q/(πD²/4). Our arithmetic in U.S. units from the definitions:
    # 500 gpm in a 6.065 in bore (6 in schedule 40); 1 gal = 231 in³ exactly, g = 9.80665 m/s²
    # = 32.174 ft/s². v = 500·231/1728/60 ft³/s ÷ (π/4·(6.065/12)² ft²) = 5.553 ft/s,
    # v²/(2g) = 0.4791 ft.
    q_ft3s = 500.0 * 231.0 / 1728.0 / 60.0
    area_ft2 = np.pi / 4.0 * (6.065 / 12.0) ** 2
    g_ft = 9.80665 / 0.3048
    expected_ft = (q_ft3s / area_ft2) ** 2 / (2.0 * g_ft)
    assert expected_ft == pytest.approx(0.4791, abs=5e-5)  # our arithmetic, 4 decimals
    head = velocity_head(to_si(500.0, "gpm", "flow"), to_si(6.065, "in", "length"))
    # Same quantity through SI conversions: agreement to rounding.
    assert float(head) / FT == pytest.approx(expected_ft, rel=1e-12)


def test_velocity_head_scales_with_flow_squared_and_bore_to_the_minus_four():
    # v = Q/A, A ∝ D²: v²/2g ∝ Q²/D⁴ (continuity).
    base = float(velocity_head(0.05, 0.2))
    assert float(velocity_head(0.10, 0.2)) == pytest.approx(4.0 * base, rel=1e-12)
    assert float(velocity_head(0.05, 0.1)) == pytest.approx(16.0 * base, rel=1e-12)
    assert float(velocity_head(0.0, 0.2)) == 0.0


# --- constants ------------------------------------------------------------------------------


def test_standard_gravity():
    # g_n = 9.80665 m/s², exact by definition (3rd CGPM, 1901).
    assert G == 9.80665


def test_psi_in_pascal():
    # 1 psi = 6894.757293168 Pa (NIST SP 811, from memory), i.e. 1 lbf/in² from the exact
    # definitions 1 lb = 0.45359237 kg, g_n = 9.80665 m/s², 1 in = 0.0254 m. rtol 1e-12:
    # the printed constant has 13 significant figures.
    assert psi(1.0) == pytest.approx(6894.757293168, rel=1e-12)
    assert psi(1.0) == pytest.approx(0.45359237 * 9.80665 / 0.0254**2, rel=1e-14)


def test_one_psi_of_60_f_water_is_2_31_ft():
    _, rho = water_at(60.0)
    head_ft = float(head_from_pressure(psi(1.0), rho)) / FT
    # Trade rule of thumb, common practice: 2.31 ft per psi (three figures: ±0.005 ft).
    assert head_ft == pytest.approx(2.31, abs=0.005)
    # Computed 2.3089 ft in check-values.md (with the density at 1 atm). Tolerance 2e-4 ft:
    # rounding of the printed figure (5e-5 ft) plus the saturated-liquid against 1 atm
    # density (4.6e-5 relative, 1.1e-4 ft).
    assert head_ft == pytest.approx(2.3089, abs=2e-4)
