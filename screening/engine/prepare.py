"""A tag's raw values made ready for the calculator: converted to SI once, frozen transmitters
and physically impossible values flagged as bad samples, each counted with its first place."""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd

from screening.engine.calculator import Settings
from screening.inputs.pumpspec import TagSpec
from screening.inputs.quality import frozen_samples
from screening.inputs.tagdata import TagSeries
from screening.inputs.units import to_si


def _at(time_ns: int, what: str) -> str:
    return f"sample at {pd.Timestamp(int(time_ns), tz='UTC').isoformat()}: {what}"


def prepare_tag(
    series: TagSeries | None, spec: TagSpec, settings: Settings, role: str, check=None
) -> TagSeries | None:
    """Convert a tag's raw values to SI, flag frozen and impossible samples (counted)."""
    if series is None:
        return None
    # a tag may serve several pumps (a shared basin temperature): count per pump
    q = dataclasses.replace(
        series.quality,
        words=dict(series.quality.words),
        first_problem=dict(series.quality.first_problem),
    )
    if spec.kind == "status":
        values = series.values.copy()
    elif spec.kind == "percent":  # a level in % of span: low + %·(high − low)/100 [m]
        with np.errstate(over="ignore", invalid="ignore"):
            values = series.values * spec.scale + spec.offset
    else:
        with np.errstate(over="ignore"):  # an overflow is counted below
            values = to_si(series.values, spec.unit, spec.kind)
            if spec.scale != 1.0:  # a drive frequency: n = n_rated·f/f_rated (register)
                values = values * spec.scale
    bad = series.bad.copy()
    # a finite reading that overflows on conversion (1e308 kPa) is not a number either
    overflow = ~np.isfinite(values) & ~bad
    if overflow.any():
        q.not_finite += int(overflow.sum())
        bad |= overflow
        q.note("not_finite", _at(series.times[overflow][0], "too large to convert to SI"))
    if settings.frozen_after is not None and role != "run":
        frozen = frozen_samples(series.times, values, bad, int(settings.frozen_after * 1e9))
        frozen &= ~bad
        if frozen.any():
            q.frozen = int(frozen.sum())
            bad |= frozen
    if check is not None:
        with np.errstate(invalid="ignore"):
            impossible = check(values) & ~bad
        if impossible.any():
            q.out_of_range = int(impossible.sum())
            bad |= impossible
            q.note("out_of_range", _at(series.times[impossible][0], "physically impossible"))
    return TagSeries(series.tag, series.times, values, bad, q, series.max_interval)
