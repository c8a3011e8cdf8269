"""``pumpscreen whatif``: replay recorded history with changed setpoints, and find the
setpoints that would have kept each pump at its guidance."""

from __future__ import annotations

from pathlib import Path

import typer

from screening.base.files import check_out
from screening.base.text import hours_text
from screening.inputs.plant import load_plant

from .common import (
    DEBUG_OPTION,
    EXIT_NOTHING,
    FROM_OPTION,
    PUMP_OPTION,
    QUIET_OPTION,
    TO_OPTION,
    UNITS_OPTION,
    finish,
    friendly_errors,
    progress_bar,
)


@friendly_errors
def whatif_command(
    config: Path = typer.Argument(..., help="The plant file (TOML)."),
    scenarios: Path = typer.Argument(..., help="The scenario file (TOML)."),
    start: str = FROM_OPTION,
    end: str = TO_OPTION,
    out: Path = typer.Option(
        None, "--out", help="Report folder (default: reports/whatif_<scenario file>_<start>_<end>)."
    ),
    pump: list[str] = PUMP_OPTION,
    share: list[float] = typer.Option(
        None,
        "--share",
        help="Share of running hours the required setpoints must cover, e.g. 0.99 "
        "(repeatable; default 0.99 and 1).",
    ),
    units: str = UNITS_OPTION,
    quiet: bool = QUIET_OPTION,
    debug: bool = DEBUG_OPTION,
) -> None:
    """Replay history with each scenario's changes; report hours moved and required setpoints."""
    from screening.report.whatif_page import write_whatif_report  # here: only this command
    from screening.scenarios.whatif import whatif

    shares = tuple(sorted(set(share))) if share else (0.99, 1.0)
    if out is not None:
        check_out(out, "whatif")  # refuse a folder not ours before the work, not after it
    plant = load_plant(config)
    pump = list(dict.fromkeys(pump)) if pump else None  # an id given twice is screened once
    with progress_bar(len(pump or plant.pumps), quiet) as advance:
        result = whatif(plant, scenarios, start, end, pumps=pump, shares=shares,
                        progress=advance)  # fmt: skip
    scan = result.scan
    empty = scan.empty_message() if len(scan.summary) else None
    if empty:  # nothing recorded to replay: say it rather than write an empty report
        typer.echo(f"pumpscreen: {empty}", err=True)
        raise typer.Exit(EXIT_NOTHING)
    if out is None:
        tz = scan.plant.timezone
        a = scan.start.tz_convert(tz).strftime("%Y%m%d")
        b = scan.end.tz_convert(tz).strftime("%Y%m%d")
        out = Path("reports") / f"whatif_{scenarios.stem}_{a}_{b}"
    folder = write_whatif_report(result, out, units=units)
    n_ok, n_bad = len(scan.summary), len(scan.problems)
    if not quiet:
        typer.echo(f"{len(result.scenarios)} scenario(s) on {n_ok} pump(s), {n_bad} not screened")
        h = result.hours
        below = h[(h.kind == "margin") & h.state.isin(["below_npsh3", "below_guidance"])]
        for (sc, pid), g in below.groupby(["scenario", "pump_id"], sort=False):
            before, after = g["before_h"].sum(), g["after_h"].sum()
            typer.echo(
                f"  {sc}: {pid} below guidance {hours_text(before, True)} -> "
                f"{hours_text(max(after, 0), True)}"
            )
        for note in result.notes:
            typer.echo(f"note: {note}", err=True)
    finish(folder, scan.problems, n_ok, quiet, scan.plant, len(scan.not_enough_data))
