"""Units at the edges: every value read from a config or an export passes through here once.

Inside pumpscreen every quantity is SI: pressure [Pa] (absolute unless named gauge),
temperature [K], volumetric flow [m³/s], length and head [m], density [kg/m³], speed [rpm],
duration [s]. Unit strings are parsed by `pint`, never guessed: a unit that pint cannot parse,
or one of the wrong dimension, is an error that names what was expected.
"""

from __future__ import annotations

import re
import sys
from functools import lru_cache

import numpy as np


def _import_pint():
    """pint, imported without dask: pint imports dask wherever it is installed (for quantities
    of dask arrays, which pumpscreen never makes), and dask's import takes about a tenth of a
    second of every command's start. Dask itself stays importable (``--workers``, ``--cluster``)."""
    if "pint" in sys.modules or "dask" in sys.modules:
        import pint

        return pint
    sys.modules["dask"] = None  # importlib.util.find_spec("dask") answers None: taken as absent
    try:
        import pint
    finally:
        del sys.modules["dask"]
    return pint


pint = _import_pint()

#: The one unit registry of the program.
ureg = pint.UnitRegistry()
# US gallons per minute is the trade's flow unit in US customary plants.
ureg.define("gpm = gallon / minute")
ureg.define("gph = gallon / hour")

#: The SI unit each kind of quantity is converted to.
SI_UNITS: dict[str, str] = {
    "pressure": "Pa",
    "temperature": "K",
    "flow": "m**3/s",
    "length": "m",
    "speed": "rpm",
    "duration": "s",
    "density": "kg/m**3",
    "velocity": "m/s",
}

#: Example units shown in error messages, per kind.
EXAMPLES: dict[str, str] = {
    "pressure": "kPa, bar, psi, hPa, MPa, inHg",
    "temperature": "degC, degF, K",
    "flow": "m3/h, L/s, gpm, m3/s",
    "length": "m, mm, ft, in",
    "speed": "rpm, 1/min, Hz",
    "duration": "s, min, h",
    "density": "kg/m3, lb/ft3",
    "velocity": "mm/s, in/s, m/s",
}

_DIMENSIONS: dict[str, str] = {}
# "m3/h" -> "m**3/h" for length units only (so that "mmH2O" stays a water column).
_POWER = re.compile(r"(?<![A-Za-z])(m|cm|mm|dm|km|ft|in|yd|L|l)([23])(?![0-9A-Za-z.])")


class UnitError(ValueError):
    """A unit string that pint cannot parse or that has the wrong dimension."""


#: Spellings met in registers and historian exports, in the case pint reads them.
_CANONICAL = {
    u.lower(): u
    for u in ("Pa", "kPa", "MPa", "hPa", "bar", "mbar", "psi", "inHg", "mmHg", "degC", "degF",
              "K", "m3/h", "m3/s", "L/s", "L/min", "gpm", "rpm", "m", "mm", "ft", "in")
}  # fmt: skip
#: Pressure units written with the reference in them ("psig", "bar(a)", "kPa g").
_REFERENCED = re.compile(
    r"^\s*(?P<unit>k?pa|mpa|hpa|m?bar|psi|kg/cm2|kgf/cm2)\s*[(\[]?\s*(?P<ref>[ga])\s*[)\]]?\s*$",
    re.IGNORECASE,
)
_OTHER_HINTS = {
    "c": "degC", "f": "degF", "deg c": "degC", "deg f": "degF", "celsius": "degC",
    "fahrenheit": "degF", "usgpm": "gpm", "kg/cm2": "kgf/cm**2", "m3/hr": "m3/h", "lps": "L/s",
}  # fmt: skip


def unit_hint(text: str) -> str | None:
    """What to write instead of a unit that is refused, or None: ``psig`` -> ``psi`` with the
    reference column ``gauge``; ``kpa`` -> ``kPa`` (units are case-sensitive)."""
    s = str(text).strip()
    m = _REFERENCED.match(s)
    if m:
        unit = m.group("unit").lower()
        unit = "kgf/cm**2" if unit.startswith("kg") else _CANONICAL.get(unit, unit)
        ref = "gauge" if m.group("ref").lower() == "g" else "absolute"
        return (
            f"write {unit!r} and put the reference, {ref!r}, in the pressure's reference "
            "column (e.g. suction_pressure_reference)"
        )
    low = s.lower()
    if low in _OTHER_HINTS:
        return f"write {_OTHER_HINTS[low]!r}"
    if low in _CANONICAL and _CANONICAL[low] != s:
        return f"write {_CANONICAL[low]!r} (units are case-sensitive)"
    return None


def _normalise(text: str) -> str:
    text = text.strip().replace("³", "**3").replace("²", "**2").replace("°", "deg")
    text = text.replace("degreesC", "degC").replace("degreesF", "degF")
    # "m3/h" -> "m**3/h": pint does not read a bare trailing exponent.
    return _POWER.sub(r"\1**\2", text)


@lru_cache(maxsize=512)
def parse_unit(text: str, kind: str) -> pint.Unit:
    """Parse a unit string and check it is of the expected kind.

    Parameters
    ----------
    text : str
        Unit as written in a config or export, e.g. ``"psi"``, ``"m3/h"``, ``"degF"``.
    kind : str
        One of the keys of :data:`SI_UNITS`.

    Returns
    -------
    pint.Unit

    Raises
    ------
    UnitError
        If the text is empty, unknown to pint, or not of the dimension of ``kind``.
    """
    if kind not in SI_UNITS:
        raise ValueError(f"unknown quantity kind {kind!r}")
    if text is None or not str(text).strip():
        raise UnitError(f"no unit given for a {kind} (valid examples: {EXAMPLES[kind]})")
    hint = unit_hint(text)
    hint = f"; {hint}" if hint else ""
    try:
        unit = ureg.parse_units(_normalise(str(text)))
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError, Exception) as exc:
        raise UnitError(
            f"unit {text!r} is not known (valid {kind} units: {EXAMPLES[kind]}){hint}"
        ) from exc
    target = ureg.parse_units(SI_UNITS[kind])
    if unit.dimensionality != target.dimensionality:
        raise UnitError(
            f"unit {text!r} is not a {kind} unit (valid {kind} units: {EXAMPLES[kind]}){hint}"
        )
    return unit


def to_si(values, unit: str, kind: str) -> np.ndarray:
    """Convert values in ``unit`` to the SI unit of ``kind`` (see :data:`SI_UNITS`).

    Parameters
    ----------
    values : array_like
        Numbers in ``unit``.
    unit : str
        Unit string parsed by pint (offset units such as degC and degF are handled).
    kind : str
        Quantity kind: pressure [Pa], temperature [K], flow [m³/s], length [m], speed [rpm],
        duration [s], density [kg/m³].

    Returns
    -------
    numpy.ndarray of float64 in the SI unit of ``kind``.
    """
    scale, offset = _affine(unit, kind)
    arr = np.asarray(values, dtype=np.float64)
    if offset == 0.0:
        return arr * scale
    return arr * scale + offset


@lru_cache(maxsize=512)
def _affine(unit: str, kind: str) -> tuple[float, float]:
    """(scale, offset) with SI = value·scale + offset, from pint once per unit string: every
    unit of these kinds is linear or, for temperatures, affine (degC, degF)."""
    src = parse_unit(unit, kind)
    if kind == "speed":
        return _speed_factor(src), 0.0
    target = ureg.parse_units(SI_UNITS[kind])
    if src == target:
        return 1.0, 0.0
    offset = float(ureg.Quantity(0.0, src).to(target).magnitude)
    step = ureg.Quantity(1.0, src) - ureg.Quantity(0.0, src)  # one unit of difference
    return float(step.to(target).magnitude), offset


def _speed_factor(unit: pint.Unit) -> float:
    """Revolutions per minute per one ``unit``.

    pint counts a revolution as 2π radians and keeps the radian as a base unit, so rpm and
    rad/s carry an angle while 1/min and Hz do not. A rotational speed written without an angle
    (1/min, Hz) counts revolutions: 1/min = 1 rpm, 1 Hz = 60 rpm.
    """
    factor, root = ureg.get_root_units(unit)
    per_second = factor / (2.0 * np.pi) if "radian" in str(root) else factor
    return float(per_second * 60.0)


@lru_cache(maxsize=64)  # pint's formatting of the root units costs 2 ms a call
def is_bare_frequency(unit: str) -> bool:
    """True when a speed ``unit`` is a frequency without an angle other than per minute (Hz,
    1/s, kHz): such a tag may be the shaft's revolutions per second or a drive's output
    frequency, which differ by the number of pole pairs (a 4-pole motor at 40 Hz turns about
    1200 rpm, not 2400). 1/min (min⁻¹ on nameplates) and rpm, rad/s carry their meaning."""
    src = parse_unit(unit, "speed")
    _, root = ureg.get_root_units(src)
    return "radian" not in str(root) and abs(_speed_factor(src) - 1.0) > 1e-12


def scalar_to_si(value: float, unit: str, kind: str) -> float:
    """Convert one number in ``unit`` to the SI unit of ``kind`` [see :func:`to_si`], as a
    zero-dimensional array (the register converts some thousands of values)."""
    return float(to_si(value, unit, kind))


def si_to(values, unit: str, kind: str) -> np.ndarray:
    """Convert SI values of ``kind`` to ``unit`` (for display at the output edge)."""
    dst = parse_unit(unit, kind)
    arr = np.asarray(values, dtype=np.float64)
    if kind == "speed":
        return arr / _speed_factor(dst)
    factor = _display_factor(unit, kind)
    if factor is None:  # an offset unit (degC, degF): pint's own arithmetic
        return ureg.Quantity(arr, ureg.parse_units(SI_UNITS[kind])).to(dst).magnitude
    # a multiplicative unit: pint multiplies by this same factor (the same numbers, without
    # building a Quantity: a report converts some 30 series a pump page)
    return arr if factor == 1.0 else arr * factor


@lru_cache(maxsize=64)
def _display_factor(unit: str, kind: str) -> float | None:
    """The factor taking SI values of ``kind`` to the multiplicative ``unit`` [unit/SI], or
    None for a unit with an offset (temperatures)."""
    src = ureg.parse_units(SI_UNITS[kind])
    dst = parse_unit(unit, kind)
    one = ureg.Quantity(1.0, src)
    if not (one._is_multiplicative and ureg.Quantity(1.0, dst)._is_multiplicative):
        return None
    return float(one.to(dst).magnitude)


_QUANTITY = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


def parse_quantity(text: str, kind: str, default_unit: str | None) -> float:
    """Parse a config value such as ``"3.5 ft"`` or ``"120"`` (with a default unit) to SI.

    Parameters
    ----------
    text : str
        A number, optionally followed by its unit.
    kind : str
        Quantity kind (see :data:`SI_UNITS`).
    default_unit : str or None
        Unit for a bare number (for example from a ``[m]`` column header); ``None`` means a
        bare number is an error, since units are never guessed.

    Returns
    -------
    float, in the SI unit of ``kind``.
    """
    if isinstance(text, int | float) and not isinstance(text, bool):
        number, unit = float(text), ""
    else:
        match = _QUANTITY.match(str(text))
        if not match:
            raise UnitError(f"{text!r} is not a number with a unit (for example '3.5 ft')")
        number, unit = float(match.group(1)), match.group(2)
    if not unit:
        if default_unit is None:
            raise UnitError(
                f"{text!r} has no unit; write it with the value (valid {kind} units: "
                f"{EXAMPLES[kind]})"
            )
        unit = default_unit
    return scalar_to_si(number, unit, kind)


def parse_difference(text: str, kind: str) -> float:
    """Parse a difference such as ``"5 K"``, ``"5 degC"``, ``"9 degF"`` or ``"20 kPa"`` to SI.

    Temperature units with an offset are read as differences: 5 degC of difference is 5 K,
    9 degF is 5 K (not 278.15 K or 260.9 K). Other kinds are as :func:`parse_quantity`
    without a default unit.

    Parameters
    ----------
    text : str
        A number followed by its unit.
    kind : str
        Quantity kind (see :data:`SI_UNITS`).

    Returns
    -------
    float, in the SI unit of ``kind`` [K for temperature].
    """
    if kind != "temperature":
        return parse_quantity(text, kind, None)
    match = _QUANTITY.match(str(text))
    if not match or not match.group(2):
        raise UnitError(f"{text!r} is not a temperature difference with a unit (e.g. '5 K')")
    unit = parse_unit(match.group(2), "temperature")
    step = ureg.Quantity(1.0, unit) - ureg.Quantity(0.0, unit)  # one unit of difference
    return float(match.group(1)) * float(step.to("kelvin").magnitude)


def parse_duration(text: str) -> float:
    """Parse a duration such as ``"5 min"`` or ``"6 h"`` to seconds [s]."""
    return parse_quantity(text, "duration", None)
