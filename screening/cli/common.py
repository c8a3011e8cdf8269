"""Shared pieces of the command line: exit codes and error reporting."""

from __future__ import annotations

import sys
import traceback
from collections.abc import Callable
from functools import wraps

import typer

#: Exit codes (documented in the README).
EXIT_OK = 0  # every pump screened / everything valid
EXIT_ERROR = 1  # the run failed (config, window or unexpected error)
EXIT_USAGE = 2  # wrong command-line use (typer's own code)
EXIT_PARTIAL = 3  # some pumps could not be screened (or check found problems)
EXIT_NOTHING = 4  # no pump could be screened

DEBUG_OPTION = typer.Option(False, "--debug", help="Show the full traceback on an error.")
QUIET_OPTION = typer.Option(False, "--quiet", "-q", help="Print only the report path.")


def friendly_errors(func: Callable) -> Callable:
    """Turn any exception into one clear paragraph and exit code 1 (``--debug``: traceback)."""

    @wraps(func)
    def wrapper(*args, **kwargs):
        debug = kwargs.get("debug", False)
        try:
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
