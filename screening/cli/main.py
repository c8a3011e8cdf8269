"""The ``pumpscreen`` command."""

from __future__ import annotations

import atexit
import gc

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

# At exit the interpreter's last garbage collections walk every object left (some 0.5 s for the
# modules of a scan and its tables): frozen, they are skipped. Objects are still released as
# their modules are cleared; only cycles are left to the end of the process (every file of
# the report is written and closed by then).
atexit.register(gc.freeze)

if __name__ == "__main__":  # pragma: no cover
    app()
