"""Faults: one pump's broken export or register row never stops the rest; a scan killed or
failing while it writes the report leaves the previous report as it was; no network is
needed; the plant file is data, never code."""

from __future__ import annotations

import hashlib
import os
import signal
import socket
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pandas as pd
import pytest
from plantmaker import make_plant, pump_row, steady_frame
from typer.testing import CliRunner

import screening
from screening.cli.main import app
from screening.inputs.config import ConfigError, read_plant_file
from screening.report import pump_pages

runner = CliRunner()
TESTS = Path(__file__).resolve().parent


def _four_pumps(folder: Path) -> Path:
    """P1 and P4 sound; P2's only export file is corrupt; P3's register row is broken."""
    good = steady_frame("P1").merge(steady_frame("P4"), on="timestamp")
    rows = [
        pump_row("P1"),
        pump_row("P2"),
        pump_row("P3", rated_speed="fast"),
        pump_row("P4"),
    ]
    path = make_plant(folder, wide={"a.csv": good}, rows=rows)
    corrupt = steady_frame("P2").to_csv(index=False).encode()
    (folder / "exports" / "b.csv").write_bytes(corrupt[:200] + b"\xb0C garbled\n" + corrupt[200:])
    return path


def test_one_broken_export_and_one_broken_row_do_not_stop_the_rest(tmp_path):
    path = _four_pumps(tmp_path)
    result = screening.scan(path)
    assert sorted(result.summary["pump_id"]) == ["P1", "P4"]
    reasons = result.problems.set_index("pump_id")["message"]
    assert sorted(reasons.index) == ["P2", "P3"]
    assert "line 4 (pump P3), column 'rated_speed'" in reasons["P3"]
    assert "P2.PS (suction)" in reasons["P2"]  # its tags are in no readable file
    files = result.file_problems.set_index("file")["message"]
    b = str(tmp_path / "exports" / "b.csv")
    line = (tmp_path / "exports" / "b.csv").read_bytes().split(b"\xb0")[0].count(b"\n") + 1
    assert f"b.csv line {line}: not utf-8 text (byte 0xb0" in files[b]
    for pid in ("P1", "P4"):
        h = result.hours[result.hours.pump_id == pid].groupby("kind")["hours"].sum()
        assert h.to_numpy() == pytest.approx([24.0, 24.0], rel=1e-12)

    res = runner.invoke(app, ["scan", str(path), "--out", str(tmp_path / "r")])
    assert res.exit_code == 3, res.output
    not_screened = pd.read_csv(tmp_path / "r" / "not_screened.csv")
    assert sorted(not_screened["pump_id"]) == ["P2", "P3"]
    assert "b.csv" in (tmp_path / "r" / "files_not_read.csv").read_text()


def _snapshot(folder: Path) -> dict[str, str]:
    return {
        str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(folder.rglob("*"))
        if p.is_file()
    }


@pytest.fixture()
def previous_report(tmp_path) -> tuple[Path, Path, dict]:
    """A plant and its report written once; the report's files and their checksums."""
    path = make_plant(tmp_path / "plant", wide={"a.csv": steady_frame("P1")})
    out = tmp_path / "reports" / "october"
    screening.write_report(screening.scan(path), out)
    return path, out, _snapshot(out)


def test_writer_failing_halfway_keeps_the_previous_report(previous_report, monkeypatch):
    path, out, before = previous_report

    def broken(page: Path, html: str) -> None:
        page.write_text(html[: len(html) // 2], encoding="utf-8")  # half a page, then a fault
        raise OSError("disk full (simulated)")

    monkeypatch.setattr(pump_pages, "write_pump_page", broken)
    with pytest.raises(OSError, match="disk full"):
        screening.write_report(screening.scan(path), out)
    assert _snapshot(out) == before
    assert [p.name for p in out.parent.iterdir()] == ["october"]  # no half folder left


def test_scan_killed_while_writing_keeps_the_previous_report(previous_report, tmp_path):
    path, out, before = previous_report
    marker = tmp_path / "writing-pages"
    child = textwrap.dedent(
        """
        import sys, time
        from pathlib import Path
        from screening.report import pump_pages
        from screening.cli.main import app

        def slow(page, html):
            page.write_text(html, encoding="utf-8")
            Path(sys.argv[1]).write_text("writing")
            time.sleep(300)  # killed here, halfway through the report

        pump_pages.write_pump_page = slow
        app(["scan", sys.argv[2], "--out", sys.argv[3]])
        """
    )
    proc = subprocess.Popen(
        [sys.executable, "-c", child, str(marker), str(path), str(out)],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
    )
    try:
        for _ in range(1200):  # up to 120 s for the imports and the scan (not a timing test)
            if marker.exists() or proc.poll() is not None:
                break
            time.sleep(0.1)
        assert marker.exists(), proc.stderr.read().decode() if proc.poll() is not None else ""
        os.kill(proc.pid, signal.SIGKILL)
    finally:
        if proc.poll() is None:
            proc.kill()
        proc.wait()
    assert proc.returncode == -signal.SIGKILL
    assert _snapshot(out) == before
    # the killed run's temporary folder is a hidden sibling, left behind by the kill
    left = [p.name for p in out.parent.iterdir() if p.name.startswith(".")]
    assert len(left) == 1 and left[0].startswith(".october.tmp-")
    # the next run replaces the report and clears the killed run's temporary folder
    screening.write_report(screening.scan(path), out)
    assert (out / "index.html").exists() and (out / "pumps" / "P1.html").exists()
    assert [p.name for p in out.parent.iterdir()] == ["october"]


def test_previous_report_moved_aside_is_put_back(previous_report, monkeypatch):
    """A kill between the two moves of the swap leaves the previous folder aside: the next
    run puts it back before writing, so even its own failure leaves the previous report."""
    path, out, before = previous_report
    aside = out.with_name(f".{out.name}.old")
    os.replace(out, aside)

    def broken(page: Path, html: str) -> None:
        raise OSError("disk full (simulated)")

    monkeypatch.setattr(pump_pages, "write_pump_page", broken)
    with pytest.raises(OSError, match="disk full"):
        screening.write_report(screening.scan(path), out)
    assert _snapshot(out) == before
    assert not aside.exists()


def test_scan_and_report_need_no_network(tmp_path, monkeypatch):
    def refuse(*args, **kwargs):
        raise OSError("network use refused by the test")

    monkeypatch.setattr(socket, "socket", refuse)
    monkeypatch.setattr(socket, "create_connection", refuse)
    monkeypatch.setattr(socket, "getaddrinfo", refuse)
    with pytest.raises(OSError, match="refused by the test"):
        socket.create_connection(("192.0.2.1", 80))  # the guard is in place
    path = _four_pumps(tmp_path)
    out = tmp_path / "r"
    result = screening.scan(path, plot_buckets=100)
    screening.write_report(result, out)
    assert sorted(result.summary["pump_id"]) == ["P1", "P4"]
    assert {"index.html", "summary.xlsx", "plotly.min.js", "run.json"} <= {
        p.name for p in out.iterdir()
    }
    assert (out / "pumps" / "P4.html").stat().st_size > 10_000


def test_plant_file_is_data_never_code(tmp_path):
    marker = tmp_path / "executed"
    path = make_plant(tmp_path, wide={"a.csv": steady_frame("P1")})
    text = path.read_text().replace(
        'name = "Test bench plant (invented)"',
        f"name = \"__import__('pathlib').Path('{marker}').touch()\"",
    )
    path.write_text(text)
    plant, _ = read_plant_file(path)
    assert plant.site.name.startswith("__import__(")  # kept as text
    result = screening.scan(path)
    screening.write_report(result, tmp_path / "r")
    assert not marker.exists()

    path.write_text(f"import pathlib\npathlib.Path('{marker}').touch()\n")
    with pytest.raises(ConfigError, match=r"plant.toml: not valid TOML"):
        read_plant_file(path)
    assert not marker.exists()
