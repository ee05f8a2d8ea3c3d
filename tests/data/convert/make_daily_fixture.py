#!/usr/bin/env python3
"""Builds tests/data/convert/clean-daily-fixture.csv: the independent check of flumerate's daily
summaries. Run once (it was, with pandas 3.1.1 and numpy 2.4.6); the result is committed.

Input: the series flumerate wrote for clean.csv (`flumerate convert tests/data/convert/clean.csv
--station tests/data/convert/station.toml -o /tmp/clean-series.csv`). From it pandas, not
flumerate, groups the rows flagged ok or dry by local calendar day in Europe/Berlin and computes
the mean discharge and the volume (each row standing for the median step between readings).
"""
import sys

import numpy as np
import pandas as pd

series = pd.read_csv(sys.argv[1] if len(sys.argv) > 1 else "/tmp/clean-series.csv")
series["time"] = pd.to_datetime(series["time"], utc=True, format="ISO8601")
step_s = float(series["time"].dropna().diff().dt.total_seconds().median())
counted = series[series["flag"].isin(["ok", "dry"])].copy()
counted["date"] = counted["time"].dt.tz_convert("Europe/Berlin").dt.strftime("%Y-%m-%d")
daily = counted.groupby("date").agg(
    rows_counted=("discharge_m3s", "size"),
    mean_discharge_m3s=("discharge_m3s", "mean"),
    volume_m3=("discharge_m3s", lambda q: float(np.sum(q.to_numpy()) * step_s)),
)
daily.to_csv("tests/data/convert/clean-daily-fixture.csv", float_format="%.17g")
print(daily)
