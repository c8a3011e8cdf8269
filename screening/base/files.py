"""Files and folders the tool writes: whole folders or nothing, only over folders of its own,
and safe file names.

Shared by every stage that writes (the report, the what-if and onset pages, the dataset).

Every folder written through :func:`atomic_folder` holds a marker file (:data:`MARKER`) naming
its kind; a later run replaces a folder only if it holds the marker of the same kind (or is
empty, or is a folder an older version wrote, recognised by its files), and refuses anything
else without touching it.
"""

from __future__ import annotations

import fcntl
import hashlib
import json
import os
import re
import secrets
import shutil
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

#: The marker file in every folder the tool writes (one line: "pumpscreen <kind>").
MARKER = ".pumpscreen"

#: Kinds of folder the tool writes.
KINDS = ("report", "whatif", "onset", "dataset", "staging")

#: Table names the reports of older versions wrote (``<name>.csv`` and ``<name>.parquet``),
#: used to recognise a report folder written before the marker existed.
_LEGACY_TABLES = {
    "hours", "summary", "daily_hours", "data_quality", "not_screened", "files_not_read",
    "changes", "plot_buckets", "operating_points", "whatif_hours", "whatif_moves",
    "whatif_changes", "whatif_summary", "required_setpoints", "margin_sensitivity",
    "onset_hours", "episodes", "drivers", "before_failure", "worst_inputs", "monthly_hours",
    "events", "onset_daily", "field_npsh3", "field_head_cells", "field_baseline",
    "field_vibration",
}  # fmt: skip
_LEGACY_FILES = {"index.html", "run.json", "plotly.min.js", "summary.xlsx", "onset.html"}


class FolderRefused(ValueError):
    """An output folder the tool will not write over; the message names it and says why."""


def _plain(path: Path) -> str:
    """A path as a person types it (never a Python repr)."""
    return str(path) or "."


def _marker_kind(folder: Path) -> str | None:
    """The kind named by ``folder``'s marker file, or None when it has none we wrote."""
    try:
        text = (folder / MARKER).read_text(encoding="utf-8")[:200]
    except (OSError, UnicodeDecodeError):
        return None
    words = text.split()
    if len(words) == 2 and words[0] == "pumpscreen" and words[1] in KINDS:
        return words[1]
    return None


def _legacy_kind(folder: Path) -> str | None:
    """The kind of a folder an older version wrote (no marker), recognised by its files.

    A report or what-if folder holds ``run.json`` (a report's says ``"tool": "pumpscreen"``,
    a what-if's names its scenarios and shares) and ``index.html``; an onset folder
    ``onset.html`` and ``onset_hours.csv``; a dataset its manifest. Each holds nothing but
    files those versions wrote. None otherwise."""
    names = {p.name for p in folder.iterdir()}
    if "manifest.json" in names:
        extra = [n for n in names if n not in {"manifest.json", "site", "other"}]
        if all(n.startswith("pump=") and (folder / n).is_dir() for n in extra):
            return "dataset"
        return None
    tables = {f"{t}.{ext}" for t in _LEGACY_TABLES for ext in ("csv", "parquet")}
    allowed = _LEGACY_FILES | tables
    for name in names:
        p = folder / name
        if name == "pumps" and p.is_dir() and not p.is_symlink():
            if not all(q.suffix == ".html" and q.is_file() for q in p.iterdir()):
                return None
        elif not (p.is_file() and not p.is_symlink()):
            return None
        elif name not in allowed and not (name.startswith("scenario_") and name.endswith(".html")):
            return None
    if {"onset.html", "onset_hours.csv"} <= names:
        return "onset"
    if not {"run.json", "index.html"} <= names:
        return None
    try:
        meta = json.loads((folder / "run.json").read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError):
        return None
    if not isinstance(meta, dict):
        return None
    if meta.get("tool") == "pumpscreen":
        return "report"
    if {"scenarios", "shares", "window_start_utc"} <= set(meta):
        return "whatif"  # older what-if folders: run.json without the tool's name
    return None


def check_out(out: str | Path, kind: str) -> Path:
    """The folder ``out`` made absolute, if the tool may write it as a folder of ``kind``.

    A folder that does not exist, an empty folder, or a folder this tool wrote as the same
    kind (its marker file, or the files an older version wrote) may be written; anything
    else is refused, untouched.

    Raises
    ------
    FolderRefused
        ``out`` is the root or the current folder, a file, a link, or a folder not written by
        this tool (or written as another kind); the message names it and says what to do.
    """
    if kind not in KINDS:
        raise ValueError(f"unknown folder kind {kind!r}")
    given = _plain(Path(out))
    path = Path(os.path.abspath(out))
    if not path.name or path == Path.cwd():
        raise FolderRefused(
            f"{given}: cannot be an output folder (it is the root or the current folder); "
            "give a folder of its own, such as reports/october"
        )
    if path.is_symlink():
        raise FolderRefused(f"{given}: is a link; give a folder of its own, not a link")
    if path.exists() and not path.is_dir():
        raise FolderRefused(
            f"{given}: is a file, not a folder; give a new folder (nothing was changed)"
        )
    if path.is_dir() and any(path.iterdir()):
        found = _marker_kind(path) or _legacy_kind(path)
        if found is None:
            raise FolderRefused(
                f"{given}: exists and was not written by pumpscreen (it would be replaced "
                "whole); give a new folder, or one pumpscreen wrote (nothing was changed)"
            )
        if found != kind:
            raise FolderRefused(
                f"{given}: holds a pumpscreen {found} folder, not a {kind} folder; give "
                "another folder (nothing was changed)"
            )
    return path


def _new_folder(parent: Path, prefix: str) -> Path:
    """A new, empty folder ``<prefix><8 random characters>`` in ``parent``, created with the
    mode the umask gives (``tempfile.mkdtemp`` would make it private, mode 0700)."""
    for _ in range(100):
        path = parent / f"{prefix}{secrets.token_hex(4)}"
        try:
            path.mkdir()
        except FileExistsError:
            continue
        return path
    raise FileExistsError(f"{parent}: no free name for a temporary folder {prefix}*")


@contextmanager
def claimed_folder(parent: Path, prefix: str, kind: str) -> Iterator[Path]:
    """A new temporary folder in ``parent`` holding the marker of ``kind``, locked (``flock``)
    while the block runs so that no other run clears it as a leftover. The folder is left
    in place when the block ends (move it, or remove it)."""
    tmp = _new_folder(parent, prefix)
    marker = tmp / MARKER
    with open(marker, "w", encoding="utf-8") as fh:
        fh.write(f"pumpscreen {kind}\n")
        fh.flush()
        fcntl.flock(fh.fileno(), fcntl.LOCK_EX)
        yield tmp


def clear_leftovers(parent: Path, prefix: str) -> list[Path]:
    """Remove the temporary folders a killed run left in ``parent``: those named
    ``<prefix>`` + 8 hex characters that hold our marker and that no running process holds
    locked. Returns the folders removed."""
    pattern = re.compile(re.escape(prefix) + r"[0-9a-f]{8}")
    removed: list[Path] = []
    try:
        entries = list(parent.iterdir())
    except OSError:
        return removed
    for entry in entries:
        if not pattern.fullmatch(entry.name) or entry.is_symlink() or not entry.is_dir():
            continue
        if _marker_kind(entry) is None:
            continue
        try:
            with open(entry / MARKER, "rb") as fh:
                fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
                shutil.rmtree(entry)  # nobody holds it: a leftover
        except (BlockingIOError, PermissionError):
            continue  # in use by a running pumpscreen
        except OSError:
            continue
        removed.append(entry)
    return removed


@contextmanager
def atomic_folder(out: str | Path, kind: str = "report") -> Iterator[Path]:
    """Write a folder in full or not at all, and only over a folder of our own.

    Checks ``out`` with :func:`check_out` first (a refusal touches nothing), clears the
    leftovers of killed runs for the same folder (:func:`clear_leftovers`), then yields a new
    temporary folder beside ``out`` holding the marker of ``kind``; when the block ends
    without an error the temporary folder replaces ``out`` (a previous ``out`` is moved aside
    first and removed after), so a run killed midway leaves the previous folder as it was
    and never a half one. On an error the temporary folder is removed and the error raised.
    Folders are created with the mode the umask gives.
    """
    out = check_out(out, kind)
    out.parent.mkdir(parents=True, exist_ok=True)
    aside = out.with_name(f".{out.name}.old")
    if aside.is_dir() and not out.exists():
        # a run killed between moving the previous folder aside and moving the new one in:
        # put the previous folder back before anything else
        os.replace(aside, out)
    prefix = f".{out.name}.tmp-"
    clear_leftovers(out.parent, prefix)
    with claimed_folder(out.parent, prefix, kind) as tmp:
        try:
            yield tmp
            if out.exists():
                if aside.exists():
                    shutil.rmtree(aside)
                os.replace(out, aside)
                os.replace(tmp, out)
                shutil.rmtree(aside)
            else:
                os.replace(tmp, out)
        except BaseException:
            shutil.rmtree(tmp, ignore_errors=True)
            raise


_SAFE = re.compile(r"[^A-Za-z0-9._-]")

#: Longest safe name kept whole [characters]; longer ones are cut and given a short hash, so a
#: file or folder name made from an id stays well inside the file system's limit (255 bytes)
#: with any prefix or suffix the tool adds.
SAFE_NAME_MAX = 120


def safe_name(text: str, default: str = "pump") -> str:
    """A file or folder name made from ``text``: characters other than letters, digits, ``.``,
    ``_`` and ``-`` become ``_``; a name longer than :data:`SAFE_NAME_MAX` is cut and ends
    with ``-`` and 10 hex characters of the SHA-256 of ``text`` (two long ids that share
    their start keep different names)."""
    base = _SAFE.sub("_", str(text)).strip(".") or default
    if len(base) > SAFE_NAME_MAX:
        digest = hashlib.sha256(str(text).encode("utf-8", "surrogatepass")).hexdigest()[:10]
        base = f"{base[: SAFE_NAME_MAX - 11]}-{digest}"
    return base


def page_names(pump_ids) -> dict[str, str]:
    """A file name per pump id that cannot leave the report folder, unique per pump (also
    without regard to case), and within the file system's name limit however long the id."""
    names: dict[str, str] = {}
    used: set[str] = set()
    for pid in pump_ids:
        base = safe_name(pid)
        name, n = base, 1
        while name.lower() in used:
            n += 1
            name = f"{base}_{n}"
        used.add(name.lower())
        names[pid] = f"{name}.html"
    return names
