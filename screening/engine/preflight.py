"""``pumpscreen check``: predict what the scan will make of a plant, before any report.

Check validates the plant file, the register and the curves, then screens the window the way
the scan does (the same readers, the same calculation; no report is written), so that its
verdict per pump is the scan's own: can be screened, not enough data (below ``[data]
min_coverage``), or cannot be screened and why. Beside each verdict it names what the data
lacks, tag by tag: stretches without a sample longer than the stale limit, frozen values,
bad samples and the words found in place of numbers, and files whose dates cannot be placed.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from screening.base.text import hours_text
from screening.engine.scan import scan
from screening.engine.tables import ScanResult
from screening.inputs.loader import open_exports
from screening.inputs.plant import Plant, load_plant
from screening.inputs.plausibility import barometer_notes

#: Verdicts of :func:`check`, per pump.
CAN_BE_SCREENED = "can be screened"
NOT_ENOUGH_DATA = "not enough data"
CANNOT_BE_SCREENED = "cannot be screened"
#: A run tag whose samples are more than this share unknown words is named [-].
MOSTLY = 0.5


@dataclass
class CheckResult:
    """What ``check`` found.

    Attributes
    ----------
    verdicts : DataFrame
        ``pump_id``, ``verdict`` (one of :data:`CAN_BE_SCREENED`, :data:`NOT_ENOUGH_DATA`,
        :data:`CANNOT_BE_SCREENED`), ``coverage`` [-] and ``reason``.
    tags : DataFrame
        One row per pump and tag: samples in the window, first and last time, problems.
    problems : DataFrame
        ``pump_id``, ``message``: pumps that cannot be screened, and run tags of unknown words.
    file_problems : DataFrame
        ``file``, ``message``: export files not read, or read only in part.
    scan : ScanResult or None
        The scan behind the verdicts (None when the exports hold no sample at all).
    notes : list of str
        Engineering notes that do not change a verdict: a barometer away from the standard
        atmosphere (:mod:`screening.inputs.plausibility`), suction pressure below the vapour
        pressure.
    """

    plant: Plant
    verdicts: pd.DataFrame
    tags: pd.DataFrame
    problems: pd.DataFrame
    file_problems: pd.DataFrame
    scan: ScanResult | None = None
    notes: list[str] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        """True when every pump can be screened with enough data and every file was read."""
        return bool((self.verdicts["verdict"] == CAN_BE_SCREENED).all()) and (
            self.file_problems.empty
        )


def check(config: str | Path | Plant, start=None, end=None) -> CheckResult:
    """Predict the scan of a window: a verdict per pump and what each tag's data lacks.

    Parameters
    ----------
    config : str, Path or Plant
        The plant file or a loaded plant.
    start, end : str or Timestamp, optional
        The window, ISO 8601 (as for :func:`screening.scan`); default the plant file's
        ``[window]``, else the whole span of the exports.
    """
    plant = config if isinstance(config, Plant) else load_plant(config)
    if start is None and end is None and plant.settings.window.start is None:
        span = open_exports(plant).data_span()
        if span is None:
            return _nothing_to_read(plant)
        start = pd.Timestamp(span[0], tz="UTC")
        end = pd.Timestamp(span[1] + 1, tz="UTC")
    result = scan(plant, start, end, processes=1)
    tags = _tag_rows(result)
    problems = [
        {"pump_id": r.pump_id, "message": r.message} for r in result.problems.itertuples()
    ] + _unknown_run_words(result)
    return CheckResult(
        plant,
        _verdicts(result, tags),
        tags,
        pd.DataFrame(problems, columns=["pump_id", "message"]),
        result.file_problems.copy(),
        result,
        _notes(plant, result),
    )


def _notes(plant: Plant, result: ScanResult) -> list[str]:
    """The barometer's offset from the standard atmosphere, and pumps whose suction pressure
    fell below the vapour pressure (impossible in steady flow)."""
    notes = []
    tag = plant.settings.site.barometer_tag
    if tag:
        lo = result.start.value - int(plant.settings.site.barometer_stale_limit * 1e9)
        series, _ = open_exports(plant).read([tag], (lo, result.end.value))
        notes += barometer_notes(plant, series)
    for s in result.summary.itertuples(index=False):
        if s.below_vapour_pressure_hours > 0:
            notes.append(
                f"{s.pump_id}: suction pressure below vapour pressure for "
                f"{hours_text(s.below_vapour_pressure_hours, True)} of the window: check "
                "transmitter and temperature"
            )
    return notes


def _nothing_to_read(plant: Plant) -> CheckResult:
    """No window and no sample in any export: every pump cannot be screened."""
    index = open_exports(plant)
    files = {**index.file_problems, **index.partly_read}
    reason = "the exports hold no readable sample"
    pumps = list(plant.pumps) + list(plant.problems)
    verdicts = pd.DataFrame(
        [
            {
                "pump_id": p,
                "verdict": CANNOT_BE_SCREENED,
                "coverage": 0.0,
                "reason": plant.problems.get(p, reason),
            }
            for p in pumps
        ],  # fmt: skip
        columns=["pump_id", "verdict", "coverage", "reason"],
    )
    return CheckResult(
        plant,
        verdicts,
        pd.DataFrame(columns=["pump_id", "role", "tag", "samples", "problems"]),
        verdicts[["pump_id", "reason"]].rename(columns={"reason": "message"}),
        pd.DataFrame(
            [{"file": k, "message": v} for k, v in files.items()], columns=["file", "message"]
        ),  # fmt: skip
    )


def _tag_problems(q) -> list[str]:
    """What one tag's data lacks, in words (from a row of the scan's quality table)."""
    found = []
    samples = max(int(q.samples), 1)
    bad = int(q.text_values + q.bad_quality + q.not_finite + q.frozen + q.out_of_range)
    bad += int(q.malformed_rows)
    if q.gaps:
        found.append(
            f"{q.gaps} gap(s) beyond the stale limit, {hours_text(q.gap_hours, True)} without "
            f"data (longest from {q.longest_gaps})"
        )
    if bad:
        found.append(f"{100 * bad / samples:.1f} % of samples bad")
    for label, n in (
        ("text values", q.text_values), ("bad quality", q.bad_quality),
        ("not finite", q.not_finite), ("frozen", q.frozen), ("impossible", q.out_of_range),
        ("bad timestamps", q.bad_timestamps), ("rows with a wrong number of fields",
        q.malformed_rows), ("duplicate times", q.duplicates), ("out of order", q.out_of_order),
    ):  # fmt: skip
        if n:
            found.append(f"{int(n)} {label}")
    if q.words:
        found.append(f"words: {q.words}")
    return found


def _tag_rows(result: ScanResult) -> pd.DataFrame:
    rows = []
    for q in result.quality.itertuples(index=False):
        rows.append(
            {"pump_id": q.pump_id, "role": q.role, "tag": q.tag, "samples": int(q.samples),
             "gap_hours": float(q.gap_hours), "problems": "; ".join(_tag_problems(q))}
        )  # fmt: skip
    return pd.DataFrame(rows, columns=["pump_id", "role", "tag", "samples", "gap_hours",
                                       "problems"])  # fmt: skip


def _verdicts(result: ScanResult, tags: pd.DataFrame) -> pd.DataFrame:
    rows = []
    for r in result.problems.itertuples(index=False):
        rows.append({"pump_id": r.pump_id, "verdict": CANNOT_BE_SCREENED, "coverage": 0.0,
                     "reason": r.message})  # fmt: skip
    least = result.plant.settings.data.min_coverage
    for s in result.summary.itertuples(index=False):
        if s.enough_data:
            verdict = CAN_BE_SCREENED
            reason = f"data for {100 * s.coverage:.1f} % of the window"
        else:
            verdict = NOT_ENOUGH_DATA
            mine = tags[(tags.pump_id == s.pump_id) & (tags.problems != "")]
            worst = mine.sort_values("gap_hours", ascending=False).head(2)
            why = "; ".join(f"{t.tag} ({t.role}): {t.problems}" for t in worst.itertuples())
            reason = (
                f"data for {100 * s.coverage:.1f} % of the window, less than the "
                f"{100 * least:.0f} % asked ([data] min_coverage)" + (f": {why}" if why else "")
            )
        rows.append({"pump_id": s.pump_id, "verdict": verdict, "coverage": float(s.coverage),
                     "reason": reason})  # fmt: skip
    frame = pd.DataFrame(rows, columns=["pump_id", "verdict", "coverage", "reason"])
    return frame.sort_values("pump_id", kind="stable").reset_index(drop=True)


def _unknown_run_words(result: ScanResult) -> list[dict]:
    """Run tags whose samples are mostly words the tool does not know as on or off."""
    out = []
    q = result.quality
    for r in q[q.role == "run"].itertuples(index=False):
        if r.samples and r.text_values > MOSTLY * r.samples:
            out.append(
                {
                    "pump_id": r.pump_id,
                    "message": (
                        f"run tag {r.tag}: {100 * r.text_values / r.samples:.0f} % of its samples "
                        f"are words not known as on or off ({r.words}); add them to [running] "
                        "on_words or off_words in the plant file"
                    ),
                }
            )
    return out
