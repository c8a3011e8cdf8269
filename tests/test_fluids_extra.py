"""Mixtures and incompressible liquids in the fluid tables, against references outside the project.

References:
- Direct CoolProp calls through ``PropsSI`` with the fluid written as CoolProp itself parses it
  (``"R407C.mix"``, ``"HEOS::Propane[0.6]&n-Butane[0.4]"``, ``"INCOMP::MEG-30%"``): the bubble
  point of a mixture is ``PropsSI("P", "T", T, "Q", 0, fluid)``, the density of an
  incompressible liquid ``PropsSI("D", "T", T, "P", p, fluid)``.
- Lemmon's pseudo-pure equation of state for R-407C (Int. J. Thermophys. 24 (2003) 991-1006,
  in CoolProp as ``"R407C"``), a model of the blend independent of CoolProp's mixture model.
- IAPWS-IF97 through the PyPI package ``iapws`` (``iapws.IAPWS97``), independent of CoolProp,
  with the tolerance of /work/shared/reference/check-values.md.
- Molar masses from atomic weights (IUPAC conventional values C 12.011, H 1.008, O 15.999,
  from memory) and from CoolProp's fluid models.
"""

from __future__ import annotations

import iapws
import numpy as np
import pytest
from CoolProp.CoolProp import PropsSI

from screening.physics.coolprop_fluids import GLYCOL_MOLAR_MASS, MOLAR_MASS_WATER, FluidError
from screening.physics.properties import fluid_table

# The package's promise for every table (TARGET_REL_ERROR in screening/physics/properties.py): the
# interpolated value is within 1e-6 (relative) of the direct call it was built from.
RTOL_TABLE = 1e-6
# IAPWS-IF97 against IAPWS-95 (CoolProp's water): up to 1.8e-4 between 1 and 200 °C, so 5e-4
# (check-values.md, "Tolerance").
RTOL_PV_IF97 = 5e-4
CELSIUS = 273.15

PREDEFINED = "R407C.mix"  # CoolProp's predefined mixture R32/R125/R134a
LPG = "Propane[0.6]&n-Butane[0.4]"  # mole fractions
LPG_COOLPROP = "HEOS::Propane[0.6]&n-Butane[0.4]"  # the same, as PropsSI parses it itself
MEG30 = "INCOMP::MEG-30%"  # ethylene glycol - water, 30 % glycol by mass
MPG40 = "INCOMP::MPG[0.4]"  # propylene glycol - water, 40 % glycol by mass


def _direct(output: str, fluid: str, temps, quality=None, pressure=None) -> np.ndarray:
    """PropsSI at each temperature [K], at quality 0 or at a pressure [Pa]."""
    if quality is not None:
        return np.array([PropsSI(output, "T", float(t), "Q", quality, fluid) for t in temps])
    return np.array([PropsSI(output, "T", float(t), "P", pressure, fluid) for t in temps])


def _random_temps(table, n: int) -> np.ndarray:
    rng = np.random.default_rng(20240612)  # fixed random state: the same points on every run
    # Also both ends of the valid range, where the grid was cut to the converged run.
    return np.concatenate([rng.uniform(table.t_min, table.t_max, n), [table.t_min, table.t_max]])


# --- mixtures: bubble point against CoolProp's direct call -----------------------------------


@pytest.mark.parametrize(("fluid", "reference"), [(PREDEFINED, PREDEFINED), (LPG, LPG_COOLPROP)])
def test_mixture_bubble_point_matches_direct_coolprop(fluid, reference):
    table = fluid_table(fluid)
    temps = _random_temps(table, 600)
    p_ref = _direct("P", reference, temps, quality=0)
    rho_ref = _direct("D", reference, temps, quality=0)
    p_v, rho = table.properties(temps)
    assert np.max(np.abs(p_v / p_ref - 1.0)) <= RTOL_TABLE
    assert np.max(np.abs(rho / rho_ref - 1.0)) <= RTOL_TABLE
    assert table.max_rel_error_pv <= RTOL_TABLE
    assert table.max_rel_error_rho <= RTOL_TABLE
    assert table.vapour_pressure_model == "CoolProp bubble point (mixture)"


def test_mixture_gives_bubble_not_dew_point_against_pseudo_pure_r407c():
    # Lemmon's pseudo-pure R-407C and CoolProp's R32/R125/R134a mixture model are two separate
    # models of the same blend; their bubble pressures differ by at most 1.1e-4 and the liquid
    # densities by 8e-5 (relative) over the common range (measured, 172.5-327.9 K). Allow 1e-3.
    # The dew pressure of R-407C, a blend with a temperature glide, lies at least 11 % below its
    # bubble pressure over this range (checked below), so taking the wrong end would fail.
    mixture = fluid_table(PREDEFINED)
    pseudo = fluid_table("R407C")
    temps = np.linspace(max(mixture.t_min, pseudo.t_min), min(mixture.t_max, pseudo.t_max), 200)
    p_mix, rho_mix = mixture.properties(temps)
    p_pseudo, rho_pseudo = pseudo.properties(temps)
    np.testing.assert_allclose(p_mix, p_pseudo, rtol=1e-3)
    np.testing.assert_allclose(rho_mix, rho_pseudo, rtol=1e-3)
    p_dew = _direct("P", PREDEFINED, temps[::20], quality=1)
    assert np.all(p_dew < 0.95 * p_mix[::20])
    assert pseudo.vapour_pressure_model == "CoolProp bubble point (pseudo-pure blend)"


# --- mixtures: valid range --------------------------------------------------------------------


@pytest.mark.parametrize(
    ("fluid", "reference", "components"),
    [
        (PREDEFINED, PREDEFINED, ["R32", "R125", "R134a"]),
        (LPG, LPG_COOLPROP, ["Propane", "n-Butane"]),
    ],
)
def test_mixture_range_ends_where_coolprop_stops_converging(fluid, reference, components):
    table = fluid_table(fluid)
    # Lower end: the highest of the components' own minimum temperatures in CoolProp.
    assert table.t_min == pytest.approx(max(PropsSI("Tmin", c) for c in components), abs=1e-9)
    # Upper end: below 98 % of the critical temperature, the range ends at the last grid node
    # before the first temperature where CoolProp's bubble point fails (or stops rising). The
    # finest grid looks at every half step, so CoolProp fails or p_v stops rising at one of the
    # next two half steps above the end. (With CoolProp 8.0 both mixtures end that way, R407C.mix
    # at 327.9 K and the LPG at 378.8 K; should a later CoolProp converge all the way, the end
    # must then be at 98 % of the critical temperature.)
    assert table.t_max <= 0.98 * table.t_critical + 1e-9
    if table.t_max < 0.98 * table.t_critical - table.step:
        p_end = PropsSI("P", "T", table.t_max, "Q", 0, reference)
        stopped = False
        for k in (1, 2):
            try:
                p_next = PropsSI("P", "T", table.t_max + 0.5 * k * table.step, "Q", 0, reference)
            except ValueError:
                stopped = True
                break
            if not p_next > p_end:
                stopped = True
                break
            p_end = p_next
        assert stopped
    # Never clamped: NaN on both sides of the range.
    outside = np.array([table.t_min - 0.01, table.t_max + 0.01, table.t_max + 10.0])
    p_v, rho = table.properties(outside)
    assert np.all(np.isnan(p_v)) and np.all(np.isnan(rho))
    assert not np.any(table.in_range(outside))


# --- glycol - water: density, "water" and "raoult" --------------------------------------------


@pytest.mark.parametrize("fluid", [MEG30, MPG40])
def test_glycol_density_matches_direct_coolprop(fluid):
    table = fluid_table(fluid, vapour_pressure="water")
    temps = _random_temps(table, 500)
    rho_ref = _direct("D", fluid, temps, pressure=101325.0)
    np.testing.assert_allclose(table.density(temps), rho_ref, rtol=RTOL_TABLE)
    assert table.max_rel_error_rho <= RTOL_TABLE
    # CoolProp's incompressible density does not depend on pressure (same value at 1 MPa), so
    # the nominal pressure of the table costs nothing against CoolProp.
    assert PropsSI("D", "T", 320.0, "P", 1e6, fluid) == PropsSI("D", "T", 320.0, "P", 101325, fluid)


def test_glycol_water_choice_is_waters_vapour_pressure():
    table = fluid_table(MEG30, vapour_pressure="water")
    temps = _random_temps(table, 500)
    # Against CoolProp's water, from which the table is built: the table's promise.
    p_water = _direct("P", "Water", temps, quality=0)
    np.testing.assert_allclose(table.vapour_pressure(temps), p_water, rtol=RTOL_TABLE)
    # Against IAPWS-IF97 (iapws package), 1-99 °C: the formulation difference (check-values.md).
    temps_c = np.arange(1.0, 99.0 + 1e-9, 1.0)
    p_if97 = np.array([iapws.IAPWS97(T=t + CELSIUS, x=0).P for t in temps_c]) * 1e6  # MPa -> Pa
    np.testing.assert_allclose(table.vapour_pressure(temps_c + CELSIUS), p_if97, rtol=RTOL_PV_IF97)
    assert table.vapour_pressure_model == "water vapour pressure (conservative)"
    assert table.vapour_pressure_choice == "water"


# Water mole fraction by hand, x_w = (w_w/M_w) / (w_w/M_w + w_g/M_g):
# MEG 30 %: 0.70/18.015 = 0.0388565 mol/g water; 0.30/62.07 = 0.0048333 mol/g glycol;
#           x_w = 0.0388565 / (0.0388565 + 0.0048333) = 0.0388565 / 0.0436898 = 0.889373.
# MPG 40 %: 0.60/18.015 = 0.0333056; 0.40/76.09 = 0.0052569;
#           x_w = 0.0333056 / 0.0385625 = 0.863677.
# Printed to 6 figures: rtol 1e-5 covers the rounding (at most 6e-7) with room to spare.
@pytest.mark.parametrize(("fluid", "x_water", "text"), [
    (MEG30, 0.889373, "Raoult's law, x_water = 0.889"),
    (MPG40, 0.863677, "Raoult's law, x_water = 0.864"),
])  # fmt: skip
def test_glycol_raoult_choice_is_water_mole_fraction_times_water_vapour_pressure(
    fluid, x_water, text
):
    table = fluid_table(fluid, vapour_pressure="raoult")
    temps = _random_temps(table, 300)
    p_water = _direct("P", "Water", temps, quality=0)
    # Two roundings: x_water printed to 6 figures (1e-5 as above) and the table (1e-6).
    np.testing.assert_allclose(table.vapour_pressure(temps), x_water * p_water, rtol=1.1e-5)
    assert table.vapour_pressure_model == text
    assert table.vapour_pressure_choice == "raoult"


def test_molar_masses_against_atomic_weights_and_coolprop():
    # Water: CoolProp's IAPWS-95 model gives 18.015268 g/mol; ethylene glycol C2H6O2:
    # 2 x 12.011 + 6 x 1.008 + 2 x 15.999 = 62.068 (atomic weights from memory); propylene
    # glycol C3H8O2: CoolProp's model gives 76.09442 g/mol. The module's values are rounded to
    # 4-5 figures: rtol 1e-4 (a wrong substance would be off by far more, e.g. glycerol 92.09).
    assert MOLAR_MASS_WATER == pytest.approx(PropsSI("M", "Water") * 1000.0, rel=1e-4)
    assert GLYCOL_MOLAR_MASS["MEG"] == pytest.approx(2 * 12.011 + 6 * 1.008 + 2 * 15.999, rel=1e-4)
    assert GLYCOL_MOLAR_MASS["MPG"] == pytest.approx(
        PropsSI("M", "PropyleneGlycol") * 1e3, rel=1e-4
    )


def test_the_choice_is_part_of_the_cache_key():
    water = fluid_table(MEG30, vapour_pressure="water")
    raoult = fluid_table(MEG30, vapour_pressure="raoult")
    t = 330.0
    # x_water of MEG 30 % by hand above: 0.889373.
    assert raoult.vapour_pressure(t) / water.vapour_pressure(t) == pytest.approx(0.889373, rel=1e-5)
    # Spelling of the choice does not matter, and the table is built once.
    assert fluid_table(MEG30, vapour_pressure=" Water ") is water


# --- incompressible liquids: valid range --------------------------------------------------------


def test_incompressible_range_is_liquid_range_within_waters_and_nan_outside():
    table = fluid_table(MEG30, vapour_pressure="raoult")
    water = fluid_table("Water")
    # CoolProp's Tmin..Tmax of MEG (173.15..373.15 K) within water's table (273.16..634.15 K).
    assert table.t_min == pytest.approx(max(PropsSI("Tmin", MEG30), water.t_min), abs=1e-9)
    assert table.t_max == pytest.approx(min(PropsSI("Tmax", MEG30), water.t_max), abs=1e-9)
    temps = np.array([table.t_min - 0.01, table.t_min, 320.0, table.t_max, table.t_max + 0.01])
    temps = np.append(temps, np.nan)
    inside = np.array([False, True, True, True, False, False])
    p_v, rho = table.properties(temps)
    np.testing.assert_array_equal(table.in_range(temps), inside)
    np.testing.assert_array_equal(np.isfinite(p_v), inside)
    np.testing.assert_array_equal(np.isfinite(rho), inside)
    assert np.isnan(table.t_critical)


# --- incompressible liquids: refusals -----------------------------------------------------------


def test_incompressible_without_a_choice_raises_naming_the_choices():
    with pytest.raises(FluidError, match=r"choose vapour_pressure='water' .* or 'raoult'"):
        fluid_table(MEG30)
    with pytest.raises(FluidError, match="choose vapour_pressure="):
        fluid_table(MPG40, vapour_pressure="")


@pytest.mark.parametrize("fluid", ["INCOMP::MGL-30%", "INCOMP::DowQ", "INCOMP::MNA-10%"])
def test_raoult_for_a_solution_of_unknown_solute_raises(fluid):
    # Glycerol, a heat-transfer oil and a brine: no glycol molar mass to apply Raoult's law with.
    with pytest.raises(FluidError, match="needs an aqueous glycol solution of known solute"):
        fluid_table(fluid, vapour_pressure="raoult")


def test_raoult_without_a_concentration_raises():
    with pytest.raises(FluidError, match="needs the glycol mass fraction in the name"):
        fluid_table("INCOMP::MEG", vapour_pressure="raoult")


@pytest.mark.parametrize("fluid", ["INCOMP::MMA-20%", "INCOMP::DowQ"])
def test_water_choice_refused_where_water_is_no_bound(fluid):
    # Methanol is more volatile than water (boils near 65 °C, from memory); a non-aqueous
    # heat-transfer oil has a vapour pressure unrelated to water's.
    with pytest.raises(FluidError, match="would not be a safe bound"):
        fluid_table(fluid, vapour_pressure="water")


def test_unknown_choice_and_choice_for_a_fluid_with_its_own_vapour_pressure_raise():
    with pytest.raises(FluidError, match="not a known choice"):
        fluid_table(MEG30, vapour_pressure="steam")
    with pytest.raises(FluidError, match="applies only to CoolProp incompressible liquids"):
        fluid_table("Water", vapour_pressure="water")


def test_bad_mixture_strings_raise():
    with pytest.raises(FluidError, match="mole fractions add up to 1.1"):
        fluid_table("Propane[0.6]&n-Butane[0.5]")
    with pytest.raises(FluidError, match=r"Name\[mole fraction\]"):
        fluid_table("Propane&n-Butane")
    with pytest.raises(FluidError, match="not known to CoolProp"):
        fluid_table("Propane[0.6]&Unobtainium[0.4]")
    with pytest.raises(FluidError, match="not known to CoolProp"):
        fluid_table("INCOMP::Unobtainium-30%", vapour_pressure="water")


def test_pure_fluid_records_its_model():
    table = fluid_table("Water")
    assert table.vapour_pressure_model == "CoolProp saturated liquid"
    assert table.vapour_pressure_choice is None


def test_glycol_pump_through_the_register(tmp_path):
    """A glycol loop pump: the register names the vapour-pressure choice; without one the pump
    is reported, never screened on a silent default."""
    from plantmaker import PUMP_HEADER, make_plant, pump_row, steady_frame

    import screening

    frame = steady_frame(temperature_c=40.0)
    good = pump_row("P1", fluid="INCOMP::MEG-30%") + ",water"
    missing = pump_row("P2", fluid="INCOMP::MEG-30%") + ","
    path = make_plant(tmp_path, wide={"a.csv": frame})
    (tmp_path / "pumps.csv").write_text(
        PUMP_HEADER + ",vapour_pressure\n" + good + "\n" + missing + "\n"
    )
    r = screening.scan(path, keep_series=True)
    assert "incompressible" in r.problems.set_index("pump_id").loc["P2", "message"]
    assert r.summary.loc[0, "vapour_pressure_model"].startswith("water vapour pressure")
    # NPSHa with water's vapour pressure and the solution's density (CoolProp direct calls)
    import CoolProp.CoolProp as CP

    t = 313.15
    pv = CP.PropsSI("P", "T", t, "Q", 0, "Water")
    rho = CP.PropsSI("D", "T", t, "P", 101325, "INCOMP::MEG-30%")
    v = (80 / 3600) / (3.141592653589793 * 0.1**2 / 4)
    expected = (100e3 + 101325 - pv) / (rho * 9.80665) + v**2 / (2 * 9.80665)
    # rtol: the tables interpolate to 1e-6; nothing else differs
    assert r.series["P1"]["npsha_m"].iloc[0] == pytest.approx(expected, rel=1e-5)
