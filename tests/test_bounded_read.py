"""Export files that would exhaust memory or block: a sparse CSV full of NUL bytes, an
over-long line, a file beyond the size limit, a named pipe; and files that are not what their
name says (UTF-16 with a byte-order mark, gzip data named .csv). Each is read with bounded
memory or listed as not read with the reason; the rest of the plant is screened."""

from __future__ import annotations

import gzip
import os
import subprocess
import sys
import textwrap
import threading
from pathlib import Path

import pytest
from plantmaker import make_plant, pump_row, steady_frame
from typer.testing import CliRunner

import screening
from screening.cli.main import app
from screening.inputs.export_files import MAX_LINE

ROOT = Path(__file__).resolve().parents[1]
HEADER = b"timestamp,P2.PS,P2.TT,P2.FT,P2.RUN\n"
ROW = b"2026-10-01 00:00:00,100,20,80,1\n"


def _two_pumps(folder: Path, **kw) -> Path:
    """P1 in a.csv (sound); P2's tags only in the file the test writes as exports/b.csv."""
    return make_plant(
        folder, wide={"a.csv": steady_frame("P1")}, rows=[pump_row("P1"), pump_row("P2")], **kw
    )


def _window_hours(result, pid: str) -> list[float]:
    h = result.hours[result.hours.pump_id == pid].groupby("kind")["hours"].sum()
    return list(h.to_numpy())


def test_sparse_csv_of_nul_bytes_is_read_in_bounded_memory(tmp_path):
    """A CSV with a header, one row, then 256 MB of NUL bytes (a sparse file). Before, the
    reader held the file as bytes and several numpy arrays per byte (about 27 bytes per byte,
    7 GB here); now the lines are counted a block at a time and the long line is not read.
    The peak memory of a process that scans it is measured, not the time."""
    path = _two_pumps(tmp_path)
    sparse = tmp_path / "exports" / "b.csv"
    sparse.write_bytes(HEADER + ROW)
    with open(sparse, "r+b") as fh:
        fh.truncate(256 * 2**20)
    child = textwrap.dedent(
        """
        import resource, sys
        import screening
        r = screening.scan(sys.argv[1])
        q = r.quality[r.quality.pump_id == "P2"].iloc[0]
        print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, int(q.samples),
              int(q.bad_timestamps), len(r.problems))
        """
    )
    done = subprocess.run(
        [sys.executable, "-c", child, str(path)], capture_output=True, text=True, cwd=ROOT,
        env={**os.environ, "PYTHONPATH": str(ROOT)}, check=False,
    )  # fmt: skip
    assert done.returncode == 0, done.stderr
    peak_kb, samples, bad_timestamps, problems = map(int, done.stdout.split())
    # the scan of the sound pump alone peaks near 300 MB (imports, numba, pandas); 256 MB of
    # NUL bytes read whole would add several GB
    assert peak_kb < 700 * 1024, peak_kb
    assert (samples, bad_timestamps, problems) == (1, 1, 0)  # the NUL line counted, not lost


def test_nul_bytes_and_an_over_long_line_are_counted_bad_rows(tmp_path):
    path = _two_pumps(tmp_path)
    frame = steady_frame("P2").to_csv(index=False).encode().splitlines(keepends=True)
    body = frame[:10] + [b"2026-10-01 00:09:00,1\x0000,20,80,1\n", b"x" * (MAX_LINE + 10) + b"\n"]
    (tmp_path / "exports" / "b.csv").write_bytes(b"".join(body + frame[10:]))
    result = screening.scan(path)
    assert result.problems.empty, result.problems.to_dict("records")
    q = result.quality.set_index(["pump_id", "role"]).loc[("P2", "suction")]
    assert q["malformed_rows"] == 1  # the row holding a NUL byte
    assert q["bad_timestamps"] == 1  # the over-long line: not read, its time unknown
    assert q["samples"] == 1440 + 1  # every sound row, and the malformed one
    assert "row with a wrong number of fields" in q["first_problem"]
    assert _window_hours(result, "P2") == pytest.approx([24.0, 24.0], rel=1e-12)


@pytest.mark.parametrize("gz", [False, True])
def test_a_file_beyond_the_size_limit_is_named_not_read(tmp_path, gz):
    path = _two_pumps(tmp_path)
    text = path.read_text().replace(
        'time_column = "timestamp"', 'time_column = "timestamp"\nmax_csv_mb = 0.01'
    )
    text = text.replace('files = "exports/*.csv"', 'files = "exports/*.csv*"')
    path.write_text(text)
    data = steady_frame("P2").to_csv(index=False).encode()  # about 50 kB: beyond 0.01 MB
    name = "b.csv.gz" if gz else "b.csv"
    (tmp_path / "exports" / name).write_bytes(gzip.compress(data) if gz else data)
    # P1's own file is beyond the limit too: P1 is read from a file within it
    (tmp_path / "exports" / "a.csv").write_bytes(steady_frame("P1", periods=60).to_csv(
        index=False).encode())  # fmt: skip
    result = screening.scan(path)
    files = result.file_problems.set_index("file")["message"]
    message = files[str(tmp_path / "exports" / name)]
    assert "larger than 0.01 MB (uncompressed), the limit of its [[exports]] block" in message
    reasons = result.problems.set_index("pump_id")["message"]
    assert "larger than 0.01 MB" in reasons["P2"] and name in reasons["P2"]
    assert list(result.summary["pump_id"]) == ["P1"]


def _in_a_thread(func):
    """Run ``func`` in a thread; a guard, not a timing: a reader blocked on a pipe would
    never return, and the test must fail rather than wait forever."""
    out: dict = {}

    def run():
        out["value"] = func()

    t = threading.Thread(target=run, daemon=True)
    t.start()
    t.join(300)
    assert not t.is_alive(), "blocked on the named pipe"
    return out["value"]


def test_a_named_pipe_matching_the_glob_is_listed_not_read(tmp_path):
    path = _two_pumps(tmp_path)
    (tmp_path / "exports" / "b.csv").write_bytes(steady_frame("P2").to_csv(index=False).encode())
    pipe = tmp_path / "exports" / "c.csv"
    os.mkfifo(pipe)
    (tmp_path / "exports" / "d.csv").mkdir()
    result = _in_a_thread(lambda: screening.scan(path))
    assert sorted(result.summary["pump_id"]) == ["P1", "P2"]
    files = result.file_problems.set_index("file")["message"]
    assert files[str(pipe)] == f"{pipe}: a named pipe, not a regular file; not read"
    assert files[str(tmp_path / "exports" / "d.csv")].endswith(
        "a folder, not a regular file; not read"
    )
    res = _in_a_thread(lambda: CliRunner().invoke(app, ["check", str(path)]))
    assert "a named pipe, not a regular file" in res.output
    res = _in_a_thread(lambda: CliRunner().invoke(app, ["ingest", str(path), "--out",
                                                        str(tmp_path / "ds")]))  # fmt: skip
    assert "a named pipe, not a regular file" in res.output


def test_utf16_and_gzip_named_csv_are_said_to_be_what_they_are(tmp_path):
    path = _two_pumps(tmp_path)
    data = steady_frame("P2").to_csv(index=False)
    (tmp_path / "exports" / "b.csv").write_bytes(data.encode("utf-16"))  # with its BOM
    (tmp_path / "exports" / "c.csv").write_bytes(gzip.compress(b"timestamp,P3.PS\n"))
    result = screening.scan(path)
    files = result.file_problems.set_index("file")["message"]
    b, c = str(tmp_path / "exports" / "b.csv"), str(tmp_path / "exports" / "c.csv")
    assert "UTF-16 (little-endian) text (it begins with the byte-order mark FF FE)" in files[b]
    assert 'set encoding = "utf-16"' in files[b] and "latin-1" not in files[b]
    assert "gzip-compressed data in a file whose name does not end in .gz" in files[c]
    # the pump whose only file could not be read is told which file and why
    reason = result.problems.set_index("pump_id")["message"]["P2"]
    assert "could not be read and may hold them" in reason and "UTF-16" in reason
    # and with the encoding the message names, the file is read
    text = path.read_text().replace('time_column = "timestamp"',
                                    'time_column = "timestamp"\nencoding = "utf-16"')  # fmt: skip
    path.write_text(text)
    (tmp_path / "exports" / "a.csv").write_bytes(steady_frame("P1").to_csv(index=False).encode(
        "utf-16"))  # fmt: skip
    (tmp_path / "exports" / "c.csv").unlink()
    again = screening.scan(path)
    assert again.problems.empty, again.problems.to_dict("records")
    assert _window_hours(again, "P2") == pytest.approx([24.0, 24.0], rel=1e-12)
