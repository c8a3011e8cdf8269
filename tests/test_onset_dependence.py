"""The change tests on days that depend on each other (AR(1) noise), invented series with fixed
random states. The fits are checked against scipy's general-purpose minimiser of the same
conditional Gaussian likelihood; the rates over many series are measured in
benchmarks/bench_onset_false_alarms.py (README), here only a few series each."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy.optimize import minimize

from screening.onset import dependence as dep
from screening.onset.changepoint import _single_split, _sse, estimate_onset, estimate_ramp_onset

DAYS = pd.date_range("2026-01-01", periods=365, freq="D")


def ar1(phi: float, sd: float, state: int, n: int = 365) -> np.ndarray:
    """Stationary AR(1) noise with marginal standard deviation sd [m] (invented)."""
    rng = np.random.default_rng(state)
    e = rng.normal(0.0, sd * math.sqrt(1 - phi**2), n)
    x = np.empty(n)
    x[0] = rng.normal(0.0, sd)
    for i in range(1, n):
        x[i] = phi * x[i - 1] + e[i]
    return x


def test_cochrane_orcutt_reaches_the_conditional_least_squares_minimum():
    # Reference: scipy.optimize.minimize (Nelder-Mead) of the conditional sum of squared
    # innovations sum_t (y_t - a - b x_t - phi (y_{t-1} - a - b x_{t-1}))^2 over (a, b, phi),
    # which is what the Cochrane-Orcutt iteration converges to. The iteration must get within
    # 0.1 % of that minimum and the same phi to 0.01.
    y = 3.0 - 0.5 * (np.arange(365) >= 200) + ar1(0.7, 0.2, state=3)
    x = dep.step_regressors(365, np.array([200]))

    def css(p):
        u = y - p[0] - p[1] * x[:, 0]
        return float(np.sum((u[1:] - p[2] * u[:-1]) ** 2))

    best = minimize(css, [3.0, 0.0, 0.5], method="Nelder-Mead",
                    options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 20000})  # fmt: skip
    sse, phi = dep.ar1_fits(y, x)
    assert sse[0] == pytest.approx(best.fun, rel=1e-3)
    assert phi[0] == pytest.approx(best.x[2], abs=0.01)
    # with phi = 0 the statistic is the independent-days one, n*ln(SSE0/SSE1) (n - 1 here)
    y0 = 3.0 - 0.5 * (np.arange(365) >= 200) + np.random.default_rng(4).normal(0, 0.2, 365)
    s0 = dep._fit(y0, None, np.zeros(1))[0]
    s1 = dep._fit(y0, x, np.zeros(1))[0]
    assert float(s1[0]) == pytest.approx(_sse(y0[1:][:199]) + _sse(y0[200:]), rel=1e-9)
    assert float(s0[0]) == pytest.approx(_sse(y0[1:]), rel=1e-9)


@pytest.mark.parametrize("phi", [0.5, 0.8])
def test_correlated_noise_is_not_taken_for_a_step_or_a_ramp(phi):
    # Twelve series of pure AR(1) noise (fixed states). The independent-days test accepts a
    # step on most of them at phi 0.8 (and on several at 0.5); the AR(1) test on at most one.
    naive, steps, ramps = 0, 0, 0
    for s in range(12):
        y = 3.0 + ar1(phi, 0.2, state=500 + s)
        k = _single_split(y, 5)
        naive += 365 * math.log(_sse(y) / (_sse(y[:k]) + _sse(y[k:]))) > 2 * math.log(365)
        steps += estimate_onset(DAYS, y, n_bootstrap=1)["onset"] is not None
        ramps += estimate_ramp_onset(DAYS, y, n_bootstrap=1)["onset"] is not None
    assert steps <= 1 and ramps <= 1
    assert naive >= (8 if phi == 0.8 else 3)


@pytest.mark.parametrize("phi", [0.0, 0.8])
def test_a_planted_half_metre_step_and_a_ramp_are_still_found(phi):
    t = np.arange(365.0)
    for s in range(4):
        noise = ar1(phi, 0.2, state=900 + s)
        step = estimate_onset(DAYS, 3.0 - 0.5 * (t >= 200) + noise, n_bootstrap=20)
        assert step["onset"] is not None
        assert abs((step["onset"] - DAYS[200]).days) <= 14
        assert step["interval"][0] <= step["onset"] <= step["interval"][1]
        ramp = estimate_ramp_onset(DAYS, 3.0 - 0.01 * np.maximum(0, t - 245) + noise,
                                   n_bootstrap=20)  # fmt: skip
        assert ramp["onset"] is not None and ramp["slope"] < 0
        assert abs((ramp["onset"] - DAYS[245]).days) <= 30


def test_the_monte_carlo_check_is_reproducible_and_differs_between_series():
    y = 3.0 + ar1(0.8, 0.2, state=7)
    assert estimate_onset(DAYS, y, n_bootstrap=5) == estimate_onset(DAYS, y, n_bootstrap=5)
    a = dep.null_rng(0, y).standard_normal(3)
    b = dep.null_rng(0, y + 1e-9).standard_normal(3)
    assert not np.array_equal(a, b)
    with pytest.raises(ValueError, match="null_draws must be a whole number >= 19"):
        estimate_onset(DAYS, y, null_draws=5)
    res = estimate_onset(DAYS, y)
    assert res["phi_null"] == pytest.approx(0.8, abs=0.1)  # the noise's own lag-one correlation
