"""A tag's raw values made ready for the calculator: converted to SI once, frozen transmitters
and physically impossible values flagged as bad samples, each counted with its first place."""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd

from screening.base.read_kernels import overflow_frozen
from screening.engine.calculator import Settings
from screening.inputs.pumpspec import TagSpec
from screening.inputs.quality import frozen_continued
from screening.inputs.tagdata import TagSeries
from screening.inputs.units import to_si


def _at(time_ns: int, what: str) -> str:
    return f"sample at {pd.Timestamp(int(time_ns), tz='UTC').isoformat()}: {what}"


def prepare_tag(
    series: TagSeries | None, spec: TagSpec, settings: Settings, role: str, check=None,
    chunk=None, key: str | None = None,
) -> TagSeries | None:  # fmt: skip
    """Convert a tag's raw values to SI, flag frozen and impossible samples (counted).

    ``chunk`` (a :class:`screening.engine.chunked.ChunkPart`): the series is one time chunk's
    read; only samples in ``chunk.count`` are counted, and a frozen run continues from the
    chunk before (``chunk.frozen[key]``)."""
    if series is None:
        return None
    mine = slice(None)
    if chunk is not None:
        mine = (series.times >= chunk.count[0]) & (series.times < chunk.count[1])
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
    frozen_on = settings.frozen_after is not None and role != "run"
    limit = int(settings.frozen_after * 1e9) if frozen_on else 0
    if chunk is None:  # one pass: overflowed and frozen samples, counted
        bad = _overflow_frozen(series, values, q, frozen_on, limit)
    else:
        bad = _overflow(series, values, q, mine)
        if frozen_on:
            frozen, chunk.frozen[key] = frozen_continued(
                series.times, values, bad, limit, chunk.frozen.get(key), chunk.end
            )
            frozen &= ~bad
            if frozen.any():
                q.frozen = int(frozen[mine].sum())
                bad |= frozen
    if check is not None:
        with np.errstate(invalid="ignore"):
            impossible = check(values) & ~bad
        if impossible.any():
            bad |= impossible
            if impossible[mine].any():
                q.out_of_range = int(impossible[mine].sum())
                t = series.times[mine][impossible[mine]][0]
                q.note("out_of_range", _at(t, "physically impossible"))
    return TagSeries(series.tag, series.times, values, bad, q, series.max_interval)


def _overflow_frozen(series: TagSeries, values, q, frozen_on: bool, limit: int) -> np.ndarray:
    """The bad flags of a whole series with the samples that overflowed on conversion (a
    finite reading such as 1e308 kPa is not a number in SI either) and, when ``frozen_on``,
    the frozen ones (:func:`screening.inputs.quality.frozen_samples` with ``limit`` [ns])
    added and counted into ``q``."""
    bad, counts = overflow_frozen(series.times, values, series.bad, np.int64(limit), frozen_on)
    if counts[0]:
        q.not_finite += int(counts[0])
        q.note("not_finite", _at(series.times[counts[1]], "too large to convert to SI"))
    if counts[2]:
        q.frozen = int(counts[2])
    return bad


def _overflow(series: TagSeries, values, q, mine) -> np.ndarray:
    """The bad flags with the samples that overflowed on conversion added, those in ``mine``
    counted into ``q``."""
    bad, counts = overflow_frozen(series.times, values, series.bad, np.int64(0), False)
    if counts[0]:
        overflow = bad & ~series.bad
        if overflow[mine].any():
            q.not_finite += int(overflow[mine].sum())
            t = series.times[mine][overflow[mine]][0]
            q.note("not_finite", _at(t, "too large to convert to SI"))
    return bad
