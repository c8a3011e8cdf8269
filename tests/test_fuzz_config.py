"""Fuzzing the pump register, the NPSH3 curves and the plant file (TOML).

Register and curves: every data row ends as a usable pump or curve point, or as a problem
naming the file and the line (a broken row concerns its pump only); a table that cannot be
read at all is a ConfigError naming the file. Nothing is dropped silently: usable pumps plus
problems make up every row. Plant file: a valid PlantFile with finite settings, or a
ConfigError naming the file. No other exception may escape.
"""

from __future__ import annotations

import csv
import io
import math
import tempfile
from pathlib import Path

import numpy as np
import pytest
from fuzzkit import cell_values
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from plantmaker import PUMP_HEADER, make_plant, pump_row

from screening.inputs.config import ConfigError, read_plant_file
from screening.inputs.register import read_curves, read_pump_register

FUZZ = settings(
    max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow], database=None
)
COLUMNS = [c.split(" [")[0] for c in PUMP_HEADER.split(",")]
CURVES_HEADER = "curve_id,flow,flow_unit,npsh3,npsh3_unit"


def _records(data: bytes) -> list[list[str]]:
    """Non-blank CSV records of a file (the oracle: Python's csv module)."""
    text = data.decode("utf-8-sig", errors="replace")
    return [r for r in csv.reader(io.StringIO(text, newline="")) if any(c.strip() for c in r)]


@st.composite
def register_bytes(draw) -> bytes:
    """A pump register with cells replaced by malformed values and lines damaged."""
    n = draw(st.integers(0, 6))
    lines = [PUMP_HEADER]
    for i in range(n):
        pid = draw(st.sampled_from([f"P{i}", "P0", "", "<b>P</b>", "../../P", "=P1"]))
        changes = draw(
            st.dictionaries(
                st.sampled_from(COLUMNS[1:]),
                st.one_of(cell_values, st.sampled_from(["°C", "1e400 m", "1e12 h", "inf rpm"])),
                max_size=3,
            )
        )
        lines.append(pump_row(pid, **{k: v.replace(",", ";") for k, v in changes.items()}))
    text = "\n".join(lines) + "\n"
    how = draw(st.sampled_from(["utf-8", "utf-8-sig", "latin-1"]))
    data = text.encode(how, errors="replace")
    damage = draw(st.sampled_from(["none", "none", "truncate", "stray comma", "semicolons"]))
    if damage == "truncate":
        data = data[: draw(st.integers(0, len(data)))]
    elif damage == "stray comma" and n:
        parts = data.split(b"\n")
        k = draw(st.integers(1, n))
        parts[k] += b",extra"
        data = b"\n".join(parts)
    elif damage == "semicolons":
        data = data.replace(b",", b";")
    return data


@FUZZ
@given(data=register_bytes())
def test_register_rows_are_pumps_or_problems(data):
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "pumps.csv"
        path.write_bytes(data)
        records = _records(data)
        try:
            pumps, problems = read_pump_register(path)
        except ConfigError as exc:
            assert str(path) in str(exc)
            # only a missing or damaged header stops the whole table, never a row
            assert not records or [c.strip() for c in records[0]] != PUMP_HEADER.split(",")
            return
        rows = records[1:]
        assert len(pumps) + len(problems) == len(rows)  # nothing dropped silently
        for p in problems:
            assert str(path) in p.message and " line " in p.message, p.message
        for spec in pumps.values():
            for value in (spec.tap_elevation, spec.tap_bore, spec.rated_speed, spec.bep_flow):
                assert math.isfinite(value)
            assert spec.rated_speed > 0 and spec.bep_flow > 0 and spec.tap_bore > 0
            for tag in spec.tags().values():
                assert tag.stale_limit is None or 0 < tag.stale_limit <= 366 * 86400


@st.composite
def curves_bytes(draw) -> bytes:
    """An NPSH3 curve table: rising, falling, peaked, with bad cells and units."""
    lines = [CURVES_HEADER]
    for cid in draw(st.lists(st.sampled_from(["C1", "C2", "C3"]), max_size=3, unique=True)):
        n = draw(st.integers(0, 6))
        flows = sorted(draw(st.lists(st.floats(0, 500), min_size=n, max_size=n)))
        if draw(st.booleans()):
            flows = flows[::-1]
        heads = draw(st.lists(st.floats(-1, 20), min_size=n, max_size=n))
        if draw(st.booleans()):
            heads = sorted(heads)
        for q, h in zip(flows, heads, strict=True):
            q_text = draw(st.one_of(st.just(f"{q:.3f}"), cell_values))
            unit = draw(st.sampled_from(["m3/h", "m3/h", "gpm", "L/s", "", "°C", "m³/h"]))
            lines.append(f"{cid},{q_text.replace(',', ';')},{unit},{h:.3f},m")
    text = "\n".join(lines) + "\n"
    data = text.encode(draw(st.sampled_from(["utf-8", "latin-1"])), errors="replace")
    if draw(st.booleans()):
        data = data[: draw(st.integers(0, len(data)))]
    return data


@FUZZ
@given(data=curves_bytes())
def test_curve_rows_are_curves_or_problems(data):
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "curves.csv"
        path.write_bytes(data)
        records = _records(data)
        try:
            curves, problems = read_curves(path)
        except ConfigError as exc:
            assert str(path) in str(exc)
            assert not records or records[0] != CURVES_HEADER.split(",")  # header at fault
            return
        ids = {r[0].strip() for r in records[1:]}
        assert set(curves) | set(problems) == ids  # every curve named in the file
        assert not set(curves) & set(problems)
        for cid, message in problems.items():
            assert str(path) in message and cid in message or " line " in message
        for curve in curves.values():
            assert np.all(np.isfinite(curve.flow)) and np.all(np.isfinite(curve.npsh3))
            assert np.all(np.diff(curve.flow) > 0) and np.all(curve.npsh3 > 0)
            lowest = int(np.argmin(curve.npsh3))
            assert np.all(np.diff(curve.npsh3[lowest:]) >= 0)  # rises beyond its minimum
            assert lowest < len(curve.npsh3) - 1


_TOML_VALUES = [
    "inf", "-inf", "nan", "1e400", '"1e30 h"', '"-5 min"', '"inf m"', '"1e9 m"', "[]", "{}",
    "[1, 2]", '"°C"', "2026-10-01", "true", '"__import__(\'os\').system(\'true\')"',
    "[" * 600 + "]" * 600, '"' + "x" * 5000 + '"', '"Europe/Ber\\u0000lin"', '""',
]  # fmt: skip


@st.composite
def plant_text(draw, base: str) -> bytes:
    """The invented plant file with a value replaced, a line cut, or bytes inserted."""
    lines = base.splitlines()
    for _ in range(draw(st.integers(1, 3))):
        kind = draw(st.sampled_from(["value", "value", "cut", "insert", "truncate"]))
        i = draw(st.integers(0, len(lines) - 1))
        if kind == "value" and "=" in lines[i]:
            key = lines[i].split("=")[0]
            lines[i] = f"{key}= {draw(st.sampled_from(_TOML_VALUES))}"
        elif kind == "cut":
            del lines[i]
        elif kind == "insert":
            lines.insert(i, draw(st.sampled_from(["[site]", "x = 1", "import os", "= 1", "[["])))
        elif kind == "truncate":
            lines = lines[:i]
        if not lines:
            lines = [""]
    text = "\n".join(lines)
    return text.encode(draw(st.sampled_from(["utf-8", "utf-8-sig", "latin-1"])), "replace")


@pytest.fixture(scope="module")
def base_plant(tmp_path_factory) -> str:
    folder = tmp_path_factory.mktemp("base")
    return make_plant(folder, wide={}, rows=[pump_row("P1")]).read_text(encoding="utf-8")


@FUZZ
@given(data=st.data())
def test_plant_file_is_valid_or_a_config_error(base_plant, data):
    content = data.draw(plant_text(base_plant))
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "plant.toml"
        path.write_bytes(content)
        try:
            plant, _ = read_plant_file(path)
        except ConfigError as exc:
            assert str(path) in str(exc)
            return
        numbers = [plant.site.elevation, plant.data.stale_limit, plant.policy.ample_ratio]
        numbers += [r.ratio for r in plant.policy.rules] + [r.margin for r in plant.policy.rules]
        assert all(math.isfinite(x) for x in numbers)
        assert 0 < plant.data.stale_limit <= 366 * 86400
        assert -1000 <= plant.site.elevation <= 10_000
