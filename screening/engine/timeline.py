"""A pump's timeline: the pieces the window is cut into and every tag's value on each.

Alignment (see DESIGN.md, "Time weighting"): the timeline is cut at every sample time of any of
the pump's tags, at the window's start, at every local midnight and at any extra instants the
calculator asks for (band crossings, the end of a start's settling time). Each tag is drawn
between its samples in one of two ways:

- step (:class:`Held`): a sample holds until the next one, for at most the tag's stale limit.
  Sampled ("interpolated" or snapshot) exports and every run-status tag are read so.
- linear (:class:`Linear`): a compressed "recorded values" export keeps only the points needed
  to redraw the trend within a deviation, and a reader is meant to join them by straight lines
  (the swinging-door trending method, E. H. Bristol, "Swinging door trending: adaptive trend
  recording?", ISA National Conference, 1990, from memory). Two good points no more than the
  longest interval apart (the historian's maximum archive interval) are joined by a line; a
  point with no good successor within it holds its value for at most that interval, and the
  rest of the gap is no data.

Because every stored point of every tag is a cut, each linear tag is one straight line across
a piece. The state of a piece is the state at its start, so where a margin or a region changes
inside a piece, the calculator finds the instant by bisection (:func:`crossings`) and cuts the
piece there: the hours of each state are then exact to the nanosecond (up to a piece whose
state leaves and comes back between its ends, which is taken as wholly in its end state).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from screening.base.calc_kernels import merge_axes
from screening.base.kernels import hold, hold_fold
from screening.inputs.tagdata import TagSeries

NEVER = np.iinfo(np.int64).min // 4


class Held:
    """A tag's last sample at each grid point [ns], with the time until which it stays fresh
    [ns] (step reconstruction).

    Built with ``value`` and ``bad`` (from :func:`hold_roles`, which folds the fresh-until
    times of a pump's tags without keeping each tag's own), ``until`` is found when first
    asked for."""

    def __init__(self, s: TagSeries | None, grid: np.ndarray, stale_ns: int, value=None,
                 bad=None):  # fmt: skip
        self._bad: np.ndarray | None = bad
        self._until: np.ndarray | None = None
        self._source = (s, grid, stale_ns)
        self.value = self._hold() if value is None else value

    def _hold(self) -> np.ndarray:
        """Hold the tag: its bad flags and fresh-until times set, its values returned."""
        s, grid, stale_ns = self._source
        if s is None or len(s.times) == 0:
            self._bad = np.zeros(len(grid), dtype=bool)
            self._until = np.full(len(grid), NEVER, dtype=np.int64)
            return np.full(len(grid), np.nan)
        value, self._bad, self._until = hold(
            s.times, s.values, s.bad, grid, np.int64(stale_ns), np.int64(NEVER)
        )
        return value

    @property
    def bad(self) -> np.ndarray:
        """Whether the held sample is bad, at each grid point."""
        if self._bad is None:
            self._hold()
        return self._bad

    @property
    def until(self) -> np.ndarray:
        """Until when [ns] the held sample stays fresh, at each grid point."""
        if self._until is None:
            self._hold()
        return self._until


class Linear(Held):
    """A compressed record's value at each grid point [ns]: on the straight line between the
    stored points around it when both are good and at most ``s.max_interval`` [s] apart, else
    the last point's value; fresh for at most that interval after the last point [ns]; bad
    where the last point is bad. Before the first point: NaN, not bad, fresh until never."""

    def __init__(self, s: TagSeries, grid: np.ndarray, stale_ns: int):
        interval = int(round(s.max_interval * 1e9))
        t, v, b = s.times, s.values, s.bad
        k = np.searchsorted(t, grid, side="right") - 1
        has = k >= 0
        kk = np.maximum(k, 0)
        nxt = np.minimum(kk + 1, len(t) - 1)
        gap = t[nxt] - t[kk]
        line = has & (nxt > kk) & (gap <= interval) & ~b[kk] & ~b[nxt]
        with np.errstate(invalid="ignore", divide="ignore"):
            # linear interpolation between the stored points (Bristol 1990: a line per door)
            frac = np.where(line, (grid - t[kk]) / np.where(line, gap, 1), 0.0)
            value = v[kk] + frac * np.where(line, v[nxt] - v[kk], 0.0)
        self.value = np.where(has, value, np.nan)
        self._bad = b[kk] & has
        self._until = np.where(has, t[kk] + interval, NEVER)


def held_tag(s: TagSeries | None, grid: np.ndarray, stale_ns: int) -> Held:
    """The tag on the pieces starting at ``grid`` [ns]: :class:`Linear` for a compressed
    record (``s.max_interval`` set), else :class:`Held` with ``stale_ns`` [ns]."""
    if s is not None and len(s.times) and s.max_interval is not None:
        return Linear(s, grid, stale_ns)
    return Held(s, grid, stale_ns)


@dataclass
class Folds:
    """The bad flags and fresh-until times [ns] of a pump's own tags folded on each piece:
    of the tags deciding running or stopped (the run status, else flow and speed), of those
    and flow and speed (the operating region), and of all its own process tags."""

    decide_bad: np.ndarray
    decide_until: np.ndarray
    region_bad: np.ndarray
    region_until: np.ndarray
    all_bad: np.ndarray
    all_until: np.ndarray


@dataclass
class Timeline:
    """The pump's pieces: their start times [ns], the next piece's start [ns], every tag
    held on them and the folds of the pump's own tags' flags (:class:`Folds`)."""

    grid: np.ndarray
    t_next: np.ndarray
    held: dict[str, Held]
    folds: Folds


def stale_ns_of(spec, default: float) -> int:
    """A tag's stale limit [ns]: the register's, else ``default`` [s]."""
    limit = default if spec is None or spec.stale_limit is None else spec.stale_limit
    return int(round(limit * 1e9))


def pump_roles(pump) -> dict:
    """The tag specifications of a pump by role, its line's header flow and peers included."""
    roles = {
        "suction": pump.suction,
        "temperature": pump.temperature,
        "flow": pump.flow,
        "speed": pump.speed,
        "run": pump.run,
        "level": pump.level,
        "vessel_pressure": pump.vessel_pressure,
    }
    roles.update({"header_flow": pump.header_flow, **pump.peer_tags()})
    return {r: spec for r, spec in roles.items() if spec}


def align(pump, tags, barometer, stale_limit: float, start_ns, end_ns, day_edges, extra=None):
    """Cut the window [ns] at every sample time of any tag, the window start, local midnights
    and the ``extra`` instants [ns] (sorted, inside the window); hold or draw every tag on the
    pieces (``stale_limit`` [s]: the plant's default)."""
    parts = [np.array([start_ns], dtype=np.int64), day_edges[:-1]]
    axes: dict[tuple[int, int, int], np.ndarray] = {}
    for s in list(tags.values()) + [barometer]:
        if s is not None and len(s.times):
            lo, hi = np.searchsorted(s.times, [start_ns, end_ns])
            # tags of one wide file share their time array: each axis is added once
            axes.setdefault((id(s.times), int(lo), int(hi)), s.times[lo:hi])
    header = tags.get("header_flow") if pump.header_flow is not None else None
    if header is not None and len(header.times):
        # a shared line's header flow: where its samples go stale the line's flow falls back
        # to the members' sum, so those instants cut the pieces too
        hold_s = header.max_interval or stale_ns_of(pump.header_flow, stale_limit) / 1e9
        expiry = header.times + int(round(hold_s * 1e9))
        parts.append(expiry[(expiry > start_ns) & (expiry < end_ns)])
    if extra is not None and len(extra):
        parts.append(np.asarray(extra, dtype=np.int64))
    # the grid and each piece's next start: two views of one merged array
    edges = merge_axes(np.unique(np.concatenate(parts)), list(axes.values()), end_ns)
    grid, t_next = edges[:-1], edges[1:]
    if any_linear(tags):
        held = held_at(pump, tags, grid, stale_limit)
        return Timeline(grid, t_next, held, folds_of(held))
    return Timeline(grid, t_next, *hold_roles(pump, tags, grid, stale_limit))


def held_at(pump, tags, times: np.ndarray, stale_limit: float) -> dict[str, Held]:
    """Every tag of the pump at the sorted instants ``times`` [ns] (``stale_limit`` [s])."""
    return {
        r: held_tag(tags.get(r), times, stale_ns_of(spec, stale_limit))
        for r, spec in pump_roles(pump).items()
    }


#: The roles of a pump's own process tags: every one is needed on a running piece.
OWN_ROLES = ("suction", "temperature", "flow", "speed", "run", "level", "vessel_pressure")


def hold_roles(pump, tags, grid: np.ndarray, stale_limit: float) -> tuple[dict[str, Held], Folds]:
    """Every tag of the pump held in steps on the pieces starting at ``grid`` [ns]
    (``stale_limit`` [s]: the plant's default), with the folds of its own tags' bad flags and
    fresh-until times (:class:`Folds`; the same as or-ing and min-ing each tag's own, as
    :func:`screening.engine.lineflow.decide` and the calculator define them). Each own tag's
    flags are folded into those of the tags before it as it is held, in one pass."""
    roles = pump_roles(pump)
    empty_t, empty_b = np.empty(0, dtype=np.int64), np.empty(0, dtype=np.bool_)
    held: dict[str, Held] = {}
    bad, until = empty_b, empty_t
    folds = []
    for group in fold_groups(roles):
        for i, r in enumerate(group):
            s = tags.get(r)
            stale = np.int64(stale_ns_of(roles[r], stale_limit))
            t, v, b = (empty_t, np.empty(0), empty_b) if s is None else (s.times, s.values, s.bad)
            # the first tag of a group folds into a new pair of arrays (the group before it
            # keeps its own), the rest into that pair
            value, own_bad, bad, until = hold_fold(t, v, b, grid, stale, np.int64(NEVER), bad,
                                                   until, i > 0)  # fmt: skip
            held[r] = Held(s, grid, int(stale), value, own_bad)
        folds += [bad, until]
    for r, spec in roles.items():
        if r not in held:
            held[r] = held_tag(tags.get(r), grid, stale_ns_of(spec, stale_limit))
    return {r: held[r] for r in roles}, Folds(*folds)


def fold_groups(roles) -> tuple[list[str], list[str], list[str]]:
    """A pump's own roles (of ``roles``) in the groups whose flags :class:`Folds` folds, each
    group adding to the one before: the tags deciding running or stopped (the run status,
    else flow and speed: :func:`screening.engine.lineflow.decide`), then flow and speed for
    the operating region, then the other own process tags."""
    deciding = ["run"] if "run" in roles else [r for r in ("flow", "speed") if r in roles]
    region = [r for r in ("flow", "speed") if r in roles and r not in deciding]
    rest = [r for r in OWN_ROLES if r in roles and r not in deciding and r not in region]
    return deciding, region, rest


def folds_of(held: dict[str, Held]) -> Folds:
    """The folds of tags held each with its own flags (:func:`held_at`: a timeline with tags
    drawn by lines, or the instants a crossing is looked for at): the same as
    :func:`hold_roles` gives while it holds."""
    n = len(held["flow"].value)
    bad, until = np.zeros(n, dtype=bool), np.full(n, np.iinfo(np.int64).max, dtype=np.int64)
    folds = []
    for group in fold_groups(held):
        for r in group:
            bad, until = bad | held[r].bad, np.minimum(until, held[r].until)
        folds += [bad, until]
    return Folds(*folds)


def any_linear(tags: dict) -> bool:
    """Whether any of the pump's tags is a compressed record drawn by lines."""
    return any(s is not None and s.max_interval is not None for s in tags.values())


def crossings(
    grid: np.ndarray, t_next: np.ndarray, codes_at: Callable[[np.ndarray], np.ndarray]
) -> np.ndarray:
    """The instants [ns] inside pieces where the state changes, by bisection.

    ``codes_at(times)`` gives the state code at sorted instants [ns] (inputs drawn as on the
    timeline). A piece [g, g_next) whose state at g differs from the state just before g_next
    (at g_next − 1 ns) is cut at the first nanosecond of the new state, found by bisection on
    integer nanoseconds (exact); a piece that passes several states is cut again from there.
    """
    lo, hi = grid, t_next - 1
    ok = hi > lo
    lo, hi = lo[ok], hi[ok]
    c_lo, c_hi = codes_at(lo), codes_at(hi)
    cand = c_lo != c_hi
    a, b, ca, cb = lo[cand], hi[cand], c_lo[cand], c_hi[cand]
    found = []
    for _ in range(8):  # at most one cut per state passed: 8 is more than the states allow
        if not len(a):
            break
        left, right = a.copy(), b.copy()  # code(left) == ca, code(right) != ca
        while True:
            open_ = right - left > 1
            if not open_.any():
                break
            mid = left + (right - left) // 2
            cm = codes_at(mid[open_])
            same = np.zeros(len(mid), dtype=bool)
            same[open_] = cm == ca[open_]
            move = open_ & same
            left = np.where(move, mid, left)
            right = np.where(open_ & ~same, mid, right)
        found.append(right)
        c_r = codes_at(right)
        more = (c_r != cb) & (right < b)
        a, b, ca, cb = right[more], b[more], c_r[more], cb[more]
    if not found:
        return np.empty(0, dtype=np.int64)
    return np.unique(np.concatenate(found))
