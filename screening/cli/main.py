"""The ``pumpscreen`` command."""

from __future__ import annotations

import typer

from .check_cmd import check_command
from .ingest_cmd import ingest_command
from .onset_cmd import onset_command
from .scan_cmd import scan_command
from .whatif_cmd import whatif_command

app = typer.Typer(
    name="pumpscreen",
    help="Screen a plant's centrifugal pumps for NPSH margin from historian exports.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)
app.command("scan")(scan_command)
app.command("check")(check_command)
app.command("onset")(onset_command)
app.command("whatif")(whatif_command)
app.command("ingest")(ingest_command)

if __name__ == "__main__":  # pragma: no cover
    app()
