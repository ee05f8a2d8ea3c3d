#!/usr/bin/env python3
"""Writes examples/ridgeway-gaugings.csv: invented field gaugings of the Ridgeway canal flume
(demo scenario, examples/README.md). DEMO DATA, INVENTED.

The flume is made to read like a real one that has settled a little: the true discharge is
0.975 x the rating from the dimensions at a head 4 mm higher than the gauge shows (the gauge zero
reads 4 mm low), plus gauging noise of the stated uncertainty. The rating comes from
`flumerate rate ... --format csv` at 1 mm steps (linear interpolation between them).

usage: python3 examples/make_gaugings.py RATING.csv   (RATING.csv from the command below)
  flumerate rate ratings/ridgeway-canal-flume.toml --format csv --from 0.05 --to 0.60 --step 0.001 -o RATING.csv
"""
import csv
import random
import sys

FACTOR, ZERO_M = 0.975, 0.004
rows = list(csv.DictReader(open(sys.argv[1])))
heads = [float(r["head_m"]) for r in rows]
q = [float(r["discharge_m3s"]) for r in rows]


def rating(h):
    k = min(max(int((h - heads[0]) / 0.001), 0), len(heads) - 2)
    t = (h - heads[k]) / (heads[k + 1] - heads[k])
    return q[k] + t * (q[k + 1] - q[k])


rng = random.Random(20261202)
# (date, gauged head m, method, u95 %): two seasons of visits, low to high flows
visits = [
    ("2025-03-12T10:20:00+01:00", 0.112, "current-meter", None),
    ("2025-04-09T09:45:00+02:00", 0.184, "current-meter", None),
    ("2025-05-21T11:05:00+02:00", 0.297, "adcp", None),
    ("2025-06-18T08:50:00+02:00", 0.351, "adcp", None),
    ("2025-07-16T10:10:00+02:00", 0.243, "current-meter", None),
    ("2025-09-03T09:30:00+02:00", 0.148, "volumetric", None),
    ("2025-10-15T10:40:00+02:00", 0.402, "adcp", None),
    ("2026-02-25T11:15:00+01:00", 0.476, "adcp", None),
    ("2026-04-08T09:55:00+02:00", 0.221, "current-meter", 4.0),
    ("2026-05-20T10:35:00+02:00", 0.328, "current-meter", None),
    ("2026-07-01T09:20:00+02:00", 0.091, "volumetric", None),
    ("2026-09-16T10:05:00+02:00", 0.517, "adcp", None),
]
U95 = {"current-meter": 5.0, "adcp": 5.0, "volumetric": 2.0}
with open("examples/ridgeway-gaugings.csv", "w", newline="") as f:
    w = csv.writer(f)
    w.writerow(["time", "head_m", "discharge_m3s", "u95_pct", "method", "note"])
    for time, h, method, u in visits:
        u95 = u if u is not None else U95[method]
        true_q = FACTOR * rating(h + ZERO_M)
        gauged = true_q * (1.0 + rng.gauss(0.0, u95 / 200.0))
        w.writerow([time, f"{h:.3f}", f"{gauged:.5f}", "" if u is None else u, method, "demo, invented"])
print("wrote examples/ridgeway-gaugings.csv")
