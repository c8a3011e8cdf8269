"""Vessel-fed NPSH available and suction line friction loss against outside references.

References: the worked NPSH-available examples of /work/shared/reference/check-values.md
(Pumps & Systems 2018 NPSH series; Mackay, *The Practical Pumping Handbook* (2004)
§4.4.2.5); a textbook pipe-flow example (White, *Fluid Mechanics*, from memory); the smooth-
and rough-pipe laws of Prandtl and von Kármán–Nikuradse; the PyPI package ``fluids``
(``fluids.friction.friction_factor``, Clamond's 2009 solution of the Colebrook equation;
``fluids.core``; ``fluids.friction.one_phase_dP``); the PyPI package ``iapws`` (IAPWS 2008
viscosity with IF97 density) and direct CoolProp calls for the viscosity table.

U.S. customary inputs go through ``to_si``; results are turned back into feet by dividing by
0.3048 m (international foot, exact).
"""

from __future__ import annotations

import numpy as np
import pytest
from CoolProp.CoolProp import PropsSI
from fluids.core import K_from_f, Reynolds, head_from_K, head_from_P
from fluids.friction import friction_factor, one_phase_dP
from iapws import IAPWS97

from screening.inputs.units import to_si
from screening.physics.coolprop_fluids import _coolprop, _state
from screening.physics.npsh import G
from screening.physics.properties import FluidError, fluid_table
from screening.physics.suction import (
    LAMINAR_LIMIT,
    SATURATED,
    darcy_friction_factor,
    loss_darcy_weisbach,
    loss_from_coefficient,
    npsha_from_vessel,
    reynolds_number,
    surface_pressure_from_tag,
    surface_pressure_open,
)
from screening.physics.viscosity import liquid_viscosity, viscosity_table

FT = 0.3048  # [m] international foot, exact (1959 agreement; NIST SP 811)


def ft(x):
    """Length in feet -> metres through the units layer."""
    return float(to_si(x, "ft", "length"))


def psi(x):
    return float(to_si(x, "psi", "pressure"))


def water_at(deg_f):
    p_v, rho = fluid_table("Water").properties(to_si(deg_f, "degF", "temperature"))
    return float(p_v), float(rho)


# --- worked vessel examples -----------------------------------------------------------------


def open_tank_ft(level_ft, offset_ft, friction_ft):
    """NPSHa [ft] of an open tank at 14.7 psia holding 68 °F water (check-values.md)."""
    p_v, rho = water_at(68.0)
    npsha = npsha_from_vessel(
        surface_pressure_open(psi(14.7)), p_v, rho, ft(level_ft), ft(offset_ft), ft(friction_ft)
    )
    return float(npsha) / FT


def test_open_tank_flooded_suction():
    # Pumps & Systems (2018), "NPSH" article series part 1, adapted from a hydraulic data
    # handbook: 68 °F water, open tank at sea level (14.7 psia), liquid 10 ft above the datum,
    # suction friction 3.2 ft -> NPSHa 40 ft. The 10 ft is split here into a 7 ft level reading
    # above a transmitter zero 3 ft above the datum; only the sum counts.
    npsha = open_tank_ft(level_ft=7.0, offset_ft=3.0, friction_ft=3.2)
    # Published to the whole foot: half a foot either way.
    assert npsha == pytest.approx(40.0, abs=0.5)
    # Recomputed in SI (check-values.md): 39.98 ft, printed to 0.01 ft. One unit of the last
    # place: the recomputation used the density at 1 atm, ours the saturated liquid, 5e-5
    # apart (0.002 ft on 33 ft of pressure head).
    assert npsha == pytest.approx(39.98, abs=0.01)


def test_open_tank_suction_lift():
    # Same series, part 2: the liquid 10 ft below the datum -> 19.98 ft recomputed
    # (check-values.md; the published figure was not seen). A 2 ft level above a transmitter
    # zero 12 ft below the datum (negative offset: suction lift). Tolerance as above.
    npsha = open_tank_ft(level_ft=2.0, offset_ft=-12.0, friction_ft=3.2)
    assert npsha == pytest.approx(19.98, abs=0.01)


def test_vessel_pressure_tag_gauge_and_absolute_as_the_open_tank():
    # A vessel pressure transmitter reading 0 psig, or 14.7 psia, under a 14.7 psia barometer
    # is the open tank of the Pumps & Systems example: 39.98 ft recomputed (check-values.md),
    # tolerance as above. A gauge/absolute mix-up would be off by 34 ft.
    p_v, rho = water_at(68.0)
    for reading, gauge in ((0.0, True), (14.7, False)):
        p_s = surface_pressure_from_tag(psi(reading), psi(14.7), gauge=gauge)
        npsha = npsha_from_vessel(p_s, p_v, rho, ft(10.0), 0.0, ft(3.2))
        assert float(npsha) / FT == pytest.approx(39.98, abs=0.01)


# Mackay, *The Practical Pumping Handbook* (2004) §4.4.2.5: 140 °F water, SG 0.985, 14.7 psia,
# p_v 2.889 psia, +45 ft static, friction 0.378 ft; printed parts: atmosphere 34.474 ft,
# vapour 6.775 ft; total 72.32 ft (check-values.md, by our arithmetic).


def mackay_density():
    # Specific gravity is referred to water at 60 °F (common practice).
    return 0.985 * water_at(60.0)[1]


def test_mackay_net_pressure_head():
    # The pressure term alone (no static head, no friction): 34.474 − 6.775 = 27.699 ft. The
    # book converts with the 2.31 ft/psi rule, 4.2e-4 above the exact 2.3090 ft/psi of 60 °F
    # water; rtol 6e-4 covers that and the rounding of the printed parts (7e-5 relative).
    head = npsha_from_vessel(psi(14.7), psi(2.889), mackay_density(), 0.0, 0.0, 0.0)
    assert float(head) / FT == pytest.approx(34.474 - 6.775, rel=6e-4)


def test_mackay_hot_water_total():
    # 72.32 ft. Tolerance 0.02 ft: the 2.31 ft/psi rule on the net 11.811 psi is 0.0115 ft,
    # plus the rounding of the printed value (0.005 ft). Samples as arrays, as the calculator
    # passes them: the same result at every sample.
    n = 5
    npsha = npsha_from_vessel(
        np.full(n, psi(14.7)),
        np.full(n, psi(2.889)),
        np.full(n, mackay_density()),
        np.full(n, ft(45.0)),
        0.0,
        np.full(n, ft(0.378)),
    )
    np.testing.assert_allclose(npsha / FT, 72.32, atol=0.02)


# --- saturated vessel -----------------------------------------------------------------------


def test_saturated_vessel_is_static_head_minus_friction_exactly():
    # A vessel at saturation has p_surface = p_v (DESIGN.md; any pump handbook), so NPSHa is
    # the static head less the friction loss, whatever the temperature: exact equality, since
    # the pressure term is zero by construction, not a difference of close numbers.
    temps = to_si(np.array([212.0, 250.0, 300.0, 350.0]), "degF", "temperature")
    p_v, rho = fluid_table("Water").properties(temps)
    level = np.array([1.2, 1.5, 0.9, 2.0])
    offset = 14.0  # deaerator storage tank zero 14 m above the pump datum (invented layout)
    flow = np.array([0.02, 0.05, 0.0, 0.08])  # [m³/s]
    loss = loss_from_coefficient(flow, 120.0)
    npsha = npsha_from_vessel(SATURATED, p_v, rho, level, offset, loss)
    np.testing.assert_array_equal(npsha, level + offset - loss)


def test_saturated_vessel_agrees_with_surface_pressure_equal_to_vapour_pressure():
    # The same vessel written with p_surface = p_v: (p_v − p_v)/(ρg) is 0 in floating point
    # too when the two are the same numbers, so the two paths agree to rounding (1e-12 m).
    temps = to_si(np.linspace(220.0, 340.0, 7), "degF", "temperature")
    p_v, rho = fluid_table("Water").properties(temps)
    a = npsha_from_vessel(SATURATED, p_v, rho, 1.0, 10.0, 0.3)
    b = npsha_from_vessel(p_v, p_v, rho, 1.0, 10.0, 0.3)
    np.testing.assert_allclose(a, b, rtol=0, atol=1e-12)


def test_saturated_vessel_outside_the_fluid_table_is_nan():
    # 700 K is beyond 98 % of water's critical temperature (properties.py): p_v and rho are
    # NaN, and so must the NPSHa be, so that the calculator marks the sample bad data.
    p_v, rho = fluid_table("Water").properties(np.array([400.0, 700.0]))
    npsha = npsha_from_vessel(SATURATED, p_v, rho, 2.0, 5.0, 0.1)
    assert npsha[0] == pytest.approx(6.9, abs=1e-12)
    assert np.isnan(npsha[1])


# --- friction factor ------------------------------------------------------------------------


def test_white_oil_pipe_example():
    # White, *Fluid Mechanics*, worked example on head loss in a cast-iron pipe (from memory):
    # oil ρ = 900 kg/m³, ν = 1e-5 m²/s, Q = 0.2 m³/s, 500 m of 200 mm pipe, ε = 0.26 mm.
    # V = 6.37 m/s, Re = 127 000, ε/d = 0.0013, Colebrook f = 0.0227, h_f ≈ 117 m.
    rho, nu, q, length, bore, eps = 900.0, 1e-5, 0.2, 500.0, 0.2, 0.26e-3
    re = float(reynolds_number(q, rho, rho * nu, bore))
    assert re == pytest.approx(127_000, abs=500)  # printed to three figures
    f = float(darcy_friction_factor(re, eps / bore))
    assert f == pytest.approx(0.0227, abs=5e-5)  # printed to three figures
    h = float(loss_darcy_weisbach(q, rho, rho * nu, length, bore, eps, 0.0))
    # Printed to the metre; the book's g = 9.81 m/s² against our 9.80665 is 0.04 m more.
    assert h == pytest.approx(117.0, abs=0.5)


def test_smooth_pipe_law_at_re_1e5():
    # Prandtl's smooth-pipe law 1/√f = 2·log10(Re·√f) − 0.8 (Prandtl 1935; White, *Fluid
    # Mechanics*, from memory), the lower edge of the Moody (1944) chart: f = 0.0180 at
    # Re = 1e5. Solved here by fixed-point iteration, independently of the module.
    re = 1e5
    x = 8.0
    for _ in range(60):
        x = 2.0 * np.log10(re / x) - 0.8
    prandtl = 1.0 / x**2
    assert prandtl == pytest.approx(0.0180, abs=5e-5)  # chart value, three figures
    f = float(darcy_friction_factor(re, 0.0))
    # Colebrook with ε = 0 has −2·log10(2.51) = −0.7993 in place of −0.8: 1.6e-4 apart here.
    assert f == pytest.approx(prandtl, rel=3e-4)


def test_fully_rough_limit():
    # von Kármán–Nikuradse fully rough law 1/√f = −2·log10((ε/D)/3.7), the high-Re limit of
    # the Colebrook equation and the flat right side of the Moody chart (ε/D = 0.01 reads
    # 0.038 there, Moody 1944, from memory). At Re = 1e8 the Colebrook term 2.51/(Re·√f) is
    # 5e-5 of (ε/D)/3.7, moving f by under 1e-4 relative: that is the tolerance.
    ed = 0.01
    rough = 1.0 / (2.0 * np.log10(3.7 / ed)) ** 2
    f = float(darcy_friction_factor(1e8, ed))
    assert f == pytest.approx(rough, rel=1e-4)
    assert f == pytest.approx(0.038, abs=5e-4)  # chart read to two figures


RE_GRID = np.concatenate(
    [[1.0, 100.0, 1000.0, 2039.0, 2040.0, 2041.0, 3000.0], np.geomspace(4000.0, 1e8, 60)]
)


@pytest.mark.parametrize("ed", [0.0, 1e-6, 1e-5, 1e-4, 1e-3, 1e-2, 0.05])
def test_friction_factor_matches_fluids(ed):
    # fluids.friction.friction_factor: 64/Re below Re 2040, Clamond's (2009) exact solution of
    # Colebrook (1939) above. Ours is that same function tabulated per roughness at 2000
    # Reynolds numbers per decade and interpolated in log-log: measured error below 2e-8.
    # rtol 1e-7 bounds the table and still fails any approximate formula (Haaland alone is
    # off by up to 2 %).
    ours = darcy_friction_factor(RE_GRID, ed)
    ref = np.array([friction_factor(re, ed) for re in RE_GRID])
    np.testing.assert_allclose(ours, ref, rtol=1e-7)


def test_laminar_is_64_over_re():
    # Hagen–Poiseuille: f = 64/Re below the limit (fluids and Avila et al. 2011: 2040).
    re = np.array([10.0, 500.0, 2039.9])
    np.testing.assert_allclose(darcy_friction_factor(re, 0.001), 64.0 / re, rtol=1e-15)
    assert LAMINAR_LIMIT == 2040.0


def test_reynolds_matches_fluids():
    # fluids.core.Reynolds(V, D, rho, mu) = ρVD/μ; ours takes the flow, V = Q/(πD²/4).
    # rtol 1e-14: the same arithmetic in another order.
    bore = 0.1541
    flow = np.array([1e-4, 0.01, 0.05])
    velocity = flow / (np.pi * bore**2 / 4.0)
    ref = [Reynolds(V=v, D=bore, rho=998.2, mu=1.0016e-3) for v in velocity]
    np.testing.assert_allclose(reynolds_number(flow, 998.2, 1.0016e-3, bore), ref, rtol=1e-14)


# --- Darcy–Weisbach loss --------------------------------------------------------------------

# A 6 in schedule 40 commercial steel suction line (bore 154.1 mm, ε 0.045 mm: Crane TP-410,
# from memory), 25 m long, with an entrance, an elbow and a gate valve worth ΣK = 1.2
# (invented). Flows from creeping (laminar for the oil) to 0.12 m³/s (6.4 m/s).
LINE = dict(length=25.0, bore=0.1541, roughness=4.5e-5, fittings_k=1.2)
FLOWS = np.concatenate([[1e-5, 1e-4], np.linspace(0.001, 0.12, 40)])


def fluids_head(q, rho, mu, length, bore, roughness, fittings_k):
    """Darcy–Weisbach head [m] assembled from fluids.core and fluids.friction."""
    v = q / (np.pi * bore**2 / 4.0)
    re = Reynolds(V=v, D=bore, rho=rho, mu=mu)
    k_total = K_from_f(fd=friction_factor(re, roughness / bore), L=length, D=bore) + fittings_k
    return head_from_K(K=k_total, V=v, g=G)


@pytest.mark.parametrize(
    ("rho", "mu"),
    [(998.2, 1.0016e-3), (880.0, 0.2)],  # water at 20 °C; a heavy oil (laminar at low flow)
)
def test_darcy_weisbach_matches_fluids(rho, mu):
    # rtol 1e-7: the same equations evaluated by two programs; the friction factor's table
    # error (test above) is the only difference.
    ours = loss_darcy_weisbach(FLOWS, rho, mu, **LINE)
    ref = np.array([fluids_head(q, rho, mu, **LINE) for q in FLOWS])
    np.testing.assert_allclose(ours, ref, rtol=1e-7)


def test_straight_pipe_matches_fluids_one_phase_dp():
    # fluids.friction.one_phase_dP(m, rho, mu, D, roughness, L): the pressure drop of a
    # straight pipe from the mass flow, turned into head by fluids.core.head_from_P. rtol
    # 1e-7 as above. Water at 60 °C from our tables (any consistent inputs would do).
    _, rho = fluid_table("Water").properties(333.15)
    rho = float(rho)
    mu = float(liquid_viscosity("Water", 333.15))
    ours = loss_darcy_weisbach(FLOWS, rho, mu, 40.0, 0.1023, 4.5e-5, 0.0)
    ref = [
        head_from_P(one_phase_dP(m=rho * q, rho=rho, mu=mu, D=0.1023, roughness=4.5e-5, L=40.0),
                    rho)
        for q in FLOWS
    ]  # fmt: skip
    np.testing.assert_allclose(ours, ref, rtol=1e-7)


def test_darcy_weisbach_zero_negative_and_missing_flow():
    # No flow, no loss: exactly zero (not 0·inf). Reverse flow counts by its magnitude
    # (documented choice). A missing sample stays missing.
    flow = np.array([0.0, -0.03, 0.03, np.nan])
    h = loss_darcy_weisbach(flow, 998.2, 1.0016e-3, **LINE)
    assert h[0] == 0.0
    assert h[1] == h[2] > 0.0
    assert np.isnan(h[3])


def test_darcy_weisbach_keeps_the_shape_of_its_input():
    flow = np.full((3, 4), 0.05)
    assert loss_darcy_weisbach(flow, 998.2, 1.0016e-3, **LINE).shape == (3, 4)


# --- loss coefficient k·Q² ------------------------------------------------------------------


def test_coefficient_loss_equals_fittings_loss_of_fluids():
    # A line of fittings only (no straight pipe) has the exactly quadratic loss
    # K·v²/(2g) = k·Q² with k = 8·K/(g·π²·D⁴) [m/(m³/s)²] (v = 4Q/(πD²)). Against
    # fluids.core.head_from_K at every flow; rtol 1e-13: rounding of one product.
    bore, k_fittings = 0.2027, 4.3
    k = 8.0 * k_fittings / (G * np.pi**2 * bore**4)
    flows = np.linspace(0.0, 0.25, 26)
    ref = [head_from_K(K=k_fittings, V=q / (np.pi * bore**2 / 4.0), g=G) for q in flows]
    np.testing.assert_allclose(loss_from_coefficient(flows, k), ref, rtol=1e-13)
    # The same through loss_darcy_weisbach with no straight pipe.
    dw = loss_darcy_weisbach(flows, 998.2, 1.0016e-3, 0.0, bore, 4.5e-5, k_fittings)
    np.testing.assert_allclose(dw, ref, rtol=1e-13)


def test_coefficient_loss_zero_and_reverse_flow():
    h = loss_from_coefficient(np.array([0.0, 0.05, -0.05]), 300.0)
    assert h[0] == 0.0
    assert h[1] == h[2] == pytest.approx(300.0 * 0.05**2, rel=1e-15)


# --- liquid viscosity -----------------------------------------------------------------------


def test_water_viscosity_at_20_c():
    # 1.0016 mPa·s at 20 °C (IAPWS 2008 formulation; CRC Handbook table, from memory). Half a
    # unit of the last printed digit; the 2.3 kPa between saturation and 1 atm changes it by
    # under 1e-6 relative.
    assert float(liquid_viscosity("Water", 293.15)) == pytest.approx(1.0016e-3, abs=5e-8)


def test_water_viscosity_against_iapws_package():
    # iapws.IAPWS97(T, x=0).mu: the IAPWS 2008 viscosity correlation evaluated at IF97
    # saturated-liquid density, an implementation independent of CoolProp (which uses IAPWS-95
    # density). The density difference makes them differ by up to 2.3e-5 (measured) between
    # 1 and 200 °C; rtol 5e-5 allows that and still fails a 0.01 K temperature error (about
    # 2e-4 in μ) or any unit slip.
    temps = np.linspace(274.15, 473.15, 25)
    ref = np.array([IAPWS97(T=t, x=0).mu for t in temps])
    np.testing.assert_allclose(liquid_viscosity("Water", temps), ref, rtol=5e-5)


@pytest.mark.parametrize("fluid", ["Water", "n-Butane", "Toluene"])
def test_viscosity_table_against_direct_coolprop(fluid):
    # The table against direct PropsSI('V', 'T', T, 'Q', 0, fluid) at random temperatures over
    # the valid range (fixed random state 7). The build measures the error at every grid
    # mid-point, where linear interpolation errs most; rtol 2e-6 is that 1e-6 target with a
    # factor of two for points off the mid-points and a table whose step reached its floor.
    table = viscosity_table(fluid)
    assert table.max_rel_error <= 2e-6
    rng = np.random.default_rng(7)
    temps = rng.uniform(table.t_min, table.t_max, 300)
    ref = PropsSI("V", "T", temps, "Q", 0.0, fluid)
    np.testing.assert_allclose(liquid_viscosity(fluid, temps), ref, rtol=2e-6)


def test_viscosity_outside_range_is_nan():
    table = viscosity_table("Water")
    mu = liquid_viscosity("Water", np.array([250.0, np.nan, 300.0, 700.0]))
    assert np.isnan(mu[[0, 1, 3]]).all()
    assert np.isfinite(mu[2])
    assert not table.in_range(700.0)
    # Both ends of the range are in it and finite.
    assert np.isfinite(liquid_viscosity("Water", [table.t_min, table.t_max])).all()


def test_viscosity_unknown_fluid():
    with pytest.raises(FluidError, match="not known to CoolProp"):
        liquid_viscosity("NoSuchFluid", 300.0)


def test_viscosity_of_an_incompressible_solution_is_coolprops():
    # CoolProp gives its incompressible solutions' viscosity (fits to published data, as its
    # bibliography lists them): the table agrees with direct PropsSI calls at 1 atm within the
    # table's interpolation target (factor two as above), over the solution's own range
    # intersected with water's table (whose vapour pressure such a liquid uses).
    table = viscosity_table("INCOMP::MEG-30%")
    assert "incompressible" in table.source and "K to" in table.source
    temps = np.linspace(table.t_min, table.t_max, 50)
    ref = np.array([PropsSI("V", "T", t, "P", 101325.0, "INCOMP::MEG-30%") for t in temps])
    np.testing.assert_allclose(liquid_viscosity("INCOMP::MEG-30%", temps), ref, rtol=2e-6)
    assert table.t_min >= fluid_table("Water").t_min


def test_viscosity_of_a_mixture_covers_where_coolprop_converges():
    # A propane/n-butane LPG at its bubble point (invented composition): CoolProp's mixture
    # viscosity fails at the lowest temperatures of the property table; the viscosity table
    # starts where it converges, says so, and agrees with CoolProp there.
    fluid = "Propane[0.6]&n-Butane[0.4]"
    table = viscosity_table(fluid)
    props = fluid_table(fluid)
    assert props.t_min <= table.t_min < table.t_max <= props.t_max
    assert "where CoolProp's viscosity converges" in table.source
    state = _state(fluid)
    temps = np.linspace(table.t_min, table.t_max, 40)
    ref = []
    for t in temps:
        state.update(_coolprop().QT_INPUTS, 0.0, float(t))
        ref.append(state.viscosity())
    np.testing.assert_allclose(liquid_viscosity(fluid, temps), ref, rtol=2e-6)


def test_viscosity_fluid_without_viscosity_model():
    # CoolProp has an equation of state for SES36 but no viscosity model (CoolProp 6-8).
    with pytest.raises(FluidError, match="no liquid viscosity"):
        liquid_viscosity("SES36", 300.0)


# --- invalid line data ----------------------------------------------------------------------


@pytest.mark.parametrize("bore", [0.0, -0.1, np.nan])
def test_non_positive_bore(bore):
    with pytest.raises(ValueError, match="bore must be finite and > 0"):
        loss_darcy_weisbach(0.01, 998.2, 1e-3, 10.0, bore, 4.5e-5, 0.5)


@pytest.mark.parametrize(
    ("name", "args"),
    [
        ("length", (-1.0, 0.1, 4.5e-5, 0.5)),
        ("roughness", (10.0, 0.1, -1e-5, 0.5)),
        ("fittings_k", (10.0, 0.1, 4.5e-5, -0.5)),
    ],
)
def test_negative_line_data(name, args):
    with pytest.raises(ValueError, match=f"{name} must be finite and >= 0"):
        loss_darcy_weisbach(0.01, 998.2, 1e-3, *args)


def test_roughness_beyond_the_moody_chart():
    # ε/D = 0.1 is beyond the chart's 0.05: refused rather than extrapolated.
    with pytest.raises(ValueError, match="relative roughness must lie in"):
        loss_darcy_weisbach(0.01, 998.2, 1e-3, 10.0, 0.05, 0.005, 0.5)


@pytest.mark.parametrize("k", [-1.0, np.inf, np.nan])
def test_invalid_loss_coefficient(k):
    with pytest.raises(ValueError, match="loss coefficient must be finite and >= 0"):
        loss_from_coefficient(0.01, k)
