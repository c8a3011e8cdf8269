"""The cautions shown with every result (README, every report page, setpoint pages)."""

CAUTIONS: tuple[str, ...] = (
    "This is a screening aid, not a design or safety determination.",
    "NPSH guidance values are general; the pump manufacturer's data, site engineering standards "
    "and local codes govern.",
    "Cavitation can begin well above NPSH3: a margin above the guidance does not mean the pump "
    "does not cavitate.",
    "A setpoint change goes through the site's management-of-change process and is made by "
    "qualified people.",
    "Hot liquids near saturation can flash and injure people.",
)
