"""pumpscreen: screen a plant's centrifugal pumps for NPSH margin from historian exports.

Python API (the command line uses the same functions)::

    import screening
    result = screening.scan("configs/demo_plant.toml", "2026-10-01", "2026-11-01")
    result.hours      # pump_id, state, hours
    result.summary    # one row per pump
    screening.write_report(result, "reports/october")

Each name is imported from its module when first used (PEP 562), so that importing a part of
the package (the command line, a worker process) does not import every other part.
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING

from screening.base.version import __version__

#: Where each public name lives.
_HOMES = {
    "BANDS": "screening.base.states",
    "STATES": "screening.base.states",
    "check": "screening.engine.preflight",
    "ScanResult": "screening.engine.scan",
    "scan": "screening.engine.scan",
    "ConfigError": "screening.inputs.config",
    "Plant": "screening.inputs.plant",
    "load_plant": "screening.inputs.plant",
    "WindowError": "screening.inputs.window",
    "investigate": "screening.onset.investigate",
    "REGIONS": "screening.physics.regions",
    "write_onset_report": "screening.report.onset_page",
    "write_report": "screening.report.plant_report",
    "write_whatif_report": "screening.report.whatif_page",
    "WhatIfResult": "screening.scenarios.whatif",
    "whatif": "screening.scenarios.whatif",
}

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


def __getattr__(name: str):
    """A public name, imported from its module on first use (then kept in the package)."""
    home = _HOMES.get(name)
    if home is None:
        raise AttributeError(f"module 'screening' has no attribute {name!r}")
    value = getattr(import_module(home), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))


if TYPE_CHECKING:  # the names as a type checker or an editor sees them
    from screening.base.states import BANDS, STATES
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
