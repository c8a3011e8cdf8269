"""Writes exports/2026-10-week1.csv: a week of invented 10-minute data of the example pump
P-101 (suction pressure with a few hours' dip, temperature, flow, run status), fixed random
state. Run from this folder: python make_example_export.py"""

import numpy as np
import pandas as pd

t = pd.date_range("2026-10-01 00:00", "2026-10-07 23:50", freq="10min")
i = np.arange(len(t))
day = 2 * np.pi * i / 144
rng = np.random.default_rng(7)
ps = -50 + 8 * np.sin(day) + rng.normal(0, 0.5, len(t))  # kPa gauge
ps[(i > 600) & (i < 640)] -= 32  # a few hours of low suction pressure
tt = 24 + 4 * np.sin(day - 1) + rng.normal(0, 0.2, len(t))  # degC
ft = 300 + 40 * np.sin(day + 0.5) + rng.normal(0, 3, len(t))  # m3/h
run = np.ones(len(t), int)
run[200:230] = 0
ft[200:230] = 0
frame = pd.DataFrame({
    "timestamp": t.strftime("%Y-%m-%d %H:%M"), "P101.PS": ps.round(2), "P101.TT": tt.round(2),
    "P101.FT": ft.round(1), "P101.RUN": run,
})  # fmt: skip
frame.to_csv("exports/2026-10-week1.csv", index=False)
