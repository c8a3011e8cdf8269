"""Output folders: the tool replaces only folders it wrote (a marker file in each), refuses
anything else with exit code 1 touching nothing, clears the temporary folders of killed runs,
follows the umask, and keeps file names made from long ids within the file system's limit."""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

import pytest
from plantmaker import make_plant, pump_row, steady_frame
from typer.testing import CliRunner

import screening
from screening.base.files import (
    MARKER,
    FolderRefused,
    atomic_folder,
    check_out,
    claimed_folder,
    page_names,
    safe_name,
)
from screening.cli.main import app
from screening.inputs.ingest import IngestError, ingest

runner = CliRunner()


def _snapshot(folder: Path) -> dict[str, str]:
    """Every file and folder under ``folder`` with its checksum (folders: 'dir')."""
    return {
        str(p.relative_to(folder)): "dir"
        if p.is_dir()
        else hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(folder.rglob("*"))
    }


@pytest.fixture()
def plant(tmp_path) -> Path:
    return make_plant(tmp_path / "plant", wide={"a.csv": steady_frame("P1")})


def test_scan_out_onto_the_raw_exports_is_refused(plant):
    exports = plant.parent / "exports"
    before = _snapshot(plant.parent)
    res = runner.invoke(app, ["scan", str(plant), "--out", str(exports)])
    assert res.exit_code == 1, res.output
    assert "exports: exists and was not written by pumpscreen" in res.output
    assert "Traceback" not in res.output
    assert _snapshot(plant.parent) == before


def test_scan_out_onto_a_folder_of_reports_and_notes_is_refused(plant, tmp_path):
    reports = tmp_path / "reports"
    screening.write_report(screening.scan(plant), reports / "october")
    (reports / "notes.txt").write_text("pump P1 sounded rough on the 12th")
    before = _snapshot(reports)
    res = runner.invoke(app, ["scan", str(plant), "--out", str(reports)])
    assert res.exit_code == 1, res.output
    assert "was not written by pumpscreen" in res.output
    assert _snapshot(reports) == before
    with pytest.raises(FolderRefused, match="reports: exists and was not written by pumpscreen"):
        screening.write_report(screening.scan(plant), reports)
    assert _snapshot(reports) == before


def test_scan_out_onto_a_file_is_refused(plant, tmp_path):
    target = tmp_path / "october.html"
    target.write_text("a page someone saved")
    res = runner.invoke(app, ["scan", str(plant), "--out", str(target)])
    assert res.exit_code == 1, res.output
    assert "october.html: is a file, not a folder" in res.output
    assert target.read_text() == "a page someone saved"


def test_scan_out_root_gives_a_plain_message(plant):
    res = runner.invoke(app, ["scan", str(plant), "--out", "/"])
    assert res.exit_code == 1, res.output
    assert "/: cannot be an output folder" in res.output
    assert "PosixPath" not in res.output and "Traceback" not in res.output


def test_own_folders_are_replaced_and_others_kinds_refused(plant, tmp_path):
    out = tmp_path / "r"
    result = screening.scan(plant)
    screening.write_report(result, out)
    assert (out / MARKER).read_text() == "pumpscreen report\n"
    (out / "stale.csv").write_text("left by the previous report")
    screening.write_report(result, out)  # ours: replaced whole
    assert not (out / "stale.csv").exists() and (out / "index.html").is_file()
    # a folder of another kind is not replaced by a report, nor a report by a dataset
    ds = tmp_path / "ds"
    ingest(plant, ds)
    assert (ds / MARKER).read_text() == "pumpscreen dataset\n"
    with pytest.raises(FolderRefused, match="holds a pumpscreen dataset folder, not a report"):
        screening.write_report(result, ds)
    with pytest.raises(IngestError, match="holds a pumpscreen report folder, not a dataset"):
        ingest(plant, out)
    onset = screening.investigate(plant, "P1", "2026-10-01", "2026-10-02")
    with pytest.raises(FolderRefused, match="not a onset folder"):
        screening.write_onset_report(onset, out)
    page = screening.write_onset_report(onset, tmp_path / "onset")
    assert page == tmp_path / "onset" / "onset.html" and page.is_file()
    screening.write_onset_report(onset, tmp_path / "onset")  # ours: replaced
    # an empty folder holds nothing to lose
    (tmp_path / "empty").mkdir()
    screening.write_report(result, tmp_path / "empty")
    assert (tmp_path / "empty" / "index.html").is_file()


def test_a_report_of_an_older_version_is_recognised_by_its_files(plant, tmp_path):
    out = tmp_path / "r"
    result = screening.scan(plant)
    screening.write_report(result, out)
    (out / MARKER).unlink()  # as written before the marker existed
    assert check_out(out, "report") == out
    screening.write_report(result, out)
    assert (out / MARKER).is_file()
    # an older report with a file of someone else's in it is not ours to replace
    (out / MARKER).unlink()
    (out / "my notes.txt").write_text("keep")
    with pytest.raises(FolderRefused, match="was not written by pumpscreen"):
        check_out(out, "report")
    (out / "my notes.txt").unlink()
    # run.json of another tool
    (out / "run.json").write_text(json.dumps({"tool": "something else"}))
    with pytest.raises(FolderRefused, match="was not written by pumpscreen"):
        check_out(out, "report")


def test_leftovers_of_killed_runs_are_cleared_but_not_folders_in_use(plant, tmp_path):
    out = tmp_path / "r"
    result = screening.scan(plant)
    # a killed run's temporary folder: our marker, nobody holding its lock
    dead = tmp_path / ".r.tmp-0badf00d"
    dead.mkdir()
    (dead / MARKER).write_text("pumpscreen report\n")
    (dead / "index.html").write_text("half a page")
    # a folder of the same pattern without our marker, and one of another name: not ours
    foreign = tmp_path / ".r.tmp-12345678"
    foreign.mkdir()
    (foreign / "x").write_text("x")
    other = tmp_path / ".october.tmp-0badf00d"
    other.mkdir()
    (other / MARKER).write_text("pumpscreen report\n")
    with claimed_folder(tmp_path, ".r.tmp-", "report") as busy:  # a run writing right now
        screening.write_report(result, out)
        assert busy.is_dir()
    assert not dead.exists()
    assert foreign.is_dir() and other.is_dir()
    hidden = sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".r."))
    assert hidden == sorted([busy.name, foreign.name])


def test_successful_runs_leave_no_hidden_folder(plant, tmp_path):
    out = tmp_path / "reports" / "october"
    result = screening.scan(plant)
    for _ in range(2):
        screening.write_report(result, out)
    assert [p.name for p in out.parent.iterdir()] == ["october"]


@pytest.mark.parametrize("mask", [0o022, 0o027, 0o002])
def test_folders_follow_the_umask(plant, tmp_path, mask):
    old = os.umask(mask)
    try:
        result = screening.scan(plant)
        screening.write_report(result, tmp_path / "r")
        ingest(plant, tmp_path / "ds")
        onset = screening.investigate(plant, "P1", "2026-10-01", "2026-10-02")
        screening.write_onset_report(onset, tmp_path / "o")
    finally:
        os.umask(old)
    expected = 0o777 & ~mask
    for folder in [tmp_path / "r", tmp_path / "r" / "pumps", tmp_path / "ds", tmp_path / "o"]:
        assert folder.stat().st_mode & 0o777 == expected, folder
    assert (tmp_path / "r" / "index.html").stat().st_mode & 0o777 == 0o666 & ~mask


def test_atomic_folder_refuses_before_touching_anything(tmp_path):
    target = tmp_path / "data"
    target.mkdir()
    (target / "raw.csv").write_text("a,b\n")
    with pytest.raises(FolderRefused, match="data: exists and was not written by pumpscreen"):
        with atomic_folder(target, "report"):
            raise AssertionError("never reached")
    assert [p.name for p in tmp_path.iterdir()] == ["data"]


# ------------------------------------------------------------------- names made from long ids


def test_safe_names_stay_short_and_unique():
    long_a = "A" * 300
    long_b = "A" * 299 + "B"
    names = page_names([long_a, long_b, "P1", "p1"])
    assert all(len(n.encode()) <= 130 for n in names.values())
    assert len(set(names.values())) == 4
    assert names["P1"] == "P1.html" and names["p1"] == "p1_2.html"
    assert safe_name(long_a) != safe_name(long_b)
    assert safe_name(long_a) == safe_name(long_a)  # stable from run to run


def test_pump_id_of_300_characters_is_screened_reported_and_ingested(tmp_path):
    pid = "PUMP-" + "x" * 295
    frame = steady_frame("P1").rename(columns=lambda c: c.replace("P1", pid))
    rows = [pump_row(pid), pump_row("P2")]
    frame = frame.merge(steady_frame("P2"), on="timestamp")
    path = make_plant(tmp_path, wide={"a.csv": frame}, rows=rows)
    result = screening.scan(path, plot_buckets=50)
    assert result.problems.empty, result.problems.to_dict("records")
    assert sorted(result.summary["pump_id"]) == sorted([pid, "P2"])
    out = tmp_path / "r"
    res = runner.invoke(app, ["scan", str(path), "--out", str(out)])
    assert res.exit_code == 0, res.output
    pages = sorted(p.name for p in (out / "pumps").iterdir())
    assert len(pages) == 2 and all(len(n) <= 130 for n in pages)
    s = ingest(path, tmp_path / "ds")
    assert not s.files_not_read
    assert all(len(p.name) <= 130 for p in (tmp_path / "ds").iterdir())
    text = (tmp_path / "plant.toml").read_text()
    raw = 'files = "exports/*.csv"\nlayout = "wide"\ntime_column = "timestamp"'
    assert raw in text
    text = text.replace(raw, f'path = "{tmp_path / "ds"}"\nlayout = "dataset"')
    (tmp_path / "plant.toml").write_text(text)
    again = screening.scan(path)
    assert again.problems.empty
    assert again.hours["hours"].sum() == pytest.approx(result.hours["hours"].sum(), rel=1e-12)


@pytest.mark.parametrize("command", ["onset", "whatif", "ingest"])
def test_other_commands_refuse_a_folder_not_theirs_before_any_work(plant, tmp_path, command):
    exports = plant.parent / "exports"
    before = _snapshot(plant.parent)
    scenarios = tmp_path / "s.toml"
    scenarios.write_text('[[scenario]]\nname = "x"\n')
    args = {
        "onset": ["onset", str(plant), "P1", "--from", "2026-10-01", "--to", "2026-10-02"],
        "whatif": ["whatif", str(plant), str(scenarios)],
        "ingest": ["ingest", str(plant)],
    }[command]
    res = runner.invoke(app, [*args, "--out", str(exports)])
    assert res.exit_code == 1, res.output
    assert "exports: exists and was not written by pumpscreen" in res.output
    assert _snapshot(plant.parent) == before
