"""Vibration against NPSH margin: its time-weighted distribution per band of margin ratio and
whether it rises as the margin falls (a weighted least-squares slope with a block-bootstrap
5-95 % interval). Pure functions of numpy arrays; vibration in SI velocity [m/s].

Cavitation noise and vibration often rise well above NPSH3 (cavitation begins above it), so
a rise is evidence to look at, not a diagnosis: unbalance, misalignment, bearing wear and flow
recirculation raise vibration too.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from screening.engine.field_fit import block_bootstrap_counts, weighted_quantile

#: Bands of margin ratio NPSHa/NPSH3 [-] for the distribution (our choice: below NPSH3, the
#: usual guidance ratios, and the default ample ratio of 2).
RATIO_BANDS = (0.0, 1.0, 1.2, 1.5, 2.0, np.inf)
#: The trend uses ratios up to this [-]: far above NPSH3 the margin no longer matters.
TREND_RATIO_MAX = 3.0
#: Hours and spread of margin ratio a trend needs [h], [-] (our choice).
MIN_TREND_HOURS = 12.0
MIN_TREND_SPREAD = 0.2
REPLICATES = 400
RANDOM_STATE = 20261002
VIBRATION_COLUMNS = [
    "pump_id", "ratio_low", "ratio_high", "hours", "p05_m_s", "p25_m_s", "median_m_s",
    "p75_m_s", "p95_m_s",
]  # fmt: skip


def _slopes(stats: np.ndarray) -> np.ndarray:
    """Weighted least-squares slopes from rows of sums (w, w·x, w·y, w·x², w·x·y)."""
    w, wx, wy, wxx, wxy = (stats[..., i] for i in range(5))
    with np.errstate(divide="ignore", invalid="ignore"):
        return (w * wxy - wx * wy) / (w * wxx - wx * wx)


def by_margin(pid: str, vib, sigma, w, blocks) -> tuple[pd.DataFrame, dict]:
    """Vibration per band of margin ratio and its trend.

    Parameters
    ----------
    pid : str
        Pump id.
    vib : numpy.ndarray
        Vibration velocity [m/s] per piece.
    sigma : numpy.ndarray
        Margin ratio NPSHa/NPSH3 [-] per piece.
    w : numpy.ndarray
        Hours of each piece [h] (zero where the pump was not running in a band or the tag was
        stale or bad).
    blocks : numpy.ndarray
        Clock hour of each piece [h since the epoch], for the bootstrap's blocks.

    Returns
    -------
    (bands, trend)
        The table (:data:`VIBRATION_COLUMNS`) and the trend: ``slope_m_s`` [m/s per unit of
        margin ratio] by weighted least squares on ratios up to 3, ``p05``/``p95`` from a
        moving-block bootstrap (Künsch 1989), hours, the margin ratios' 5-95 % spread and a
        verdict (rises as the margin falls when the whole interval is below zero).
    """
    ok = (w > 0) & np.isfinite(vib) & np.isfinite(sigma)
    v, s, h, b = vib[ok], sigma[ok], w[ok], blocks[ok]
    rows = []
    for lo, hi in zip(RATIO_BANDS[:-1], RATIO_BANDS[1:], strict=True):
        m = (s >= lo) & (s < hi)
        q = weighted_quantile(v[m], h[m], [0.05, 0.25, 0.5, 0.75, 0.95])
        rows.append([pid, lo, hi, float(h[m].sum()), *map(float, q)])
    bands = pd.DataFrame(rows, columns=VIBRATION_COLUMNS)
    trend = {"hours": float(h.sum()), "slope_m_s": np.nan, "p05": np.nan, "p95": np.nan,
             "ratio_spread": np.nan, "verdict": "no vibration data while running"}  # fmt: skip
    if not h.size:
        return bands, trend
    x = np.minimum(s, TREND_RATIO_MAX)
    lo5, hi95 = weighted_quantile(x, h, [0.05, 0.95])
    trend["ratio_spread"] = float(hi95 - lo5)
    if trend["hours"] < MIN_TREND_HOURS or trend["ratio_spread"] < MIN_TREND_SPREAD:
        trend["verdict"] = "too little running time or spread of margin to tell"
        return bands, trend
    size = max(1, int(round(trend["hours"] ** (1.0 / 3.0))))  # n^(1/3) hours, Künsch 1989
    _, blk = np.unique(b // size, return_inverse=True)
    n_blocks = int(blk.max()) + 1
    parts = np.stack([h, h * x, h * v, h * x * x, h * x * v], axis=1)
    per_block = np.zeros((n_blocks, 5))
    np.add.at(per_block, blk, parts)
    trend["slope_m_s"] = float(_slopes(per_block.sum(axis=0)))
    counts = block_bootstrap_counts(n_blocks, REPLICATES, RANDOM_STATE)
    boot = _slopes(counts @ per_block)
    boot = boot[np.isfinite(boot)]
    if boot.size:
        trend["p05"], trend["p95"] = (float(p) for p in np.percentile(boot, [5, 95]))
    if trend["p95"] < 0:
        trend["verdict"] = "rises as the margin falls"
    elif trend["p05"] > 0:
        trend["verdict"] = "falls as the margin falls"
    else:
        trend["verdict"] = "no clear trend with the margin"
    return bands, trend
