"""pumpscreen: screen a plant's centrifugal pumps for NPSH margin from historian exports.

Python API (the command line uses the same functions)::

    import screening
    result = screening.scan("configs/demo_plant.toml", "2026-10-01", "2026-11-01")
    result.hours      # pump_id, state, hours
    result.summary    # one row per pump
    screening.write_report(result, "reports/october")
"""

from .check import check
from .config import ConfigError
from .onset import investigate, write_onset_report
from .plant import Plant, load_plant
from .regions import REGIONS
from .report import write_report
from .scan import ScanResult, WindowError, scan
from .states import BANDS, STATES
from .whatif import WhatIfResult, whatif
from .whatif_page import write_whatif_report

__version__ = "0.1.0"
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
