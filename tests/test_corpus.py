"""Replay of tests/corpus/: every input that once made a reader fail, with what it broke.

Exports are screened as the only export of a one-pump invented plant (window 2026-10-01 to
2026-10-02 UTC, 5 min stale limit); registers, curves and plant files go through their
readers. Each must give the outcome stated beside it, and never another exception.
"""

from __future__ import annotations

import shutil
from dataclasses import dataclass
from pathlib import Path

import pytest
from fuzzkit import Outcome, plant_with_export

import screening
from screening.inputs.config import ConfigError, read_plant_file
from screening.inputs.register import read_curves, read_pump_register

CORPUS = Path(__file__).parent / "corpus"


@dataclass(frozen=True)
class Case:
    file: str
    note: str  # what the input once broke


CASES = [
    Case(
        "wide_zone_names.csv",
        "zone names ('CET' beside 'UTC') made pandas raise: whole scan stopped",
    ),
    Case(
        "wide_year_9999.csv", "a year beyond 2262 raised OutOfBoundsDatetime: the whole file lost"
    ),
    Case(
        "wide_dotted_dates.csv",
        "'01.10.2026 03:00' read month first (10 January): no data, silently; now read only "
        "with a declared date_order",
    ),
    Case(
        "wide_extra_field.csv", "a row with two extra fields read with its first fields, silently"
    ),
    Case(
        "wide_truncated_last_line.csv",
        "a cut last line: missing cells 'not sampled', cut number used",
    ),
    Case("wide_duplicate_column.csv", "the second 'P1.PS' column ignored, silently"),
    Case("wide_latin1_degree.csv", "a Latin-1 '°' reported by byte position, not by line"),
    Case(
        "wide_binary_values.parquet", "binary cells raised UnicodeDecodeError: whole scan stopped"
    ),
    Case("wide_bool_run.parquet", "a boolean run status read as text: all bad data"),
    Case(
        "wide_extra_fields_first_row.csv",
        "extra fields in the first row made pandas take an index: InvalidIndexError, scan stopped",
    ),
    Case("pumps_latin1_degree.csv", "one Latin-1 '°C' in a row stopped the whole plant"),
    Case("pumps_extra_fields.csv", "a row with extra fields shifted every cell (pump id 'A')"),
    Case(
        "pumps_quoted_newline.csv", "a line break inside a quoted cell shifted later line numbers"
    ),
    Case("pumps_huge_stale.csv", "stale_limit '1e12 h' overflowed in the scan: whole run stopped"),
    Case("curves_falling.csv", "an NPSH3 curve falling all the way to its highest flow accepted"),
    Case("curves_peak.csv", "an NPSH3 curve falling again after rising accepted"),
    Case("plant_deep_nesting.toml", "deeply nested arrays raised RecursionError"),
    Case("plant_inf_ratio.toml", "ample_ratio = inf accepted"),
    Case("plant_long_timezone.toml", "a 300-letter time zone raised OSError (file name too long)"),
    Case("plant_huge_stale.toml", "stale_limit '1e30 h' accepted, then overflowed in the scan"),
    Case("plant_latin1.toml", "a Latin-1 '°' reported by byte position, not by line"),
    Case("plant_reversed_scaling_range.toml", "speed_scaling_range [1.2, 0.8] accepted"),
]


def test_every_corpus_file_is_listed_once():
    assert sorted(c.file for c in CASES) == sorted(p.name for p in CORPUS.iterdir())


def _scan(tmp_path: Path, name: str) -> screening.ScanResult:
    kind = "wide-parquet" if name.endswith(".parquet") else "wide-csv"
    result = screening.scan(plant_with_export(tmp_path, kind, (CORPUS / name).read_bytes()))
    outcome = Outcome(result)
    outcome.check_accounting()
    outcome.check_nothing_lost({"P1"})
    return result


def _margin(result) -> dict[str, float]:
    h = result.hours
    return h[h.kind == "margin"].set_index("state")["hours"].to_dict()


def _q(result, role: str):
    return result.quality.set_index("role").loc[role]


def _replay_export(tmp_path: Path, name: str) -> None:
    r = _scan(tmp_path, name)
    files = " ".join(r.file_problems["message"])
    if name == "wide_zone_names.csv":
        assert _q(r, "suction")["bad_timestamps"] == 1  # 'CET' cannot be placed
        assert _q(r, "suction")["samples"] == 2  # the two 'UTC' rows are read
    elif name == "wide_year_9999.csv":
        assert _q(r, "flow")["bad_timestamps"] == 1 and _q(r, "flow")["samples"] == 2
    elif name == "wide_dotted_dates.csv":
        # '01.10.2026' reads as 1 October or 10 January: without a declared order the rows
        # are not placed (never guessed), and the file is named with both readings
        assert _q(r, "temperature")["bad_timestamps"] == 24
        assert "1 October 2026 (day first) or 10 January 2026 (month first)" in files
        assert "date_order" in files
        plant = tmp_path / "plant.toml"
        plant.write_text(
            plant.read_text().replace("[[exports]]\n", '[[exports]]\ndate_order = "day_first"\n')
        )
        r = screening.scan(plant)
        assert _q(r, "temperature")["samples"] == 24  # 1 to 2 October, inside the window
        assert _margin(r)["ample_margin"] == pytest.approx(24 * 5 / 60)
    elif name == "wide_extra_field.csv":
        for role in ("suction", "temperature", "flow", "run"):
            assert _q(r, role)["samples"] == 24
        assert "row with a wrong number of fields" in _q(r, "flow")["first_problem"]
        assert "wide_extra_field.csv line 5" not in files  # the file is read
        assert _margin(r)["bad_data"] == pytest.approx(5 / 60)
    elif name == "wide_truncated_last_line.csv":
        assert "a.csv line 25" in _q(r, "run")["first_problem"]
        assert _margin(r)["bad_data"] == pytest.approx(5 / 60)
    elif name == "wide_duplicate_column.csv":
        assert "column 'P1.PS' appears twice (columns 2 and 6)" in files
        assert "P1.PS (suction)" in r.problems["message"].iloc[0]
    elif name == "wide_latin1_degree.csv":
        column = (CORPUS / name).read_bytes().split(b"\n")[6].index(b"\xb0") + 1
        assert f"a.csv line 7: not utf-8 text (byte 0xb0 at column {column};" in files
    elif name == "wide_binary_values.parquet":
        assert _q(r, "temperature")["text_values"] == 24
        assert _margin(r)["bad_data"] == pytest.approx(24 * 5 / 60)
    elif name == "wide_extra_fields_first_row.csv":
        assert "row with a wrong number of fields: " in _q(r, "suction")["first_problem"]
        assert "a.csv line 2" in _q(r, "suction")["first_problem"]
        assert _q(r, "suction")["samples"] == 2 and r.file_problems.empty
    elif name == "wide_bool_run.parquet":
        assert _q(r, "run")["text_values"] == 0
        assert _margin(r)["ample_margin"] == pytest.approx(24 * 5 / 60)


def _copy(tmp_path: Path, name: str, as_name: str) -> Path:
    return Path(shutil.copy(CORPUS / name, tmp_path / as_name))


@pytest.mark.parametrize("case", CASES, ids=[c.file for c in CASES])
def test_corpus_input_is_handled(case, tmp_path):
    name = case.file
    if name.startswith("wide_"):
        _replay_export(tmp_path, name)
    elif name.startswith("pumps_"):
        pumps, problems = read_pump_register(_copy(tmp_path, name, "pumps.csv"))
        messages = {p.pump_id: p.message for p in problems}
        if name == "pumps_latin1_degree.csv":
            assert list(pumps) == ["P2"]
            assert "line 2, column 'temperature_unit': not UTF-8 text" in messages["P1"]
        elif name == "pumps_extra_fields.csv":
            assert (
                pumps == {}
                and "line 2: the row has 25 fields and the header 23" in (messages["P1"])
            )
        elif name == "pumps_quoted_newline.csv":
            assert pumps["P1"].service == "north\nbasin"
            assert "line 4 (pump P2), column 'fluid'" in messages["P2"]
        elif name == "pumps_huge_stale.csv":
            assert list(pumps) == ["P2"]
            assert (
                "column 'stale_limit': must be a positive duration up to 366 days"
                in (messages["P1"])
            )
    elif name.startswith("curves_"):
        curves, problems = read_curves(_copy(tmp_path, name, "curves.csv"))
        assert "C1" not in curves
        assert "must rise" in problems["C1"]
        if name == "curves_peak.csv":
            assert list(curves) == ["C2"]  # the sound curve beside it is kept
    else:
        path = _copy(tmp_path, name, "plant.toml")
        expected = {
            "plant_deep_nesting.toml": r"not valid TOML: arrays or tables nested too deeply",
            "plant_inf_ratio.toml": r"\[policy.ample_ratio\] Input should be a finite number",
            "plant_huge_stale.toml": r"\[data.stale_limit\] '1e30 h' is not a duration",
            "plant_latin1.toml": r"plant.toml line 3: not UTF-8 text \(byte 0xb0",
            "plant_reversed_scaling_range.toml": r"speed_scaling_range\] \[1.2, 0.8\] is not",
            "plant_long_timezone.toml": r"\[site.timezone\] time zone 'xxxx",
        }[name]
        with pytest.raises(ConfigError, match=expected):
            read_plant_file(path)
