"""The fits behind the field evidence: a robust head-flow baseline, a broken-stick fit of head
ratio against margin ratio with its 3 % drop point, a moving-block bootstrap, and
time-weighted quantiles. Pure functions of numpy arrays; weights are hours.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Huber's tuning constant [-] (95 % efficiency at the normal distribution; Huber 1964,
#: "Robust estimation of a location parameter", Ann. Math. Stat. 35, 73-101).
HUBER_K = 1.345
#: The head drop that defines NPSH3 [-] (ANSI/HI 1.6; ISO 9906:2012 §3.2).
HEAD_DROP = 0.03


@dataclass(frozen=True)
class Baseline:
    """A head-flow baseline H(x) = c0 + c1·x + c2·x² [m] in x = Q/Q_BEP [-] at rated speed,
    valid for x in [x_low, x_high] (never extrapolated); ``scale`` [m] is the robust spread of
    the fitted samples about it (1.4826·MAD)."""

    coef: tuple[float, ...]
    x_low: float
    x_high: float
    scale: float
    hours: float

    def at(self, x) -> np.ndarray:
        """Baseline head [m] at flow fractions ``x`` [-]; NaN outside [x_low, x_high]."""
        x = np.asarray(x, dtype=np.float64)
        h = np.polynomial.polynomial.polyval(x, np.asarray(self.coef))
        with np.errstate(invalid="ignore"):
            return np.where((x >= self.x_low) & (x <= self.x_high), h, np.nan)


def weighted_quantile(values, weights, q) -> np.ndarray:
    """Time-weighted quantiles [units of ``values``] at probabilities ``q`` [-]: the inverse of
    the weighted empirical distribution at the mid-points of each sample's weight (the
    Hazen-type plotting position, Hyndman and Fan 1996, definition 5, with weights)."""
    v = np.asarray(values, dtype=np.float64)
    w = np.asarray(weights, dtype=np.float64)
    if v.size == 0 or w.sum() <= 0:
        return np.full(np.shape(q), np.nan)
    order = np.argsort(v, kind="stable")
    v, w = v[order], w[order]
    cum = (np.cumsum(w) - 0.5 * w) / w.sum()
    return np.interp(q, cum, v)


def huber_polyfit(x, y, w, degree: int, iterations: int = 30) -> tuple[np.ndarray, float]:
    """Polynomial coefficients (lowest order first) and robust scale of ``y`` on ``x`` by
    iteratively reweighted least squares with Huber's weights.

    Each pass solves weighted least squares with weights w·ψ(r/s)/(r/s), ψ Huber's function
    with k = 1.345, s = 1.4826·median|r| (Huber 1964; IRLS after Holland and Welsch 1977,
    "Robust regression using iteratively reweighted least-squares", Commun. Stat. A6, 813-827).

    Parameters
    ----------
    x, y : array_like
        Flow fraction [-] and head [m].
    w : array_like
        Sample weights [h].
    degree : int
        Polynomial degree (0, 1 or 2).
    """
    x, y, w = (np.asarray(a, dtype=np.float64) for a in (x, y, w))
    design = np.vander(x, degree + 1, increasing=True)
    robust = np.ones_like(w)
    coef = np.zeros(degree + 1)
    scale = 0.0
    for _ in range(iterations):
        sw = np.sqrt(w * robust)
        new, *_ = np.linalg.lstsq(design * sw[:, None], y * sw, rcond=None)
        r = y - design @ new
        scale = 1.4826 * float(weighted_quantile(np.abs(r), w, 0.5))
        if scale <= 0:
            coef = new
            break
        u = np.abs(r) / (HUBER_K * scale)
        robust = np.where(u <= 1.0, 1.0, 1.0 / np.maximum(u, 1e-12))
        if np.allclose(new, coef, rtol=1e-9, atol=1e-9):
            coef = new
            break
        coef = new
    return coef, scale


@dataclass(frozen=True)
class StickFit:
    """A broken stick y = a + s·min(x − b, 0): flat at ``a`` above the hinge ``b`` [-],
    falling with slope ``s`` [1/unit of x] below it; the 3 % drop point ``x3`` where the line
    reaches (1 − 0.03)·a (NaN without a fall); the weighted sums of squares of the flat line
    (``sse0``) and of the stick (``sse1``)."""

    a: float
    s: float
    b: float
    x3: float
    sse0: float
    sse1: float
    n: int

    @property
    def significant(self) -> bool:
        """The stick beats the flat line by the Schwarz criterion: two more parameters (hinge,
        slope) accepted when n·ln(SSE0/SSE1) > 2·ln n (Schwarz 1978, Ann. Stat. 6, 461-464)."""
        if not (self.sse1 > 0 and self.sse0 > 0 and self.n > 3):
            return bool(self.sse1 < self.sse0 and self.n > 3)
        return self.n * np.log(self.sse0 / self.sse1) > 2.0 * np.log(self.n)


def broken_stick(x, y, w, hinges=None) -> StickFit:
    """Fit y = a + s·min(x − b, 0) with s >= 0 by weighted least squares over every hinge b in
    ``hinges`` (default: the points of ``x`` with at least two points below them); segmented
    regression by exhaustive search over the break point (Muggeo 2003, Stat. Med. 22,
    3055-3071, for the model; the exhaustive search is exact for one break).

    Parameters
    ----------
    x : array_like
        Margin ratio NPSHa/NPSH3 [-] (cell centres, sorted).
    y : array_like
        Head ratio [-] (cell means).
    w : array_like
        Hours per cell [h].
    """
    x, y, w = (np.asarray(a, dtype=np.float64) for a in (x, y, w))
    keep = w > 0
    x, y, w = x[keep], y[keep], w[keep]
    total = w.sum()
    n = int(x.size)
    if n < 4 or total <= 0:
        return StickFit(np.nan, np.nan, np.nan, np.nan, np.nan, np.nan, n)
    mean_y = float((w * y).sum() / total)
    sse0 = float((w * (y - mean_y) ** 2).sum())
    b = np.sort(x)[2:] if hinges is None else np.asarray(hinges, dtype=np.float64)
    u = np.minimum(x[None, :] - b[:, None], 0.0)  # (hinges, points)
    mu = (u * w).sum(axis=1) / total
    du = u - mu[:, None]
    var = (w * du * du).sum(axis=1)
    cov = (w * du * (y - mean_y)).sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        s = np.where(var > 0, cov / var, 0.0)
    s = np.maximum(s, 0.0)  # the head falls as the margin falls, never rises
    a = mean_y - s * mu
    sse = (w * (y - a[:, None] - s[:, None] * u) ** 2).sum(axis=1)
    best = int(np.argmin(sse))
    a1, s1, b1 = float(a[best]), float(s[best]), float(b[best])
    x3 = b1 - HEAD_DROP * a1 / s1 if s1 > 0 else np.nan
    return StickFit(a1, s1, b1, x3, sse0, float(sse[best]), n)


def block_bootstrap_counts(n_blocks: int, replicates: int, random_state: int) -> np.ndarray:
    """How often each block is drawn in each bootstrap replicate [-], shape (replicates,
    n_blocks): blocks drawn with replacement, as many as there are (the moving-block bootstrap
    with fixed, non-overlapping blocks; Künsch 1989, Ann. Stat. 17, 1217-1241; Carlstein 1986).
    A fixed random state: the same data give the same interval."""
    rng = np.random.default_rng(random_state)
    draws = rng.integers(0, n_blocks, size=(replicates, n_blocks))
    counts = np.zeros((replicates, n_blocks))
    np.add.at(counts, (np.repeat(np.arange(replicates), n_blocks), draws.ravel()), 1.0)
    return counts
