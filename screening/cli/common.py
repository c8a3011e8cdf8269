"""Shared pieces of the command line: exit codes and error reporting."""

from __future__ import annotations

import sys
import time
import traceback
import warnings
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from functools import wraps
from typing import NoReturn

import typer

from screening.inputs.window import WindowError, check_iso
from screening.report.pump_pages import DISPLAY_UNITS

#: Exit codes (documented in the README).
EXIT_OK = 0  # every pump screened / everything valid
EXIT_ERROR = 1  # the run failed (config, window or unexpected error)
EXIT_USAGE = 2  # wrong command-line use (typer's own code)
EXIT_PARTIAL = 3  # some pumps could not be screened (or check found problems)
EXIT_NOTHING = 4  # no pump could be screened

DEBUG_OPTION = typer.Option(False, "--debug", help="Show the full traceback on an error.")
QUIET_OPTION = typer.Option(False, "--quiet", "-q", help="Print only the report path.")


def _one_line_warning(message, category, filename, lineno, file=None, line=None) -> None:
    """Show a Python warning as one line on standard error (no source line, no path)."""
    text = " ".join(str(message).split())
    print(f"pumpscreen: note: {text}", file=sys.stderr)


def friendly_errors(func: Callable) -> Callable:
    """Turn any exception into one clear paragraph and exit code 1 (``--debug``: traceback);
    Python warnings are shown as one line each, ``pumpscreen: note: ...``."""

    @wraps(func)
    def wrapper(*args, **kwargs):
        debug = kwargs.get("debug", False)
        try:
            with warnings.catch_warnings():
                warnings.showwarning = _one_line_warning
                return func(*args, **kwargs)
        except typer.Exit:
            raise
        except Exception as exc:  # noqa: BLE001 - the command line's last line of defence
            if debug:
                traceback.print_exc()
            else:
                print(f"pumpscreen: error: {exc}", file=sys.stderr)
                print("(run again with --debug for the full traceback)", file=sys.stderr)
            raise typer.Exit(EXIT_ERROR) from None

    return wrapper


def iso_date_option(value: str | None) -> str | None:
    """Refuse a date that is not ISO 8601 before anything runs (exit code 2)."""
    if value is None:
        return None
    try:
        return check_iso(value)
    except WindowError as exc:
        raise typer.BadParameter(str(exc)) from None


def units_option(value: str) -> str:
    """The display units ``si`` or ``us`` (any case), refused otherwise before anything runs
    (exit code 2)."""
    if value.lower() not in DISPLAY_UNITS:
        raise typer.BadParameter(f"{value!r} is not 'si' or 'us'")
    return value.lower()


#: ``--units``: the display units of the pages and the console's lengths.
UNITS_OPTION = typer.Option(
    "si",
    "--units",
    help="Display units of the pages and the printed finding: si (m, kPa, degC, m3/h) or us "
    "(ft, psi, degF, gpm); the tables beside the pages stay SI.",
    callback=units_option,
)


def iso_period_option(value: str | None) -> str | None:
    """A period ``FROM..TO`` of two ISO 8601 dates, refused otherwise (exit code 2)."""
    if value is None:
        return None
    parts = value.split("..")
    if len(parts) != 2:
        raise typer.BadParameter(f"{value!r} is not a period FROM..TO, e.g. 2026-01-01..2026-02-01")
    return "..".join(iso_date_option(p) for p in parts)


FROM_OPTION = typer.Option(
    None,
    "--from",
    help="Window start, ISO 8601: 2026-10-01 or 2026-10-01T06:00 (site time zone unless an "
    "offset is given).",
    callback=iso_date_option,
)
TO_OPTION = typer.Option(
    None, "--to", help="Window end (exclusive), ISO 8601 like --from.", callback=iso_date_option
)
PUMP_OPTION = typer.Option(None, "--pump", help="Only this pump (repeatable).")
PROCESSES_OPTION = typer.Option(
    None, "--processes", help="Worker processes on this machine (default: every core; 1: none)."
)
CLUSTER_OPTION = typer.Option(
    None, "--cluster", help="Run on an existing Dask scheduler, e.g. tcp://10.0.0.5:8786."
)
WORKERS_OPTION = typer.Option(
    None, "--workers", help="Start a local Dask cluster with this many workers for the run."
)


@contextmanager
def progress_bar(total_pumps: int, quiet: bool) -> Iterator[Callable | None]:
    """A progress bar on standard error (pumps done, samples per second, time left), or None
    when quiet or when standard error is not a terminal (a log file stays clean)."""
    if quiet or not sys.stderr.isatty() or total_pumps <= 0:
        yield None
        return
    from rich.console import Console  # here: rich's console costs 0.1 s to import
    from rich.progress import (
        BarColumn,
        MofNCompleteColumn,
        Progress,
        TextColumn,
        TimeRemainingColumn,
    )

    start = time.perf_counter()
    samples = 0
    with Progress(
        TextColumn("screening"), BarColumn(), MofNCompleteColumn(), TextColumn("pumps"),
        TextColumn("{task.fields[rate]}"), TimeRemainingColumn(),
        console=Console(stderr=True), transient=True,
    ) as bar:  # fmt: skip
        task = bar.add_task("scan", total=total_pumps, rate="")

        def advance(output) -> None:
            nonlocal samples
            samples += output.samples
            rate = samples / max(time.perf_counter() - start, 1e-9)
            bar.update(task, advance=output.pumps, rate=f"{rate:,.0f} samples/s")

        yield advance


def usage_error(message: str) -> NoReturn:
    """Wrong command-line use: one line on standard error and exit code 2, at once."""
    print(f"pumpscreen: usage error: {message}", file=sys.stderr)
    raise typer.Exit(EXIT_USAGE)


def cluster_choice(processes: int | None, cluster: str | None, workers: int | None):
    """The ``cluster`` argument of :func:`screening.scan` from the command-line options,
    checked before any work: ``--processes`` and ``--workers`` at least 1, ``--cluster`` and
    ``--workers`` not together (each a usage error, exit code 2)."""
    if cluster is not None and workers is not None:
        usage_error("give --cluster or --workers, not both")
    if processes is not None and processes < 1:
        usage_error(f"--processes must be 1 or more (1: no worker processes), got {processes}")
    if workers is not None and workers < 1:
        usage_error(f"--workers must be 1 or more, got {workers}")
    if processes is not None and (cluster is not None or workers is not None):
        usage_error("give --processes, or --cluster / --workers, not both")
    return cluster if cluster is not None else workers


def finish(folder, problems, n_ok: int, quiet: bool, plant=None, n_thin: int = 0) -> None:
    """The end of a screening command: pumps not screened (standard error), the report's
    path, and the exit code (0 all screened with enough data, 3 some not screened or without
    enough data, 4 none screened: always with a reason)."""
    if not quiet:
        for row in problems.itertuples(index=False):
            typer.echo(f"not screened: {row.pump_id}: {row.message}", err=True)
    if n_ok == 0 and len(problems) == 0:
        where = f" {plant.base / plant.settings.register_files.pumps}" if plant is not None else ""
        typer.echo(f"pumpscreen: no pump screened: the register{where} lists no pump", err=True)
    if not quiet:
        typer.echo("report:")
    typer.echo(str((folder / "index.html").resolve()))
    if n_ok == 0:
        raise typer.Exit(EXIT_NOTHING)
    raise typer.Exit(EXIT_PARTIAL if len(problems) or n_thin else EXIT_OK)
