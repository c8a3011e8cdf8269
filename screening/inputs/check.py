"""Validate a plant's config and exports without computing: ``pumpscreen check``."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from screening.inputs.loader import ExportIndex
from screening.inputs.plant import Plant, load_plant
from screening.inputs.plausibility import review_notes


@dataclass
class CheckResult:
    """What ``check`` found.

    Attributes
    ----------
    tags : DataFrame
        One row per pump and tag: files holding it, samples, first and last time, problems.
    problems : DataFrame
        ``pump_id``, ``message``: pumps that cannot be screened as configured.
    file_problems : DataFrame
        ``file``, ``message``: export files that cannot be read.
    notes : list of str
        Engineering notes that do not stop a scan (a barometer away from the standard
        atmosphere, suction pressures below the vapour pressure): see
        :mod:`screening.inputs.plausibility`.
    """

    plant: Plant
    tags: pd.DataFrame
    problems: pd.DataFrame
    file_problems: pd.DataFrame
    notes: list[str] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        """True when every pump can be screened and every export file can be read."""
        return self.problems.empty and self.file_problems.empty


def check(config: str | Path | Plant) -> CheckResult:
    """Validate the config (plant file, register, curves) and the exports.

    For every tag of every pump: is it in an export file, in how many samples, from when to
    when, and how many of its samples are text, bad quality, duplicates or out of order.

    Parameters
    ----------
    config : str, Path or Plant
        The plant file or a loaded plant.
    """
    plant = config if isinstance(config, Plant) else load_plant(config)
    index = ExportIndex(plant.settings, plant.base)
    problems = [{"pump_id": k, "message": v} for k, v in plant.problems.items()]
    rows = []
    files = {**index.file_problems, **index.partly_read}
    tz = plant.timezone
    tag_roles = []
    for pid, pump in plant.pumps.items():
        for role, spec in pump.tags().items():
            tag_roles.append((pid, role, spec.tag, spec.unit))
    if plant.settings.site.barometer_tag:
        tag_roles.append(("(site)", "barometer", plant.settings.site.barometer_tag, ""))
    series, read_problems = index.read(sorted({t[2] for t in tag_roles}))
    files.update(read_problems)
    for pid, role, tag, unit in tag_roles:
        s = series.get(tag)
        row = {"pump_id": pid, "role": role, "tag": tag, "unit": unit}
        row["files"] = len(index.files_for(tag))
        if s is None or len(s.times) == 0:
            row.update(samples=0, first=None, last=None, problems="not found in any export")
            if pid != "(site)":
                problems.append({"pump_id": pid, "message": f"tag {tag} ({role}) not found"})
        else:
            q = s.quality
            found = []
            for label, n in (
                ("text values", q.text_values),
                ("bad quality", q.bad_quality),
                ("not finite", q.not_finite),
                ("bad timestamps", q.bad_timestamps),
                ("rows with a wrong number of fields", q.malformed_rows),
                ("duplicates", q.duplicates),
                ("out of order", q.out_of_order),
            ):
                if n:
                    found.append(f"{n} {label}")
            row.update(
                samples=len(s.times),
                first=pd.Timestamp(int(s.times[0]), tz="UTC").tz_convert(tz),
                last=pd.Timestamp(int(s.times[-1]), tz="UTC").tz_convert(tz),
                problems="; ".join(found),
            )
        rows.append(row)
    return CheckResult(
        plant,
        pd.DataFrame(rows),
        pd.DataFrame(problems, columns=["pump_id", "message"]),
        pd.DataFrame([{"file": k, "message": v} for k, v in files.items()],
                     columns=["file", "message"]),
        review_notes(plant, series),
    )  # fmt: skip
