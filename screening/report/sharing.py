"""The report's work shared among processes: on Linux, for large plants, forked processes take
the report's big single files first (the workbook, the plot tables) and then the pump pages a
few at a time, while the main process writes the rest of the report; when its own part is done
the main process takes pages too, until none are left.

Work is handed out by one counter in shared memory, so every process stays busy to the end
whatever the others cost (a page costs a few milliseconds; the big files a good part of a
second). The children inherit the scan result, the page writer and the jobs at the fork: nothing
is copied to them. A failure anywhere is raised in the main process (after the others are told
to stop taking work), so the report is never moved into place without all its files.
"""

from __future__ import annotations

import multiprocessing
import sys
from collections.abc import Callable, Iterator
from concurrent.futures import ProcessPoolExecutor
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any

from screening.engine.execution import default_processes

#: From this many pump pages on, the report is written by forked processes as well (a page
#: costs about 5 ms, so a 500-pump plant's pages take 2-3 s on one core).
PARALLEL_PAGES = 100
#: Pages taken at a time from the shared counter.
PAGES_PER_TAKE = 8


@dataclass
class _Work:
    """The work of one report: jobs first, then the pages in parts of a few."""

    jobs: list[Callable[[], None]]
    parts: list[list[tuple[str, str]]]
    write_page: Callable[[str, str], None]
    taken: Any  # multiprocessing.Value: index of the next item to take

    def take(self) -> int:
        """The index of the next item (jobs, then page parts), this process's to do."""
        with self.taken.get_lock():
            k = self.taken.value
            self.taken.value = k + 1
        return k

    def stop(self) -> None:
        """No item is taken after this (a failure somewhere)."""
        with self.taken.get_lock():
            self.taken.value = len(self.jobs) + len(self.parts)

    def run(self) -> None:
        """Do items until none is left; on a failure, stop the others and raise."""
        try:
            while (k := self.take()) < len(self.jobs) + len(self.parts):
                if k < len(self.jobs):
                    self.jobs[k]()
                else:
                    for pid, name in self.parts[k - len(self.jobs)]:
                        self.write_page(pid, name)
        except BaseException:
            self.stop()
            raise


#: The work the forked children inherit, by id (set before they fork).
_FORKED: dict[int, _Work] = {}


def _run_in_child(key: int) -> None:
    _FORKED[key].run()


def children(pages: int) -> int:
    """Forked processes to write a report of ``pages`` pump pages beside the main process [-]:
    none for small plants or where fork is unsafe or absent (not Linux), else one less than the
    cores (the main process works too), at least one."""
    if pages < PARALLEL_PAGES or not sys.platform.startswith("linux"):
        return 0
    cores = default_processes()
    return 0 if cores < 2 else cores - 1


@contextmanager
def shared_work(
    jobs: list[Callable[[], None]],
    pages: dict[str, str],
    write_page: Callable[[str, str], None],
) -> Iterator[None]:
    """Run every job of ``jobs`` and write every page of ``pages`` (pump id -> file name, by
    ``write_page``) by the end of the block; for large plants (Linux) forked processes do them
    while the block runs (see the module docstring). An error in the block stops them."""
    n = children(len(pages))
    items = list(pages.items())
    parts = [items[i : i + PAGES_PER_TAKE] for i in range(0, len(items), PAGES_PER_TAKE)]
    if n == 0:
        yield
        for job in jobs:
            job()
        for pid, name in items:
            write_page(pid, name)
        return
    context = multiprocessing.get_context("fork")
    work = _Work(jobs, parts, write_page, context.Value("l", 0))
    _FORKED[id(work)] = work  # before the children fork, so that they inherit it
    pool = ProcessPoolExecutor(max_workers=n, mp_context=context)
    try:
        futures = [pool.submit(_run_in_child, id(work)) for _ in range(n)]
        yield
        work.run()  # the main process's own part is done: it takes items too
        for f in futures:
            f.result()
    except BaseException:
        work.stop()
        raise
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
        _FORKED.pop(id(work), None)
