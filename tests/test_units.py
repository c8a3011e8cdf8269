"""Unit parsing and conversion at the edges, against the exact definitions of the units.

Exact definitions (NIST SP 811, 2008 edition, appendix B; from memory): 1 ft = 0.3048 m
(international foot, 1959); 1 in = 0.0254 m; 1 US gallon = 231 in³ = 3.785411784 L;
1 lb = 0.45359237 kg; 1 lbf = 1 lb · 9.80665 m/s²; 1 bar = 1e5 Pa; 1 L = 1e-3 m³;
T[K] = (T[°F] + 459.67)·5/9; T[K] = T[°C] + 273.15. The conventional inch of mercury is
25.4 mm · 13595.1 kg/m³ · 9.80665 m/s² = 3386.389 Pa (NIST SP 811, from memory).

Conversions that follow from exact definitions are checked to rtol 1e-12 (a few ulp of
rounding in pint's chain of factors; a wrong factor is off by far more).
"""

from __future__ import annotations

import numpy as np
import pytest

from screening.inputs.units import UnitError, parse_quantity, parse_unit, scalar_to_si, to_si

EXACT = 1e-12
GALLON_M3 = 3.785411784e-3  # US gallon [m³], exact
PSI_PA = 0.45359237 * 9.80665 / 0.0254**2  # lbf/in² [Pa], exact


@pytest.mark.parametrize(
    ("unit", "kind", "si_of_one"),
    [
        ("m3/h", "flow", 1.0 / 3600.0),
        ("m³/h", "flow", 1.0 / 3600.0),
        ("gpm", "flow", GALLON_M3 / 60.0),
        ("L/s", "flow", 1e-3),
        ("psi", "pressure", PSI_PA),
        ("bar", "pressure", 1e5),
        ("kPa", "pressure", 1e3),
        ("inHg", "pressure", 0.0254 * 13595.1 * 9.80665),
        ("ft", "length", 0.3048),
        ("in", "length", 0.0254),
        ("mm", "length", 1e-3),
        ("rpm", "speed", 1.0),
        ("min", "duration", 60.0),
        ("h", "duration", 3600.0),
    ],
)
def test_linear_units_against_exact_definitions(unit, kind, si_of_one):
    got = to_si([1.0, 2.5], unit, kind)
    np.testing.assert_allclose(got, [si_of_one, 2.5 * si_of_one], rtol=EXACT)


def test_inch_of_mercury_is_the_conventional_one():
    # 3386.389 Pa (conventional inHg, NIST SP 811, from memory), printed to 7 figures.
    assert float(to_si(1.0, "inHg", "pressure")) == pytest.approx(3386.389, abs=5e-4)


@pytest.mark.parametrize(
    ("values", "unit", "kelvin"),
    [
        ([32.0, 212.0, -40.0, 68.0], "degF", [273.15, 373.15, 233.15, 293.15]),
        ([32.0, 212.0], "°F", [273.15, 373.15]),
        ([0.0, 100.0, -40.0], "degC", [273.15, 373.15, 233.15]),
        ([0.0, 100.0], "°C", [273.15, 373.15]),
        ([300.0], "K", [300.0]),
    ],
)
def test_temperatures_with_offsets(values, unit, kelvin):
    # Offset scales: absolute values, not differences (−40 °F = −40 °C = 233.15 K).
    # atol 1e-9 K: the definitions give these exactly; only float rounding remains.
    np.testing.assert_allclose(to_si(values, unit, "temperature"), kelvin, rtol=0, atol=1e-9)


def test_fahrenheit_against_its_definition():
    f = np.linspace(-40.0, 400.0, 45)
    np.testing.assert_allclose(
        to_si(f, "degF", "temperature"), (f + 459.67) * 5.0 / 9.0, rtol=0, atol=1e-9
    )


def test_superscript_and_ascii_powers_parse_alike():
    assert parse_unit("m³/h", "flow") == parse_unit("m3/h", "flow")
    assert parse_unit("°C", "temperature") == parse_unit("degC", "temperature")


def test_to_si_returns_a_new_float_array():
    src = np.array([1.0, 2.0])
    out = to_si(src, "m", "length")
    out[0] = 99.0
    assert src[0] == 1.0
    assert to_si([1, 2], "m3/s", "flow").dtype == np.float64


@pytest.mark.parametrize(
    ("unit", "kind"),
    [("degF", "temperature"), ("°C", "temperature"), ("K", "temperature"), ("psi", "pressure"),
     ("kPa", "pressure"), ("gpm", "flow"), ("ft", "length"), ("rpm", "speed"), ("Hz", "speed")],
)  # fmt: skip
def test_one_number_converts_as_an_array_does(unit, kind):
    """scalar_to_si (the register's values) and to_si (the tags' samples) agree to the bit,
    signed zeros and extremes included."""
    values = np.concatenate(
        [np.random.default_rng(7).normal(0.0, 1e3, 500), [0.0, -0.0, 1e-300, -1e300, 33.3]]
    )
    one = np.array([scalar_to_si(float(v), unit, kind) for v in values])
    many = to_si(values, unit, kind)
    assert np.array_equal(one, many)
    assert np.array_equal(np.signbit(one), np.signbit(many))


# --- parse_quantity -------------------------------------------------------------------------


def test_parse_quantity_with_its_own_unit():
    assert parse_quantity("3.5 ft", "length", None) == pytest.approx(3.5 * 0.3048, rel=EXACT)
    assert parse_quantity("-40 degF", "temperature", None) == pytest.approx(233.15, abs=1e-9)
    assert parse_quantity("1e3 Pa", "pressure", None) == pytest.approx(1000.0, rel=EXACT)
    # A unit in the text wins over the default.
    assert parse_quantity("2 bar", "pressure", "psi") == pytest.approx(2e5, rel=EXACT)


def test_parse_quantity_bare_number_takes_the_default_unit():
    assert parse_quantity("120", "length", "mm") == pytest.approx(0.12, rel=EXACT)
    assert parse_quantity(2.0, "length", "ft") == pytest.approx(0.6096, rel=EXACT)


# --- errors ---------------------------------------------------------------------------------


@pytest.mark.parametrize("unit", ["furlongs_per_parsec", "psiq", "foo"])
def test_unknown_unit_raises(unit):
    with pytest.raises(UnitError, match="is not known"):
        to_si(1.0, unit, "pressure")


def test_wrong_dimension_raises():
    with pytest.raises(UnitError, match="'kPa' is not a flow unit"):
        to_si(1.0, "kPa", "flow")
    with pytest.raises(UnitError, match="is not a flow unit"):
        parse_quantity("5 kPa", "flow", None)
    with pytest.raises(UnitError, match="is not a temperature unit"):
        to_si(1.0, "gpm", "temperature")


def test_bare_number_without_default_unit_raises():
    with pytest.raises(UnitError, match="has no unit"):
        parse_quantity("120", "length", None)
    with pytest.raises(UnitError, match="has no unit"):
        parse_quantity(120.0, "pressure", None)


def test_empty_unit_raises():
    with pytest.raises(UnitError, match="no unit given"):
        parse_unit("  ", "pressure")


def test_text_that_is_not_a_number_raises():
    with pytest.raises(UnitError, match="is not a number with a unit"):
        parse_quantity("abc", "length", None)


def test_unknown_kind_raises():
    with pytest.raises(ValueError, match="unknown quantity kind"):
        parse_unit("m", "colour")


# --- cases that once failed: speed without an angle, water-column pressure units ---------


@pytest.mark.parametrize(("value", "unit"), [(1480.0, "1/min"), (1480.0 / 60.0, "Hz")])
def test_speed_in_per_minute_and_hertz(value, unit):
    # Shaft speed in min⁻¹ is revolutions per minute (ISO 9906 writes speed in min⁻¹, from
    # memory); 1 Hz of shaft rotation is one revolution per second = 60 rpm (definitions).
    assert float(to_si(value, unit, "speed")) == pytest.approx(1480.0, rel=EXACT)


def test_water_column_pressure_units():
    # Conventional millimetre of water: 1 mm · 1000 kg/m³ · 9.80665 m/s² = 9.80665 Pa
    # (NIST SP 811, from memory). Common on low-pressure suction and vessel-level transmitters.
    assert float(to_si(1.0, "mmH2O", "pressure")) == pytest.approx(9.80665, rel=1e-9)
