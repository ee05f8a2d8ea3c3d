#!/usr/bin/env python3
"""The comparison for `flumerate convert`: a plain pandas + numpy script doing the same job on
the same file - read, parse times, head = stage - zero, discharge and 95 % band by linear
interpolation in a rating table, flags, write the series.

usage: pandas_convert.py LOGGER.csv RATING.csv OUT.(csv|parquet)
RATING.csv is `flumerate rate benches/convert/bench-station.toml --from 0.0005 --to 0.825
--step 0.0005 --format csv` (discharge and u95_pct every 0.5 mm).
"""
import sys
import time

import numpy as np
import pandas as pd

t = time.time()
logger, rating, out = sys.argv[1:4]
ZERO, MIN_HEAD, MAX_HEAD = 0.100, 0.07, 0.55
table = pd.read_csv(rating)
h_tab = np.concatenate([[0.0], table["head_m"].to_numpy()])
q_tab = np.concatenate([[0.0], table["discharge_m3s"].to_numpy()])
u_tab = np.concatenate([[0.0], table["u95_pct"].to_numpy()])

df = pd.read_csv(logger, na_values=["-9999"])
df["time"] = pd.to_datetime(df["time"], format="%Y-%m-%d %H:%M", errors="coerce").dt.tz_localize("Etc/GMT-1")
stage = pd.to_numeric(df["stage"], errors="coerce").to_numpy()
head = stage - ZERO
q = np.interp(head, h_tab, q_tab)
u = np.interp(head, h_tab, u_tab) / 100.0
q = np.where(head <= 0, 0.0, q)
df["stage_m"] = stage
df["head_m"] = head
df["discharge_m3s"] = np.where(np.isnan(head), np.nan, q)
df["discharge_low_m3s"] = df["discharge_m3s"] * (1 - u)
df["discharge_high_m3s"] = df["discharge_m3s"] * (1 + u)
df["flag"] = np.select(
    [df["time"].isna().to_numpy() | np.isnan(head), head > MAX_HEAD, (head > 0) & (head < MIN_HEAD), head <= 0],
    ["missing", "above-range", "below-range", "dry"],
    default="ok",
)
df = df.drop(columns=["stage"])
if out.endswith(".parquet"):
    df.to_parquet(out)
else:
    df.to_csv(out, index=False)
print(f"pandas convert {len(df)} rows in {time.time() - t:.3f} s", file=sys.stderr)
