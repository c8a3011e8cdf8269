"""pumpscreen: screen a plant's centrifugal pumps for NPSH margin from historian exports.

Python API (the command line uses the same functions)::

    import screening
    result = screening.scan("configs/demo_plant.toml", "2026-10-01", "2026-11-01")
    result.hours      # pump_id, state, hours
    result.summary    # one row per pump
    screening.write_report(result, "reports/october")
"""

from screening.base.states import BANDS, STATES
from screening.base.version import __version__
from screening.engine.preflight import check
from screening.engine.scan import ScanResult, scan
from screening.inputs.config import ConfigError
from screening.inputs.plant import Plant, load_plant
from screening.inputs.window import WindowError
from screening.onset.investigate import investigate
from screening.physics.regions import REGIONS
from screening.report.onset_page import write_onset_report
from screening.report.plant_report import write_report
from screening.report.whatif_page import write_whatif_report
from screening.scenarios.whatif import WhatIfResult, whatif

__all__ = [
    "BANDS",
    "REGIONS",
    "STATES",
    "ConfigError",
    "Plant",
    "ScanResult",
    "WindowError",
    "check",
    "investigate",
    "write_onset_report",
    "load_plant",
    "scan",
    "write_report",
    "WhatIfResult",
    "whatif",
    "write_whatif_report",
    "__version__",
]
