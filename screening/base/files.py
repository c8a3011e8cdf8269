"""Files and folders the tool writes: whole folders or nothing, and safe file names.

Shared by every stage that writes (the report, the what-if and onset pages, the dataset).
"""

from __future__ import annotations

import os
import re
import shutil
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path


@contextmanager
def atomic_folder(out: str | Path) -> Iterator[Path]:
    """Write a folder in full or not at all.

    Yields a new temporary folder beside ``out``; when the block ends without an error the
    temporary folder replaces ``out`` (a previous ``out`` is moved aside first and removed
    after), so a run killed midway leaves the previous folder as it was and never a half
    one. On an error the temporary folder is removed and the error raised.
    """
    out = Path(out)
    out.parent.mkdir(parents=True, exist_ok=True)
    aside = out.with_name(f".{out.name}.old")
    if aside.is_dir() and not out.exists():
        # a run killed between moving the previous folder aside and moving the new one in:
        # put the previous folder back before anything else
        os.replace(aside, out)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.", dir=out.parent))
    try:
        yield tmp
        if out.exists():
            old = out.with_name(f".{out.name}.old")
            if old.exists():
                shutil.rmtree(old)
            os.replace(out, old)
            os.replace(tmp, out)
            shutil.rmtree(old)
        else:
            os.replace(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise


_SAFE = re.compile(r"[^A-Za-z0-9._-]")


def page_names(pump_ids) -> dict[str, str]:
    """A file name per pump id that cannot leave the report folder, unique per pump."""
    names: dict[str, str] = {}
    used: set[str] = set()
    for pid in pump_ids:
        base = _SAFE.sub("_", str(pid)).strip(".") or "pump"
        name, n = base, 1
        while name.lower() in used:
            n += 1
            name = f"{base}_{n}"
        used.add(name.lower())
        names[pid] = f"{name}.html"
    return names
