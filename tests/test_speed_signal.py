"""A speed tag in Hz: shaft revolutions per second or a drive's output frequency, never guessed.

Reference: the synchronous speed of an induction motor, n_s = 120·f/p (p poles; any electrical
machines text, from memory), so a drive's output frequency maps to shaft speed through the
number of poles, which the register gives as rated speed and rated frequency: n = n_rated ·
f / f_rated, slip neglected (the slip changes n/n_rated by a fraction of a percent).
"""

from __future__ import annotations

import pytest
from plantmaker import header_with, make_plant, pump_row, steady_frame

import screening


def _plant(tmp_path, speed_hz: float, **extra):
    frame = steady_frame()
    frame["P1.SP"] = speed_hz
    row = pump_row("P1", speed_tag="P1.SP", speed_unit="Hz", **extra)
    return make_plant(tmp_path, wide={"a.csv": frame}, rows=[row], header=header_with(*extra))


def test_bare_hz_is_refused_with_a_message(tmp_path):
    plant = screening.load_plant(_plant(tmp_path, 40.0))
    assert "P1" not in plant.pumps
    assert "speed_signal" in plant.problems["P1"]
    assert "speed_unit" in plant.problems["P1"] and "pumps.csv line 2" in plant.problems["P1"]


def test_drive_frequency_maps_to_shaft_speed(tmp_path):
    # A 4-pole pump rated 1480 rpm at 50 Hz, drive at 40 Hz: n = 1480·40/50 = 1184 rpm (our
    # arithmetic; slip neglected). Read as shaft rev/s it would have been 2400 rpm.
    path = _plant(tmp_path, 40.0, speed_signal="drive_frequency", rated_frequency="50 Hz")
    r = screening.scan(path, keep_series=True)
    assert r.problems.empty, r.problems
    speed = r.series["P1"]["speed_rpm"].dropna()
    assert speed.to_numpy() == pytest.approx(1184.0, rel=1e-12)


def test_shaft_speed_in_hz(tmp_path):
    # A tag of shaft revolutions per second: 24.5 Hz = 1470 rpm (definition of the hertz).
    path = _plant(tmp_path, 24.5, speed_signal="shaft", rated_frequency="")
    r = screening.scan(path, keep_series=True)
    assert r.series["P1"]["speed_rpm"].dropna().to_numpy() == pytest.approx(1470.0, rel=1e-12)


def test_drive_frequency_needs_the_rated_frequency(tmp_path):
    plant = screening.load_plant(
        _plant(tmp_path, 40.0, speed_signal="drive_frequency", rated_frequency="")
    )
    assert "rated_frequency" in plant.problems["P1"]
