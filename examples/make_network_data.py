#!/usr/bin/env python3
"""Makes the invented logger exports of the demo network (examples/network/).

DEMO DATA: invented for flumerate's example scenario; no real site or record. Seeded, so the
files are the same on every run. Standard library only.
"""
import math
import random
from datetime import datetime, timedelta


def write(path, header, rows):
    with open(path, "w", encoding="utf-8", newline="\n") as f:
        f.write(header + "\n")
        for r in rows:
            f.write(r + "\n")


def outfall(seed=20261202):
    """The works' outfall V-notch: a daily effluent cycle, 15-minute stage (m above the logger's zero)."""
    rnd = random.Random(seed)
    t0 = datetime(2026, 10, 1)
    rows = []
    for k in range(31 * 96):
        t = t0 + timedelta(minutes=15 * k)
        hour = t.hour + t.minute / 60
        head = 0.11 + 0.045 * math.sin(2 * math.pi * (hour - 9) / 24) + rnd.gauss(0, 0.0015)
        rows.append(f"{t:%Y-%m-%d %H:%M},{0.500 + head:.4f}")
    write("examples/network/mill-lane-outfall-logger.csv", "time,stage_m", rows)


def lateral(seed=20261203):
    """The Kestrel lateral: turnout deliveries, 15-minute stage. Exported by a logger whose
    column is named differently from the station file's (the broken station of the demo)."""
    rnd = random.Random(seed)
    t0 = datetime(2026, 10, 1)
    rows = []
    for k in range(31 * 96):
        t = t0 + timedelta(minutes=15 * k)
        day = (t - t0).days
        on = 6 <= t.hour < 20 and day % 3 != 2
        head = (0.32 if on else 0.06) + rnd.gauss(0, 0.002)
        rows.append(f"{t:%Y-%m-%d %H:%M},{head:.4f}")
    write("examples/network/kestrel-lateral-logger.csv", "time,level_m", rows)


if __name__ == "__main__":
    outfall()
    lateral()
