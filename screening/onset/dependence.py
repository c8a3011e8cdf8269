"""A change test valid for days that depend on each other: regression with AR(1) errors.

Plant days are not independent: weather, campaigns and slow control loops make a day look like
the day before. The textbook test n·ln(SSE0/SSE1) > 2·ln(n) assumes independent days; on a
series whose lag-one correlation is 0.5 it calls a wander a step far more often than the 4 % it
promises (nearly always at 0.8). Here each candidate model (one mean; a step at day k; a hinge
at day k) is fitted with AR(1) errors,

    y_t = x_tᵀβ + u_t,   u_t = φ·u_{t−1} + e_t,   e_t ~ N(0, σ²),

by conditional least squares (the first day conditioned on): the Cochrane–Orcutt iteration
(D. Cochrane & G. H. Orcutt (1949), J. Amer. Statist. Assoc. 44:32-61) of (i) β by ordinary
least squares on the prewhitened series y_t − φ·y_{t−1} against x_t − φ·x_{t−1}, (ii) φ by least
squares on the residuals, from φ = 0, a fixed number of rounds. Models are then compared by the
Gaussian likelihood of the innovations, (n − 1)·ln(σ̂0²/σ̂1²), with the same 2·ln(n) penalty as
before: the comparison of mean, change-point and trend models each with AR(1) errors by an
information criterion of C. Beaulieu & R. Killick (2018), "Distinguishing trends and shifts
from memory in climate data", J. Climate 31:9519-9543 (their R package EnvCpt). A wander of
correlated noise is then explained by φ in both models and no longer by the step.

With φ estimated from a year of days, that statistic still exceeds 2·ln(n) on strongly
correlated noise more often than on independent days (about 9 % at φ = 0.8 in
``benchmarks/bench_onset_false_alarms.py``). A change is therefore also checked by a parametric
Monte Carlo test (J.-M. Dufour (2006), "Monte Carlo tests with nuisance parameters", J.
Econometrics 133:443-477, cited from memory): ``MC_DRAWS`` = 19 series of AR(1) noise with the
one-mean model's φ are drawn with the caller's fixed random state and put through the same
search; the change is accepted only when its statistic is larger than every one of them (a
5 % test: rank 20 of 20 under the null). The draws' random state is the caller's combined with
a checksum of the series (:func:`null_rng`): the same series always gets the same answer, and
different series different draws, so that the 5 % holds over many series rather than resting
on one fixed set of 19 draws.

Days without a value are left out and the next observed day is treated as adjacent (a gap
weakens the AR(1) link a little; the test stays on the safe side for gaps of a few days).
"""

from __future__ import annotations

import zlib

import numpy as np

#: Cochrane–Orcutt rounds; the estimate of φ settles to 1e-4 within four on daily plant series.
ROUNDS = 4
#: Simulated null series of the Monte Carlo test: exceeding all 19 is a 5 % test.
MC_DRAWS = 19
#: φ is kept inside ±PHI_LIMIT: at 1 the mean is not identified (a random walk).
PHI_LIMIT = 0.98


def _phi(resid: np.ndarray) -> np.ndarray:
    """Least-squares lag-one coefficient of each column of residuals [-], kept in ±PHI_LIMIT."""
    num = np.einsum("ij,ij->j", resid[1:], resid[:-1])
    den = np.einsum("ij,ij->j", resid[:-1], resid[:-1])
    with np.errstate(invalid="ignore", divide="ignore"):
        phi = np.where(den > 0, num / den, 0.0)
    return np.clip(phi, -PHI_LIMIT, PHI_LIMIT)


def _fit(y: np.ndarray, x: np.ndarray | None, phi: np.ndarray):
    """β of y = a + b·x (columns of x, one model each) on the series prewhitened with φ.

    Returns the innovations' squared error, a and b (each one value per model).
    """
    ys = y[1:, None] - phi[None, :] * y[:-1, None]  # (n-1, K)
    one = 1.0 - phi  # the intercept column after prewhitening is constant: (1 - φ)
    if x is None:
        a_star = ys.mean(axis=0)
        sse = np.einsum("ij,ij->j", ys - a_star, ys - a_star)
        return sse, a_star / one, np.zeros_like(phi)
    xs = x[1:] - phi[None, :] * x[:-1]
    xc = xs - xs.mean(axis=0)
    yc = ys - ys.mean(axis=0)
    sxx = np.einsum("ij,ij->j", xc, xc)
    with np.errstate(invalid="ignore", divide="ignore"):
        b = np.where(sxx > 0, np.einsum("ij,ij->j", xc, yc) / sxx, 0.0)
    sse = np.maximum(np.einsum("ij,ij->j", yc, yc) - b * b * sxx, 0.0)
    a = (ys.mean(axis=0) - b * xs.mean(axis=0)) / one
    return sse, a, b


def ar1_fits(y: np.ndarray, x: np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
    """Conditional least-squares fits of y = a + b·x_k + AR(1) errors for every column x_k.

    Parameters
    ----------
    y : numpy.ndarray, shape (n,)
        The daily series [any unit].
    x : numpy.ndarray, shape (n, K), or None
        One regressor per candidate model (a step's indicator, a hinge's max(0, t − t_k)
        [days]); None for the mean alone (one model).

    Returns
    -------
    (sse, phi)
        The innovations' squared error [unit²] and the AR(1) coefficient [-] of each model.
        Cochrane & Orcutt (1949) iteration, see the module docstring.
    """
    y = np.asarray(y, dtype=np.float64)
    k = 1 if x is None else x.shape[1]
    phi = np.zeros(k)
    for _ in range(ROUNDS):
        sse, a, b = _fit(y, x, phi)
        fitted = a[None, :] + (0.0 if x is None else b[None, :] * x)
        phi = _phi(y[:, None] - fitted)
    sse, _, _ = _fit(y, x, phi)
    return sse, phi


def ar1_statistic(y: np.ndarray, x: np.ndarray) -> tuple[float, float, float]:
    """Likelihood-ratio statistic of the best of K candidate changes against one mean, both
    with AR(1) errors: (n − 1)·ln(σ̂0²/σ̂1²) maximised over the candidates [-].

    Parameters
    ----------
    y : numpy.ndarray, shape (n,)
        The daily series [any unit].
    x : numpy.ndarray, shape (n, K)
        The candidates' regressors (see :func:`ar1_fits`).

    Returns
    -------
    (statistic, phi0, phi1)
        The statistic [-], the lag-one coefficient of the one-mean model and that of the best
        candidate [-]. Gaussian conditional likelihood; Beaulieu & Killick (2018).
    """
    sse0, phi0 = ar1_fits(y, None)
    sse1, phi1 = ar1_fits(y, x)
    j = int(np.argmin(sse1))
    m = len(y) - 1
    if sse1[j] <= 0.0:
        return float("inf"), float(phi0[0]), float(phi1[j])
    return float(m * np.log(sse0[0] / sse1[j])), float(phi0[0]), float(phi1[j])


def step_regressors(n: int, ks: np.ndarray) -> np.ndarray:
    """Indicators 1{t >= k} [-] of a step at each index k, shape (n, K)."""
    return (np.arange(n)[:, None] >= np.asarray(ks)[None, :]).astype(np.float64)


def hinge_regressors(t: np.ndarray, ks: np.ndarray) -> np.ndarray:
    """max(0, t − t_k) [days] of a hinge at each index k, shape (n, K)."""
    return np.maximum(0.0, t[:, None] - t[np.asarray(ks)][None, :])


def null_rng(random_state: int, y: np.ndarray) -> np.random.Generator:
    """The Monte Carlo draws' generator: the caller's state and the series' CRC-32 checksum."""
    data = np.ascontiguousarray(np.asarray(y, dtype=np.float64)).tobytes()
    return np.random.default_rng([int(random_state), zlib.crc32(data)])


def ar1_noise(n: int, phi: float, draws: int, rng: np.random.Generator) -> np.ndarray:
    """``draws`` series of stationary AR(1) noise of length n with unit innovations, (draws, n)."""
    e = rng.standard_normal((draws, n))
    x = np.empty((draws, n))
    x[:, 0] = e[:, 0] / np.sqrt(1.0 - phi * phi)
    for i in range(1, n):
        x[:, i] = phi * x[:, i - 1] + e[:, i]
    return x


def monte_carlo_p(
    stat: float, phi0: float, x: np.ndarray, rng: np.random.Generator, draws: int = MC_DRAWS
) -> float:
    """Monte Carlo p-value of a statistic of :func:`ar1_statistic` under AR(1) noise [-].

    Parameters
    ----------
    stat : float
        The observed statistic [-].
    phi0 : float
        Lag-one coefficient of the one-mean fit [-]: the null model's.
    x : numpy.ndarray, shape (n, K)
        The candidates' regressors, as given to :func:`ar1_statistic`.
    rng : numpy.random.Generator
        Fixed random state (a result must be reproducible).
    draws : int
        Simulated series (19: the smallest p-value is 1/20).

    Returns
    -------
    float
        (1 + number of simulated statistics >= stat) / (draws + 1); Dufour (2006).
    """
    sims = ar1_noise(x.shape[0], phi0, draws, rng)
    larger = sum(ar1_statistic(s, x)[0] >= stat for s in sims)
    return (1 + larger) / (draws + 1)
