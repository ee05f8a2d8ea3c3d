#!/usr/bin/env python3
"""Writes a long synthetic logger export for the conversion benchmark (invented data).

usage: make_logger.py ROWS OUT.csv      (10 000 000 rows ≈ 19 years of 1-minute readings)

Columns `time,stage`; local standard time (the benchmark station uses +01:00); stage in metres
around the demo canal flume's working range, with a daily rhythm and noise. Deterministic.
"""
import math
import random
import sys
from datetime import datetime, timedelta

rows = int(sys.argv[1])
out = sys.argv[2]
random.seed(1)
t0 = datetime(2007, 1, 1)
with open(out, "w") as f:
    f.write("time,stage\n")
    day = None
    buf = []
    for k in range(rows):
        if k % 1440 == 0:
            day = t0 + timedelta(days=k // 1440)
            prefix = day.strftime("%Y-%m-%d ")
        m = k % 1440
        stage = 0.35 + 0.12 * math.sin(2 * math.pi * m / 1440.0) + 0.1 * math.sin(k / 52000.0) + random.random() * 0.004
        buf.append(f"{prefix}{m // 60:02d}:{m % 60:02d},{stage:.4f}\n")
        if len(buf) >= 100000:
            f.write("".join(buf))
            buf = []
    f.write("".join(buf))
