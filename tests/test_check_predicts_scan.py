"""`check` predicts the scan: on every corpus input and on fuzzed exports it gives each pump
the verdict the scan's own tables give it (screened with enough data, not enough data, not
screened), so it never says ok where the scan then leaves a pump unscreened."""

from __future__ import annotations

import tempfile
from pathlib import Path

import pytest
from fuzzkit import long_csv, long_parquet, plant_with_export, wide_csv, wide_parquet
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import screening
from screening.engine.preflight import CAN_BE_SCREENED, CANNOT_BE_SCREENED, NOT_ENOUGH_DATA

CORPUS = Path(__file__).parent / "corpus"
EXPORT_KINDS = {".csv": "wide-csv", ".parquet": "wide-parquet"}


def _verdicts_of_scan(result) -> dict[str, str]:
    out = {p: CANNOT_BE_SCREENED for p in result.problems["pump_id"]}
    for row in result.summary.itertuples(index=False):
        out[row.pump_id] = CAN_BE_SCREENED if row.enough_data else NOT_ENOUGH_DATA
    return out


def _compare(path: Path) -> None:
    scan = screening.scan(path)
    checked = screening.check(path)
    assert dict(zip(checked.verdicts["pump_id"], checked.verdicts["verdict"], strict=True)) == (
        _verdicts_of_scan(scan)
    )
    clean = (
        scan.problems.empty and scan.file_problems.empty and bool(scan.summary["enough_data"].all())
    )
    assert checked.ok == clean


@pytest.mark.parametrize(
    "name", sorted(p.name for p in CORPUS.iterdir() if p.name.startswith("wide_"))
)
def test_check_and_scan_agree_on_every_corpus_export(tmp_path, name):
    kind = EXPORT_KINDS[Path(name).suffix]
    _compare(plant_with_export(tmp_path, kind, (CORPUS / name).read_bytes()))


STRATEGIES = {
    "wide-csv": wide_csv(),
    "long-csv": long_csv(),
    "wide-parquet": wide_parquet(),
    "long-parquet": long_parquet(),
}


@settings(
    max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow], database=None
)
@given(kind=st.sampled_from(sorted(STRATEGIES)), data=st.data())
def test_check_and_scan_agree_on_fuzzed_exports(kind, data):
    content = data.draw(STRATEGIES[kind], label="file")
    with tempfile.TemporaryDirectory() as tmp:
        _compare(plant_with_export(Path(tmp), kind, content))
