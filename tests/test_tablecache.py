"""The disk cache of fluid tables gives back exactly the table that was built, and never a
wrong one (invented folder per test; the reference is a table built with the cache off)."""

from __future__ import annotations

import numpy as np
import pytest

from screening.physics import properties, tablecache


def _fresh(monkeypatch, folder) -> None:
    monkeypatch.setenv("PUMPSCREEN_CACHE", str(folder))
    monkeypatch.setattr(properties, "_ADOPTED", {})  # tables handed over by an earlier scan
    properties._fluid_table.cache_clear()


def test_a_cached_table_is_the_built_one(tmp_path, monkeypatch):
    _fresh(monkeypatch, tmp_path)
    built = properties.fluid_table("Methanol")
    assert len(list(tmp_path.glob("fluid-table-*.npz"))) == 1
    properties._fluid_table.cache_clear()

    def no_building(*args):
        raise AssertionError("the table should have come from the cache")

    monkeypatch.setattr(properties, "_build_table", no_building)
    cached = properties.fluid_table("Methanol")
    import dataclasses

    for f in dataclasses.fields(built):
        a, b = getattr(cached, f.name), getattr(built, f.name)
        if isinstance(b, np.ndarray):
            np.testing.assert_array_equal(a, b)
        else:
            assert a == b or (a != a and b != b), f.name  # NaN (no critical point) stays NaN
    np.testing.assert_array_equal(cached.ln_pv, built.ln_pv)
    np.testing.assert_array_equal(cached.rho, built.rho)
    assert cached.vapour_pressure(300.0) == built.vapour_pressure(300.0)


def test_a_damaged_file_is_rebuilt_and_choices_do_not_mix(tmp_path, monkeypatch):
    _fresh(monkeypatch, tmp_path)
    water = properties.fluid_table("INCOMP::MEG-30%", "water")
    raoult = properties.fluid_table("INCOMP::MEG-30%", "raoult")
    # one file per choice (and water's own table, which the "water" choice uses)
    assert len(list(tmp_path.glob("*.npz"))) == 3
    for f in tmp_path.glob("*.npz"):
        f.write_bytes(b"not a table")
    properties._fluid_table.cache_clear()
    again = properties.fluid_table("INCOMP::MEG-30%", "raoult")
    np.testing.assert_array_equal(again.ln_pv, raoult.ln_pv)
    assert again.vapour_pressure_choice == "raoult" != water.vapour_pressure_choice


def test_the_cache_can_be_turned_off(tmp_path, monkeypatch):
    monkeypatch.setenv("PUMPSCREEN_CACHE", "off")
    properties._fluid_table.cache_clear()
    assert tablecache.folder() is None
    properties.fluid_table("Water")
    assert tablecache.load(tablecache.key("fluid-table", "Water"), properties.FluidTable) is None


def test_keys_change_with_what_decides_the_numbers():
    a = tablecache.key("fluid-table", "Water", None, (1e-6,))
    assert a == tablecache.key("fluid-table", "Water", None, (1e-6,))
    assert a != tablecache.key("fluid-table", "Water", None, (1e-7,))
    assert a != tablecache.key("fluid-table", "Water", "water", (1e-6,))


@pytest.fixture(autouse=True)
def _clear_after():
    yield
    properties._fluid_table.cache_clear()
