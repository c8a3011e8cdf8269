"""The README's ten-minute walkthrough works as written, and the README and docs keep what
they promise: the example files shown are the files in docs/example, the columns it calls
required are required and those it calls optional are not, the links and pictures exist, the
cautions are all there and the headings other pages link to stay."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pandas as pd
import pytest

import screening
from screening.report.cautions import CAUTIONS

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")
EXAMPLE = ROOT / "docs" / "example"
REQUIRED = (
    "pump_id", "fluid", "application", "suction_pressure_tag", "suction_pressure_unit",
    "suction_pressure_reference", "temperature_tag", "temperature_unit", "flow_tag",
    "flow_unit", "pressure_reference_point", "pressure_point_elevation", "tap_bore",
    "rated_speed", "bep_flow", "curve_id",
)  # fmt: skip
OPTIONAL = ("service", "area", "run_tag")


def test_the_walkthrough_shows_the_example_files():
    blocks = re.findall(r"```[a-z]*\n(.*?)```", README, re.S)
    for name in ("my_plant.toml", "pumps.csv", "curves.csv"):
        assert (EXAMPLE / name).read_text(encoding="utf-8") in blocks, name
    export = (EXAMPLE / "exports" / "2026-10-week1.csv").read_text(encoding="utf-8")
    assert any(export.startswith(b) for b in blocks)


def test_the_example_plant_scans_and_finds_its_dip():
    result = screening.scan(EXAMPLE / "my_plant.toml", "2026-10-01", "2026-10-08")
    row = result.summary.iloc[0]
    assert row["pump_id"] == "P-101" and bool(row["enough_data"])
    assert row["below_guidance_hours"] > 1.0  # the planted dip of suction pressure


def _scan_without(tmp_path: Path, column: str):
    folder = tmp_path / column.replace(" ", "_")
    shutil.copytree(EXAMPLE, folder)
    pumps = pd.read_csv(folder / "pumps.csv")
    name = next(c for c in pumps.columns if c.split(" [")[0] == column)
    pumps.drop(columns=[name]).to_csv(folder / "pumps.csv", index=False)
    return screening.scan(folder / "my_plant.toml", "2026-10-01", "2026-10-08")


@pytest.mark.parametrize("column", REQUIRED)
def test_a_column_the_readme_calls_required_is_required(tmp_path, column):
    assert f"`{column}`" in README
    try:
        result = _scan_without(tmp_path, column)
    except screening.ConfigError as exc:  # a column every row needs: the file is refused
        assert "missing required column" in str(exc)
        return
    assert len(result.summary) == 0 and column in result.problems["message"].iloc[0]


@pytest.mark.parametrize("column", OPTIONAL)
def test_a_column_the_readme_calls_optional_is_optional(tmp_path, column):
    assert len(_scan_without(tmp_path, column).summary) == 1


def test_readme_links_pictures_cautions_and_stable_headings():
    for target in re.findall(r"\]\(((?:docs/|DEVELOPERS)[^)#]*)\)", README):
        assert (ROOT / target).is_file(), target
    for picture in ("docs/overview.png", "docs/pump_page.png"):
        assert f"({picture})" in README and (ROOT / picture).stat().st_size > 10_000
    for caution in CAUTIONS:
        assert " ".join(caution.split()) in " ".join(README.split()), caution
    assert "apt-get install chromium" in README and "browser test skipped" in README
    docs = "".join(p.read_text(encoding="utf-8") for p in (ROOT / "docs").glob("*.md"))
    for heading in (
        "### No silent all-clear",
        "## States",
        "## Configuration reference",
        "## Method and sources",
        "## Scale",
        "## Performance",
        "## Reliability",
    ):
        assert f"\n{heading}\n" in docs, heading  # fmt: skip
