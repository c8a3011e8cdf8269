"""``onset`` on a pump screened in time chunks (a year of one-second data) in bounded memory.

The whole-series investigation (:func:`screening.onset.investigate.investigate`) holds every
piece of the window at once: 31.5 million pieces a pump-year at one second, some 3 GB. Here the
scan hands each time chunk's pieces to a hook (``scan(each_chunk=...)``) and only small things
are kept, with the same results as in one piece:

1. the baseline's pieces (at most ``[onset] baseline_days``, 21 days by default), from a first
   scan of the window up to the local midnight after the baseline's end (the same pieces as
   in the whole window: every local midnight is a cut), and the baseline fitted on them;
2. then, chunk by chunk: each driver's hour-weighted sums per site day, the daily weighted
   median of the flow-normalised residual (a day never spans two chunks), the episode state
   machine fed piece by piece (:class:`screening.onset.episodes.EpisodeStream`), and the
   drivers' shares of the pieces that may lie inside an episode (for its mean drivers).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from screening.engine.chunked import chunk_days
from screening.engine.drivers import (
    COLUMNS,
    drivers_for,
    expected_npsha,
    fit_baseline,
    known_pieces,
)
from screening.engine.scan import scan
from screening.inputs.loader import open_exports
from screening.inputs.window import day_edges
from screening.onset import episodes as ep
from screening.onset import evidence
from screening.onset.episodes import NS_PER_HOUR
from screening.physics.properties import fluid_table


def in_chunks(plant, pump_id: str, win) -> bool:
    """Whether the scan screens ``pump_id`` over the window ``win`` [UTC] in time chunks."""
    a, b = win[0].value, win[1].value
    return chunk_days(plant, open_exports(plant), plant.pumps[pump_id], a, b) is not None


def _baseline_rows(plant, pump_id: str, win, baseline) -> pd.DataFrame:
    """The pieces that start in the baseline [UTC], with the columns the baseline needs."""
    edges = day_edges(win[0], win[1], plant.timezone)
    end = edges[min(np.searchsorted(edges, baseline[1].value), len(edges) - 1)]
    names = ["time", "hours", "state", "npsha_m", "npsh3_m"]
    names += [COLUMNS[k] for k in drivers_for(plant.pumps[pump_id])]

    def keep(_plant, result):
        s = result.series
        inside = ((s["time"] >= baseline[0]) & (s["time"] < baseline[1])).to_numpy()
        return s.loc[inside, [c for c in dict.fromkeys(names) if c in s.columns]]

    result = scan(plant, win[0], pd.Timestamp(int(end), tz="UTC"), pumps=[pump_id],
                  each_chunk=keep)  # fmt: skip
    evidence.scanned_or_raise(result, pump_id)
    parts = [p for p in result.extras[pump_id] if len(p)]
    if not parts:
        return pd.DataFrame({c: [] for c in names})
    return pd.concat(parts, ignore_index=True) if len(parts) > 1 else parts[0]


class _Chunks:
    """The hook of the second scan: what the onset keeps of each chunk's pieces."""

    def __init__(self, plant, pump_id, model, since, cut, eps_rules):
        self.plant, self.pump_id = plant, pump_id
        self.pump = plant.pumps[pump_id]
        self.curve = plant.curves[self.pump.curve_id]
        self.table = fluid_table(self.pump.fluid, self.pump.vapour_pressure)
        self.guidance = plant.guidance[pump_id]
        self.model, self.since, self.cut = model, since, cut
        enter, leave, self.min_h, self.bridge_h = eps_rules
        ep._check_thresholds(enter, leave, self.min_h, self.bridge_h)
        self.stream = ep.EpisodeStream(enter, leave, self.bridge_h * NS_PER_HOUR)
        self.sums: list[pd.DataFrame] = []
        self.resid: list[pd.Series] = []
        self.shares: list[pd.DataFrame] = []
        self.known = False

    def __call__(self, _plant, result) -> None:
        s = result.series
        self.known |= bool(known_pieces(s).any())
        pump = self.pump
        shares, grouped = evidence.driver_sums(self.plant, pump, self.curve, self.table, s,
                                           np.zeros(len(s), dtype=bool), self.model)  # fmt: skip
        self.sums.append(grouped)
        resid = s["npsha_m"].to_numpy(np.float64) - expected_npsha(
            s, pump, self.curve, self.table, self.model
        )
        daily = evidence.daily_residual(self.plant, s, resid, self.since, self.cut)
        if len(daily):
            self.resid.append(daily)
        t = s["time"].astype("int64").to_numpy()
        guide = self.guidance.head(s["npsh3_m"].to_numpy(dtype=np.float64))
        with np.errstate(invalid="ignore", divide="ignore"):
            ratio = s["npsha_m"].to_numpy(dtype=np.float64) / guide
        t, h, r = ep._checked_arrays(t, s["hours"].to_numpy(), ratio)
        self.stream.feed(t, h, r)
        self.shares.append(shares[self._in_episodes(shares["time"].astype("int64").to_numpy())])

    def _in_episodes(self, t: np.ndarray) -> np.ndarray:
        """Pieces that may lie in an episode: inside a raw episode or less than the bridging
        gap after its end (bridged episodes take in their gaps), or in the open one."""
        gap = self.bridge_h * NS_PER_HOUR
        spans = [(e[0], e[1] + gap) for e in self.stream.raw]
        if self.stream.current is not None:
            spans.append((self.stream.current[0], np.inf))
        keep = np.zeros(len(t), dtype=bool)
        first = t[0] if len(t) else 0
        for a, b in spans:
            if b <= first:
                continue
            keep[np.searchsorted(t, a) : np.searchsorted(t, b)] = True
        return keep

    def results(self):
        names = drivers_for(self.pump)
        eps = self.stream.table(self.min_h, self.bridge_h)
        shares = pd.concat(self.shares, ignore_index=True)
        eps = evidence.episode_drivers(eps, shares, names)
        grouped = pd.concat(self.sums) if len(self.sums) > 1 else self.sums[0]
        drivers = evidence.drivers_of(grouped, names)
        resid = pd.concat(self.resid) if len(self.resid) > 1 else self.resid[0]
        return eps, drivers, resid


def investigate_in_chunks(plant, pump_id: str, win, baseline, since, cut, eps_rules):
    """The scan of the window and what :func:`screening.onset.evidence.whole_series` gives,
    built chunk by chunk (see the module's docstring)."""

    rows = _baseline_rows(plant, pump_id, win, baseline)
    every = np.ones(len(rows), dtype=bool)
    known = known_pieces(rows)
    if not known.any():
        evidence.baseline_pieces(rows, pump_id, *baseline)  # raises, saying so
    model = fit_baseline(rows, plant.pumps[pump_id], every)
    notes = evidence.baseline_notes(rows, known) + ([model.note] if model.note else [])
    del rows
    hook = _Chunks(plant, pump_id, model, since, cut, eps_rules)
    result = scan(plant, win[0], win[1], pumps=[pump_id], each_chunk=hook)
    evidence.scanned_or_raise(result, pump_id)
    if not hook.known:
        hours = result.hours[(result.hours["pump_id"] == pump_id)]
        evidence.check_has_data(_as_series(hours), pump_id, result.start, result.end)
    eps, drivers, resid = hook.results()
    return result, {"episodes": eps, "drivers": drivers, "notes": notes, "resid": resid}


def _as_series(hours: pd.DataFrame) -> pd.DataFrame:
    """The scan's margin hours of one pump as a tiny series (for the no-data message)."""
    if "kind" in hours.columns:
        hours = hours[hours["kind"] == "margin"]
    return pd.DataFrame({"state": hours["state"].astype(str), "hours": hours["hours"]})
