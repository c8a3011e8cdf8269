"""``pumpscreen check``: validate the config and the exports without computing."""

from __future__ import annotations

from pathlib import Path

import typer

from screening.inputs.check import check

from .common import DEBUG_OPTION, EXIT_OK, EXIT_PARTIAL, friendly_errors


@friendly_errors
def check_command(
    config: Path = typer.Argument(..., help="The plant file (TOML)."),
    debug: bool = DEBUG_OPTION,
) -> None:
    """Validate config and exports: tags present, units known, time coverage per tag."""
    result = check(config)
    plant = result.plant
    typer.echo(
        f"{plant.name}: {len(plant.pumps) + len(plant.problems)} pump(s) in the register, "
        f"{len(plant.curves)} NPSH3 curve(s)"
    )
    for row in result.tags.itertuples(index=False):
        if row.samples:
            span = f"{row.first:%Y-%m-%d %H:%M} .. {row.last:%Y-%m-%d %H:%M}"
        else:
            span = "-"
        extra = f"  [{row.problems}]" if row.problems else ""
        typer.echo(
            f"  {row.pump_id:<12} {row.role:<12} {row.tag:<24} {row.samples:>8} samples  "
            f"{span}{extra}"
        )
    _print_notes(result.notes)
    for row in result.file_problems.itertuples(index=False):
        typer.echo(f"file not readable: {row.file}: {row.message}", err=True)
    for row in result.problems.itertuples(index=False):
        typer.echo(f"problem: {row.pump_id}: {row.message}", err=True)
    if result.ok:
        typer.echo("ok: every pump can be screened")
        raise typer.Exit(EXIT_OK)
    typer.echo(
        f"{len(result.problems)} pump problem(s), {len(result.file_problems)} file problem(s)"
    )
    raise typer.Exit(EXIT_PARTIAL)


def _print_notes(notes: list[str]) -> None:
    """Engineering notes (barometer offset, suction below vapour pressure): they do not change
    the verdict."""
    for note in notes:
        typer.echo(f"note: {note}")
