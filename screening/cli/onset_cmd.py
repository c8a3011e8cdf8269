"""``pumpscreen onset``: when did a pump's margin trouble begin."""

from __future__ import annotations

from pathlib import Path

import typer

from screening.base.files import check_out, safe_name
from screening.report.pump_pages import DISPLAY_UNITS

from .common import (
    DEBUG_OPTION,
    EXIT_OK,
    UNITS_OPTION,
    friendly_errors,
    iso_date_option,
    iso_period_option,
)


@friendly_errors
def onset_command(
    config: Path = typer.Argument(..., help="The plant file (TOML)."),
    pump: str = typer.Argument(..., help="The pump id."),
    start: str = typer.Option(
        ..., "--from", help="Window start, ISO 8601 (a year is normal).", callback=iso_date_option
    ),
    end: str = typer.Option(
        ..., "--to", help="Window end (exclusive), ISO 8601.", callback=iso_date_option
    ),
    failed_on: str = typer.Option(
        None,
        "--failed-on",
        help="Date the pump failed, ISO 8601, inside the window (default: the last failure in "
        "the plant's events table, if any).",
        callback=iso_date_option,
    ),
    baseline: str = typer.Option(
        None,
        "--baseline",
        help="Baseline period FROM..TO in ISO 8601 (default: the first three weeks, after the "
        "last maintenance event if there is one).",
        callback=iso_period_option,
    ),
    out: Path = typer.Option(None, "--out", help="Report folder (default reports/onset_<pump>)."),
    enter_below: float = typer.Option(
        None,
        "--enter-below",
        help="Episode starts below this fraction of the guidance (plant file [onset]; 1.0).",
    ),
    leave_above: float = typer.Option(
        None,
        "--leave-above",
        help="Episode ends above this fraction of the guidance (plant file [onset]; 1.05).",
    ),
    min_hours: float = typer.Option(
        None, "--min-hours", help="Shortest episode kept [h] (plant file [onset]; 0.5)."
    ),
    bridge_hours: float = typer.Option(
        None, "--bridge-hours", help="Gaps bridged [h] (plant file [onset]; 1.0)."
    ),
    units: str = UNITS_OPTION,
    debug: bool = DEBUG_OPTION,
) -> None:
    """Find when a pump's suction margin began to shrink, in which episodes, driven by what."""
    from screening.onset.investigate import investigate  # here: only this command needs them
    from screening.report.onset_page import write_onset_report

    default = safe_name("".join(c if c.isalnum() else "_" for c in pump))
    out = out or Path("reports") / f"onset_{default}"
    check_out(out, "onset")  # refuse a folder not ours before the work, not after it
    result = investigate(
        config, pump, start, end, failed_on=failed_on, baseline=baseline,
        enter_below=enter_below, leave_above=leave_above, min_duration_h=min_hours,
        bridge_gap_h=bridge_hours,
    )  # fmt: skip
    page = write_onset_report(result, out, units=units)
    typer.echo(result.finding_in(DISPLAY_UNITS[units].head))
    typer.echo(str(page.resolve()))
    raise typer.Exit(EXIT_OK)
