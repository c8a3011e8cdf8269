"""``pumpscreen check``: predict the scan of a window, pump by pump, without writing a report."""

from __future__ import annotations

from pathlib import Path

import typer

from screening.engine.preflight import CAN_BE_SCREENED, NOT_ENOUGH_DATA, check

from .common import (
    DEBUG_OPTION,
    EXIT_OK,
    EXIT_PARTIAL,
    FROM_OPTION,
    TO_OPTION,
    friendly_errors,
)


@friendly_errors
def check_command(
    config: Path = typer.Argument(..., help="The plant file (TOML)."),
    start: str = FROM_OPTION,
    end: str = TO_OPTION,
    debug: bool = DEBUG_OPTION,
) -> None:
    """Predict the scan: a verdict per pump, and what each tag's data lacks (gaps, frozen values,
    bad samples, unknown words, dates that cannot be placed)."""
    result = check(config, start, end)
    plant = result.plant
    window = ""
    if result.scan is not None:
        tz = plant.timezone
        s = result.scan
        a, b = (x.tz_convert(tz).strftime("%Y-%m-%d %H:%M") for x in (s.start, s.end))
        window = f"; window {a} to {b} ({tz})"
    typer.echo(
        f"{plant.name}: {len(plant.pumps) + len(plant.problems)} pump(s) in the register, "
        f"{len(plant.curves)} NPSH3 curve(s){window}"
    )
    tags = result.tags
    for v in result.verdicts.itertuples(index=False):
        typer.echo(f"  {v.pump_id:<12} {v.verdict:<19} {v.reason}")
        for t in tags[(tags.pump_id == v.pump_id) & (tags.problems != "")].itertuples():
            typer.echo(f"      {t.role:<16} {t.tag:<20} {t.problems}")
    for t in tags[(tags.pump_id == "(site)") & (tags.problems != "")].itertuples():
        typer.echo(f"  (site)       {t.role:<16} {t.tag:<20} {t.problems}")
    _print_notes(result.notes)
    for row in result.problems.itertuples(index=False):
        if row.message not in set(result.verdicts["reason"]):
            typer.echo(f"  problem: {row.pump_id}: {row.message}")
    for row in result.file_problems.itertuples(index=False):
        typer.echo(f"  file: {row.file}: {row.message}")
    counts = result.verdicts["verdict"].value_counts()
    n_ok = int(counts.get(CAN_BE_SCREENED, 0))
    n_thin = int(counts.get(NOT_ENOUGH_DATA, 0))
    n_out = len(result.verdicts) - n_ok - n_thin
    typer.echo(
        f"summary: {len(result.verdicts)} pump(s): {n_ok} can be screened, {n_thin} not enough "
        f"data, {n_out} cannot be screened; {len(result.file_problems)} file(s) not read or "
        "read only in part"
    )
    raise typer.Exit(EXIT_OK if result.ok else EXIT_PARTIAL)


def _print_notes(notes: list[str]) -> None:
    """Engineering notes (barometer offset, suction below vapour pressure): they do not change
    the verdict."""
    for note in notes:
        typer.echo(f"  note: {note}")
