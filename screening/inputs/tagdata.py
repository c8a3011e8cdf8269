"""One tag's samples as the readers hand them on, and the counting rules every reader shares.

A file's values of one tag become numbers and bad flags (:func:`add_chunk`); every problem met
is counted per tag in a :class:`TagQuality` with the first file and row where it was seen
(:func:`count_samples`); a tag's chunks from several files are merged by time
(:func:`assemble`). Nothing is dropped silently.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import pyarrow as pa

from screening.base.read_kernels import strictly_increasing, wide_column


class ExportError(ValueError):
    """An export file that cannot be read; the message names the file and the column."""


#: Failures of a reading library on a malformed file that no check above foresaw: the file is
#: reported as not read (with the library's words) and the rest of the plant goes on.
FILE_FAULTS = (
    ValueError, TypeError, KeyError, IndexError, OverflowError, UnicodeError, OSError,
    EOFError, csv.Error, pa.ArrowException,
)  # fmt: skip


def unexpected(path, exc: BaseException) -> str:
    """The message of a file that a reading library failed on."""
    return f"{path}: cannot be read ({type(exc).__name__}: {exc})"


@dataclass
class TagQuality:
    """What the loader found for one tag (counts of samples, first place of each problem)."""

    tag: str
    samples: int = 0
    text_values: int = 0
    bad_quality: int = 0
    not_finite: int = 0
    bad_timestamps: int = 0
    duplicates: int = 0
    out_of_order: int = 0
    frozen: int = 0
    out_of_range: int = 0
    #: CSV rows with more or fewer fields than the header (a truncated or garbled line):
    #: every tag's value in such a row is a bad sample.
    malformed_rows: int = 0
    words: dict[str, int] = field(default_factory=dict)
    first_problem: dict[str, str] = field(default_factory=dict)
    #: Stretches of the window without a fresh sample (longer than the stale limit): how
    #: many, the hours without data they leave [h], and the longest as (from [ns], length [ns]).
    gaps: int = 0
    gap_hours: float = 0.0
    longest_gaps: list[tuple[int, int]] = field(default_factory=list)

    def note(self, kind: str, where: str) -> None:
        """Remember the first place a problem of ``kind`` was seen."""
        self.first_problem.setdefault(kind, where)


@dataclass
class TagSeries:
    """One tag's samples: times [ns since epoch, UTC], raw values, bad flags."""

    tag: str
    times: np.ndarray
    values: np.ndarray
    bad: np.ndarray
    quality: TagQuality
    #: None: samples are steps (each holds up to the stale limit). A number [s]: stored points
    #: of a compressed record, joined by straight lines where no more than this apart (see
    #: :mod:`screening.engine.timeline`).
    max_interval: float | None = None


def as_text(value) -> str | None:
    """A cell of any type as text (bytes decoded, undecodable bytes replaced)."""
    if value is None or value is pd.NA or (isinstance(value, float) and np.isnan(value)):
        return None
    if isinstance(value, bytes | bytearray):
        return bytes(value).decode("utf-8", errors="replace")
    return str(value)


def add_chunk(
    tag, info, raw, times, ok, rows, qual, chunks, quality, good, label="line", span=None,
    malformed=None, status=None, count=None,
):  # fmt: skip
    """Parse one file's values of one tag into numbers and bad flags; count the problems.
    ``status``: a run-status tag's words (see :func:`status_words`). ``count`` [ns]: count
    only the samples in this span (a time chunk's own part of a read with look-back and
    look-ahead, :mod:`screening.engine.chunked`); None counts all."""
    q: TagQuality = quality[tag]
    if malformed is None:
        malformed = np.zeros(len(raw), dtype=bool)
    if span is not None and len(raw):
        inside = ~ok | ((times >= span[0]) & (times < span[1]))
        if not inside.all():
            raw, times, ok, rows = raw[inside], times[inside], ok[inside], rows[inside]
            malformed = malformed[inside]
            if qual is not None:
                qual = qual[inside]
    if len(raw) == 0:
        return
    where = f"{info.path} {label} "
    if not ok.all():
        q.bad_timestamps += int((~ok).sum())
        q.note("bad timestamp", where + str(rows[~ok][0]))
    raw = raw[ok] if not ok.all() else raw
    times, rows, malformed = times[ok], rows[ok], malformed[ok]
    if qual is not None:
        qual = qual[ok]
    text = None
    if isinstance(raw, np.ndarray):
        values = raw.astype(np.float64, copy=False)
        is_text = np.zeros(len(values), dtype=bool)
    elif raw.dtype.kind in "fiub":  # numbers, and booleans (a run status) as 1 and 0
        values = raw.to_numpy(dtype=np.float64, na_value=np.nan)
        is_text = np.zeros(len(values), dtype=bool)
    else:
        try:
            text = raw.astype("string").str.strip()
        except (UnicodeDecodeError, TypeError, ValueError):
            text = pd.Series([as_text(v) for v in raw], dtype="string").str.strip()
        if info.source.decimal != ".":
            text = text.str.replace(info.source.decimal, ".", regex=False)
        values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=np.float64, na_value=np.nan)
        is_text = np.isnan(values) & text.notna().to_numpy() & ~malformed
    bad_q = np.zeros(len(values), dtype=bool)
    if qual is not None:
        words = qual.astype("string").str.strip().str.lower().fillna("")
        bad_q = (~words.isin(good) & (words != "")).to_numpy()
    if count is None:
        bad = count_samples(q, where, times, values, is_text, text, bad_q, rows, malformed, status)
    else:
        bad, values = count_part(q, where, times, values, is_text, text, bad_q, rows, malformed,
                                  status, count)  # fmt: skip
    chunks[tag].append((times, values, bad, (where, rows)))


def add_numbers(tag, path, raw, times, ok, rows, chunks, quality, span=None, ordered=False):
    """:func:`add_chunk` of a wide file's column of numbers with every sample counted (no
    ``count`` span), in one compiled pass: ``raw`` float64 with NaN for an empty cell (not
    sampled), ``times`` [ns] and ``ok`` (a time was placed) of every row, ``rows`` their
    numbers; ``ordered``: the placed ``times`` strictly increase (:func:`placed_in_order`).
    The same chunk and the same counts and first places (bad timestamps, infinite values,
    steps back in time) as :func:`add_chunk`; when every row is kept the chunk holds the
    times and rows given (shared by the file's tags: never written to)."""
    lo, hi = span if span is not None else (0, 0)
    kept, all_kept, t, v, skipped, bad, c = wide_column(
        times, ok, raw, rows, np.int64(lo), np.int64(hi), span is not None, ordered
    )
    if c[6] == 0:  # nothing sampled (in the span): as add_chunk, no chunk
        return
    q: TagQuality = quality[tag]
    where = f"{path} row "
    if c[0]:
        q.bad_timestamps += int(c[0])
        q.note("bad timestamp", where + str(c[1]))
    if c[2]:
        q.not_finite += int(c[2])
        q.note("missing or infinite value", where + str(c[3]))
    if c[4]:
        q.out_of_order += int(c[4])
        q.note("out of order", where + str(c[5]))
    q.samples += int(kept)
    if all_kept:  # the file's arrays (the values writable, as a tag's own copy is)
        t, v = times, raw if raw.flags.writeable else raw.copy()
    # the file's rows (shared) and where those not kept are: a sample's row found when needed
    chunks[tag].append((t, v, bad, (where, rows, skipped)))


def placed_in_order(times: np.ndarray, ok: np.ndarray) -> bool:
    """Whether the times [ns] of the rows with a placed time (``ok``) strictly increase."""
    return bool(strictly_increasing(times if ok.all() else times[ok]))


def count_part(q, where, times, values, is_text, text, bad_q, rows, malformed, words, count):
    """:func:`count_samples` counting only the samples in the span ``count`` [ns]; the others
    (a chunk's look-back and look-ahead) are judged alike but counted in no figure. A step
    back in time is counted where its later sample is counted, as over the whole file."""
    mine = (times >= count[0]) & (times < count[1])
    if not values.flags.writeable:
        values = values.copy()
    bad = np.zeros(len(values), dtype=bool)
    back = np.zeros(len(values), dtype=bool)
    back[1:] = np.diff(times) < 0
    at = np.flatnonzero(mine)
    parts = [(mine, q), (~mine, TagQuality(q.tag))]
    if len(at) and at[-1] - at[0] + 1 == len(at):  # in time order: the counted rows in a row
        lo, hi = int(at[0]), int(at[-1]) + 1
        parts = [(slice(lo, hi), q), (slice(0, lo), TagQuality(q.tag)),
                 (slice(hi, None), TagQuality(q.tag))]  # fmt: skip
    for part, into in parts:
        if len(times[part]) == 0:
            continue
        v = values[part]
        t = None if text is None else (text.iloc[part] if hasattr(text, "iloc") else text[part])
        if into is q:  # steps back whose earlier sample is outside the part
            into.out_of_order += int(back[part].sum()) - int((np.diff(times[part]) < 0).sum())
        bad[part] = count_samples(into, where, times[part], v, is_text[part], t, bad_q[part],
                                  rows[part], malformed[part], words)  # fmt: skip
        values[part] = v  # run-status words mapped to 1 and 0
    return bad, values


#: Words a run-status tag may be exported as (any case, surrounding spaces ignored): running.
DEFAULT_ON_WORDS = ("on", "run", "running", "true", "yes", "1")
#: ... and stopped. ``[running] on_words`` and ``off_words`` in the plant file add to these.
DEFAULT_OFF_WORDS = ("off", "stop", "stopped", "false", "no", "0")


def status_words(on_words=(), off_words=()) -> dict[str, float]:
    """The run-status words and their values (1 running, 0 stopped): the defaults plus the
    plant's own, compared in lower case. A word given as both is refused."""
    on = {str(w).strip().lower() for w in (*DEFAULT_ON_WORDS, *on_words)}
    off = {str(w).strip().lower() for w in (*DEFAULT_OFF_WORDS, *off_words)}
    both = sorted(on & off)
    if both:
        raise ValueError(f"word(s) {', '.join(map(repr, both))} in both on_words and off_words")
    return {**{w: 1.0 for w in on}, **{w: 0.0 for w in off}}


def _map_words(values: np.ndarray, is_text: np.ndarray, text, words: dict[str, float]):
    """Known run-status words become 1 or 0 (in place); returns which samples stay text."""
    picked = np.flatnonzero(is_text)
    lowered = pd.Series(np.asarray(text, dtype=object)[picked]).astype("string")
    mapped = lowered.str.strip().str.lower().map(words).to_numpy(dtype=np.float64, na_value=np.nan)
    known = ~np.isnan(mapped)
    values[picked[known]] = mapped[known]
    is_text = is_text.copy()
    is_text[picked[known]] = False
    return is_text


def count_samples(
    q, where, times, values, is_text, text, bad_q, rows, malformed, words=None
) -> np.ndarray:
    """Count one file's samples of one tag into ``q`` and return which are bad.

    ``words`` (a run-status tag's, see :func:`status_words`) turns known words into 1 or 0
    in ``values`` first; an unknown word stays a text value, counted with the word.

    The rules every reader shares (the raw exports here, the ingested dataset in
    :mod:`screening.inputs.dataset`): text values (with their words), rows with a wrong number of
    fields, missing or infinite values, bad quality words, samples out of time order; each
    kind's first place is noted as ``where`` plus the row. ``times`` [ns] hold only samples
    with a valid timestamp; ``text`` may be None when no value is text.
    """
    if words and is_text.any():
        is_text = _map_words(values, is_text, text, words)
    if is_text.any():
        q.text_values += int(is_text.sum())
        q.note("text value", where + str(rows[is_text][0]))
        for word, count in pd.Series(text[is_text]).value_counts().items():
            q.words[str(word)] = q.words.get(str(word), 0) + int(count)
    if malformed.any():
        q.malformed_rows += int(malformed.sum())
        q.note("row with a wrong number of fields", where + str(rows[malformed][0]))
    not_finite = ~np.isfinite(values) & ~is_text & ~malformed
    if not_finite.any():
        q.not_finite += int(not_finite.sum())
        q.note("missing or infinite value", where + str(rows[not_finite][0]))
    if bad_q.any():
        q.bad_quality += int(bad_q.sum())
        q.note("bad quality", where + str(rows[bad_q][0]))
    back = np.diff(times) < 0
    if back.any():
        q.out_of_order += int(back.sum())
        q.note("out of order", where + str(rows[1:][back][0]))
    q.samples += len(values)
    return is_text | not_finite | malformed | bad_q


def chunk_rows(place: tuple) -> np.ndarray:
    """The rows of a chunk's samples from its place: ``(where, rows)``, or ``(where, rows,
    skipped)`` from :func:`add_numbers` (the file's rows and the sorted positions of those
    not kept)."""
    return place[1] if len(place) == 2 else np.delete(place[1], place[2])


def _place(parts: list[tuple], position: int) -> str | None:
    """Where the sample at ``position`` of the concatenated chunks came from ("file line n"),
    when the chunks carry their places (a 4th element ``(where, rows)``, or ``(where, rows,
    skipped)`` from :func:`add_numbers`)."""
    for part in parts:
        n = len(part[0])
        if position < n:
            if len(part) < 4:
                return None
            return part[3][0] + str(chunk_rows(part[3])[position])
        position -= n
    return None


def assemble(tag: str, parts: list[tuple], q: TagQuality, count=None) -> TagSeries:
    """Merge a tag's chunks: sort by time (stable) and keep the last of duplicate times.

    ``parts`` are ``(times, values, bad)``, optionally with ``(where, rows)`` to name the
    place of the first duplicate in the quality table. ``count`` [ns]: count only the
    duplicates at times in this span (see :func:`add_chunk`)."""
    order = None
    if len(parts) == 1:
        times, values, bad = parts[0][:3]
    elif parts:
        times = np.concatenate([p[0] for p in parts])
        values = np.concatenate([p[1] for p in parts])
        bad = np.concatenate([p[2] for p in parts])
    else:
        times = np.zeros(0, np.int64)
        values = np.zeros(0)
        bad = np.zeros(0, bool)
    if len(times) > 1 and not strictly_increasing(times):
        if np.any(times[1:] < times[:-1]):
            order = np.argsort(times, kind="stable")
            times, values, bad = times[order], values[order], bad[order]
        last = np.append(times[1:] != times[:-1], True)
        counted = ~last
        if count is not None:
            counted &= (times >= count[0]) & (times < count[1])
        dup = int(counted.sum())
        if dup:
            # Several samples at one instant: the last in file order stands (a historian's
            # later correction); the others are counted as duplicates.
            q.duplicates += dup
            # the first instant held twice: where it first appears, and where again
            i = int(np.flatnonzero(counted)[0])
            a, b = (int(order[i]), int(order[i + 1])) if order is not None else (i, i + 1)
            place, again = _place(parts, a), _place(parts, b)
            if place is not None:
                q.note("duplicate time", f"{place}, again at {again}")
        if not last.all():
            times, values, bad = times[last], values[last], bad[last]
    return TagSeries(tag, times, values, bad, q)
