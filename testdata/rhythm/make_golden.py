#!/usr/bin/env python3
"""Reference values for profile.RhythmOf (nonparametric rest-activity measures, Van Someren et
al. 1999; IS and IV after Witting et al. 1990), computed with numpy from the definitions, on a
synthetic series (invented here, no real recording): five days of one-minute activity with a
daily rhythm and noise, one three-hour gap and some missing windows.

Run with Debian's python3-numpy: /usr/bin/python3 testdata/rhythm/make_golden.py
It writes series.csv (start time in Unix ns, activity; empty for a missing window) and golden.json.
"""
import json
import os

import numpy as np

here = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(30)
t0 = 1772409600 * 10**9  # 2026-03-02T00:00:00Z
minutes = np.arange(5 * 24 * 60)
times = t0 + minutes.astype(np.int64) * 60 * 10**9
hour_of_day = (minutes // 60) % 24
level = np.where((hour_of_day >= 23) | (hour_of_day < 7), 5.0, 200.0 + 150.0 * np.sin((hour_of_day - 7) / 16 * np.pi))
activity = np.maximum(0, level + rng.normal(0, 40, size=minutes.size))
keep = np.ones(minutes.size, bool)
keep[(minutes >= 2 * 1440 + 600) & (minutes < 2 * 1440 + 780)] = False  # a three-hour gap
missing = rng.random(minutes.size) < 0.01
times, activity, missing = times[keep], activity[keep], missing[keep]
activity = np.round(activity, 3)

with open(os.path.join(here, "series.csv"), "w") as f:
    f.write("time_ns,activity\n")
    for t, a, m in zip(times, activity, missing):
        f.write(f"{t},{'' if m else repr(float(a))}\n")

# Hourly means by clock hour, over the windows present.
ok = ~missing
hours = times[ok] // (3600 * 10**9)
vals = activity[ok]
uniq = np.unique(hours)
x = np.array([vals[hours == h].mean() for h in uniq])
n = len(x)
mean = x.mean()
hod = uniq % 24
profile = np.array([x[hod == h].mean() for h in range(24)])
IS = n * np.sum((profile - mean) ** 2) / (24 * np.sum((x - mean) ** 2))
adjacent = np.diff(uniq) == 1
IV = n * np.sum(np.diff(x)[adjacent] ** 2) / (adjacent.sum() * np.sum((x - mean) ** 2))
l5 = [np.mean(profile[[(s + k) % 24 for k in range(5)]]) for s in range(24)]
m10 = [np.mean(profile[[(s + k) % 24 for k in range(10)]]) for s in range(24)]
L5, M10 = min(l5), max(m10)
golden = {"IS": IS, "IV": IV, "L5": L5, "M10": M10, "RA": (M10 - L5) / (M10 + L5),
          "L5Onset": int(np.argmin(l5)), "M10Onset": int(np.argmax(m10)), "Hours": int(n)}
with open(os.path.join(here, "golden.json"), "w") as f:
    json.dump({k: float(v) if isinstance(v, (float, np.floating)) else v for k, v in golden.items()}, f, indent=1)
print(golden)
