"""``pumpscreen scan``: screen the whole plant over a window and write the report folder."""

from __future__ import annotations

from pathlib import Path

import typer

from screening.base.files import check_out
from screening.base.text import hours_text
from screening.engine.plotdata import DEFAULT_BUCKETS
from screening.engine.scan import scan
from screening.inputs.plant import load_plant
from screening.report.plant_report import write_report

from .common import (
    CLUSTER_OPTION,
    DEBUG_OPTION,
    EXIT_NOTHING,
    FROM_OPTION,
    PROCESSES_OPTION,
    PUMP_OPTION,
    QUIET_OPTION,
    TO_OPTION,
    UNITS_OPTION,
    WORKERS_OPTION,
    cluster_choice,
    finish,
    friendly_errors,
    progress_bar,
)


@friendly_errors
def scan_command(
    config: Path = typer.Argument(..., help="The plant file (TOML).", exists=False),
    start: str = FROM_OPTION,
    end: str = TO_OPTION,
    out: Path = typer.Option(
        None, "--out", help="Report folder (default: reports/<plant file>_<start>_<end>)."
    ),
    pump: list[str] = PUMP_OPTION,
    units: str = UNITS_OPTION,
    compare_to: list[Path] = typer.Option(
        None,
        "--compare-to",
        help="Earlier report folders, or folders of them (repeatable): mark pumps that got "
        "worse or better since the latest, and show each pump's hours below the guidance "
        "per month.",
    ),
    processes: int = PROCESSES_OPTION,
    cluster: str = CLUSTER_OPTION,
    workers: int = WORKERS_OPTION,
    quiet: bool = QUIET_OPTION,
    debug: bool = DEBUG_OPTION,
) -> None:
    """Screen every pump over a window: hours in each NPSH margin band, with every hour counted."""
    chosen = cluster_choice(processes, cluster, workers)
    if out is not None:
        check_out(out, "report")  # refuse a folder not ours before the scan, not after it
    plant = load_plant(config)
    pump = list(dict.fromkeys(pump)) if pump else None  # an id given twice is screened once
    with progress_bar(len(pump or plant.pumps), quiet) as advance:
        result = scan(
            plant, start, end, pumps=pump, plot_buckets=DEFAULT_BUCKETS,
            processes=processes, cluster=chosen, progress=advance,
        )  # fmt: skip
    empty = result.empty_message() if len(result.summary) else None
    if empty:  # an empty report would read as an all-clear: say it and stop
        typer.echo(f"pumpscreen: {empty}", err=True)
        raise typer.Exit(EXIT_NOTHING)
    if out is None:
        tz = result.plant.timezone
        a = result.start.tz_convert(tz).strftime("%Y%m%d")
        b = result.end.tz_convert(tz).strftime("%Y%m%d")
        out = Path("reports") / f"{config.stem}_{a}_{b}"
    folder = write_report(result, out, units=units, compare_to=compare_to or None)
    if not quiet:
        print_ranking(result)
    finish(
        folder, result.problems, len(result.summary), quiet, result.plant,
        len(result.not_enough_data),
    )  # fmt: skip


def print_ranking(result) -> None:
    """The console's summary: samples, the most exposed pumps with enough data, and the pumps
    without enough data, apart."""
    n_ok, n_bad = len(result.summary), len(result.problems)
    rate = result.samples / result.elapsed_s if result.elapsed_s else 0.0
    typer.echo(
        f"screened {n_ok} pump(s), {n_bad} not screened; {result.samples:,} samples in "
        f"{result.elapsed_s:.1f} s ({rate:,.0f} samples/s)"
    )
    ranked, thin = result.ranked, result.not_enough_data
    if len(ranked):
        typer.echo("most exposed (time below NPSH3 / below guidance):")
        for row in ranked.head(5).itertuples(index=False):
            typer.echo(
                f"  {row.pump_id:<12} {hours_text(row.below_npsh3_hours, True):>8} "
                f"{hours_text(row.below_guidance_hours, True):>9}   {row.service}"
            )
    if len(thin):
        share = result.plant.settings.data.min_coverage
        typer.echo(
            f"not enough data to screen ({len(thin)} pump(s) with data for less than "
            f"{100 * share:.0f} % of the window; not ranked):"
        )
        for row in thin.itertuples(index=False):
            typer.echo(
                f"  {row.pump_id:<12} {100 * row.coverage:5.1f} % covered   "
                f"no data {hours_text(row.no_data_hours, True)}, "
                f"bad data {hours_text(row.bad_data_hours, True)}"
            )
