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
    with pytest.warns(tablecache.CacheWarning, match="is damaged"):
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


@pytest.mark.parametrize("damage", ["empty", "truncated", "zip of other arrays"])
def test_an_empty_or_truncated_file_is_named_rebuilt_and_replaced(tmp_path, monkeypatch, damage):
    _fresh(monkeypatch, tmp_path)
    built = properties.fluid_table("Water")
    (path,) = tmp_path.glob("fluid-table-*.npz")
    good = path.read_bytes()
    if damage == "empty":
        path.write_bytes(b"")
    elif damage == "truncated":
        path.write_bytes(good[: len(good) // 3])
    else:
        np.savez(path, something=np.arange(3))
    properties._fluid_table.cache_clear()
    with pytest.warns(tablecache.CacheWarning, match=f"cache file {path} is damaged") as caught:
        again = properties.fluid_table("Water")
    assert len(caught) == 1 and "\n" not in str(caught[0].message)
    np.testing.assert_array_equal(again.ln_pv, built.ln_pv)
    assert path.read_bytes() == good  # replaced by the rebuilt table
    properties._fluid_table.cache_clear()
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error")  # the replaced file loads without a note
        properties.fluid_table("Water")


def test_a_damaged_file_is_one_line_in_the_command_line(tmp_path, monkeypatch):
    from plantmaker import make_plant, steady_frame
    from typer.testing import CliRunner

    from screening.cli.main import app

    cache = tmp_path / "cache"
    _fresh(monkeypatch, cache)
    path = make_plant(tmp_path / "plant", wide={"a.csv": steady_frame("P1")})
    runner = CliRunner()
    res = runner.invoke(app, ["scan", str(path), "--out", str(tmp_path / "r1")])
    assert res.exit_code == 0, res.output
    files = list(cache.glob("fluid-table-*.npz"))
    assert files
    for f in files:
        f.write_bytes(b"")  # a disk that filled up while the cache was written
    properties._fluid_table.cache_clear()
    res = runner.invoke(app, ["scan", str(path), "--out", str(tmp_path / "r2")])
    assert res.exit_code == 0, res.output
    notes = [line for line in res.output.splitlines() if "cache file" in line]
    assert notes and all(
        line.startswith("pumpscreen: note: fluid-table cache file ") and "is damaged" in line
        for line in notes
    ), res.output
    assert "warnings.warn" not in res.output and "CacheWarning" not in res.output
    assert all(f.stat().st_size > 0 for f in files)  # replaced by rebuilt tables
