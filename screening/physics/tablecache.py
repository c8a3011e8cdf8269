"""A disk cache of property tables, so that a scan need not import CoolProp (about two
seconds) nor rebuild a mixture's table (seconds) when the same tables were built before.

A table is stored as a NumPy ``.npz`` file (arrays, and the scalar fields as JSON text; no
pickle, so reading never executes anything) under a key hashed from what decides the table's
numbers: its kind, the fluid, the vapour-pressure choice, the tabulation settings, the
CoolProp version (read from the installed package's metadata, without importing it) and
:data:`FORMAT`. Any change of these makes a new key; a file that cannot be read (empty,
truncated, not a table: :class:`CacheWarning` names it in one line) is ignored, rebuilt and
replaced. Files are written to a temporary name and moved into place, so processes that
build the same table at once never see half a file.

Where: ``$PUMPSCREEN_CACHE`` if set (``off`` turns the cache off), else
``$XDG_CACHE_HOME/pumpscreen`` or ``~/.cache/pumpscreen``. Deleting the folder is always safe.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import os
import tempfile
import warnings
from importlib import metadata
from pathlib import Path
from typing import Any

import numpy as np

#: Bump when the stored layout or the tabulation code changes the numbers.
FORMAT = 1


class CacheWarning(UserWarning):
    """A damaged cache file, ignored and replaced (the message names it)."""


def folder() -> Path | None:
    """The cache folder, or None when the cache is off."""
    chosen = os.environ.get("PUMPSCREEN_CACHE", "").strip()
    if chosen.lower() == "off":
        return None
    if chosen:
        return Path(chosen)
    base = os.environ.get("XDG_CACHE_HOME", "").strip() or str(Path.home() / ".cache")
    return Path(base) / "pumpscreen"


def _coolprop_version() -> str:
    try:
        return metadata.version("CoolProp")
    except metadata.PackageNotFoundError:  # pragma: no cover - CoolProp is a dependency
        return "unknown"


def key(kind: str, *parts: Any) -> str:
    """A file-name-safe key for a table of ``kind`` built from ``parts`` (JSON-able)."""
    text = json.dumps([FORMAT, _coolprop_version(), kind, *parts], sort_keys=True, default=str)
    return f"{kind}-{hashlib.sha256(text.encode()).hexdigest()[:32]}"


def load(name: str, cls: type) -> Any | None:
    """The cached dataclass ``cls`` stored under ``name``, or None (absent, off, unreadable)."""
    where = folder()
    if where is None:
        return None
    path = where / f"{name}.npz"
    if not path.is_file():
        return None
    try:
        # opened here so that the file is closed whatever np.load makes of it
        with open(path, "rb") as fh, np.load(fh, allow_pickle=False) as data:
            fields = json.loads(str(data["__fields__"]))
            arrays = {k: np.array(data[k]) for k in data.files if k != "__fields__"}
        return cls(**fields, **arrays)
    except Exception as exc:  # noqa: BLE001 - any damage (empty, truncated, foreign) is the same
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        warnings.warn(
            f"fluid-table cache file {path} is damaged ({reason}); ignored, rebuilt and replaced",
            CacheWarning,
            stacklevel=2,
        )
        try:
            path.unlink()
        except OSError:
            pass
        return None


def store(name: str, table: Any) -> None:
    """Store a dataclass whose fields are numpy arrays and JSON-able scalars; a cache that
    cannot be written (read-only home, full disk) is skipped silently: it only saves time."""
    where = folder()
    if where is None:
        return
    arrays, fields = {}, {}
    for f in dataclasses.fields(table):
        value = getattr(table, f.name)
        if isinstance(value, np.ndarray):
            arrays[f.name] = value
        else:
            fields[f.name] = value
    try:
        where.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{name}.", suffix=".npz", dir=where)
    except OSError:
        return
    try:
        with os.fdopen(fd, "wb") as out:
            np.savez(out, __fields__=np.array(json.dumps(fields)), **arrays)
        os.replace(tmp, where / f"{name}.npz")
    except OSError:
        Path(tmp).unlink(missing_ok=True)
