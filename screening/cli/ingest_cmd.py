"""``pumpscreen ingest``: convert raw exports once into a dataset partitioned by pump and month."""

from __future__ import annotations

from pathlib import Path

import typer

from screening.base.files import check_out

from .common import (
    DEBUG_OPTION,
    EXIT_OK,
    EXIT_PARTIAL,
    QUIET_OPTION,
    friendly_errors,
    iso_date_option,
)


@friendly_errors
def ingest_command(
    config: Path = typer.Argument(..., help="The plant file (TOML) naming the raw exports."),
    out: Path = typer.Option(
        None,
        "--out",
        help="Dataset folder (default: datasets/<plant file>); replaced if a dataset.",
    ),
    start: str = typer.Option(
        None,
        "--from",
        help="Keep from this ISO 8601 date or time (with the look-back); default: all.",
        callback=iso_date_option,
    ),
    end: str = typer.Option(
        None,
        "--to",
        help="Keep up to this ISO 8601 date or time (exclusive).",
        callback=iso_date_option,
    ),  # fmt: skip
    quiet: bool = QUIET_OPTION,
    debug: bool = DEBUG_OPTION,
) -> None:
    """Convert raw exports into a Parquet dataset by pump and month, for faster scans."""
    from screening.inputs.ingest import ingest  # here: only this command needs it

    out = out or Path("datasets") / config.stem
    check_out(out, "dataset")  # refuse a folder not ours before reading, not after it
    s = ingest(config, out, start, end)
    if not quiet:
        typer.echo(
            f"{s.rows:,} rows from {s.sources} export file(s) into {s.partitions} part(s) in "
            f"{s.elapsed_s:.1f} s; {s.bytes_written / 1e6:.2f} MB written, "
            f"{s.bytes_read / 1e6:.2f} MB read"
        )
        if s.outside_window:
            typer.echo(f"{s.outside_window:,} rows outside the window, not kept")
        if s.other_tags:
            typer.echo(f"{len(s.other_tags)} tag(s) no pump uses, kept under other/")
        for kind, n in s.bad_rows.items():
            kept = "not kept" if kind == "no tag" else "kept, judged when scanned"
            typer.echo(f"{kind}: {n:,} row(s) ({kept}); first at {s.first_bad[kind]}", err=True)
        for path, message in s.files_not_read.items():
            typer.echo(f"file not read: {path}: {message}", err=True)
        typer.echo("scan it with, in a plant file:")
        typer.echo(f'[[exports]]\nlayout = "dataset"\npath = "{out.resolve()}"')
        typer.echo("dataset:")
    typer.echo(str(out.resolve()))
    raise typer.Exit(EXIT_PARTIAL if s.files_not_read else EXIT_OK)
