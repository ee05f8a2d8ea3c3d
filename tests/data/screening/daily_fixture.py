#!/usr/bin/env python3
"""Daily volumes from a flumerate series output, computed independently by hand (pandas).

Part of the invented Marlow Cut flume screening fixture; all data here is invented for tests.

This is an independent check of flumerate's aggregation rules. It reads flumerate's per-row
output (`flumerate convert ... -o SERIES.csv`) and sums it into days by the rules below, so it
checks the summing, the weighting of each row by the time it stands for and the splitting at
midnight -- not the rating: the discharge of every row is taken as flumerate wrote it.

Usage:
    python3 daily_fixture.py SERIES.csv OUT.csv --interval-s 900

Columns read: `time` (ISO 8601 with an offset, e.g. 2026-04-01T00:00:00+00:00; empty = the row
has no time), `discharge_m3s` (may be empty), `flag`, `line`, `counted_line` (may be empty).

Rules:
  * instants: every row with a time, sorted by time (stable sort);
  * a row counts if its flag is ok or dry (measured), or submerged, above-range, below-range,
    beyond-limits or filled (estimated), and its counted_line is empty or equal to its line;
  * a counting row stands for min(next distinct instant - its time, interval), where the next
    distinct instant is the smallest time, among all rows with a time, strictly greater than its
    own; the last instant stands for the interval;
  * its volume Q * dt is split at UTC midnight into the days its span covers (the part after
    midnight goes to the next day or days);
  * one output row per day from the first day with a row to the last (and any later day that a
    span reaches into), with missing_h = 24 - covered_h.

A counting row with an empty discharge is reported on stderr and not counted (its time then
shows as missing). Floats are written at full precision (repr).
"""

from __future__ import annotations

import argparse
import sys
from datetime import date, timedelta

import pandas as pd

MEASURED = {"ok", "dry"}
ESTIMATED = {"submerged", "above-range", "below-range", "beyond-limits", "filled"}
NS_PER_S = 1_000_000_000
NS_PER_DAY = 86_400 * NS_PER_S


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("series", help="flumerate convert output (CSV)")
    ap.add_argument("out", help="daily volumes (CSV) to write")
    ap.add_argument("--interval-s", type=float, required=True, help="the logger's nominal interval (s)")
    args = ap.parse_args()
    interval_ns = round(args.interval_s * NS_PER_S)

    df = pd.read_csv(args.series, dtype=str, keep_default_na=False)
    for col in ("time", "discharge_m3s", "flag", "line", "counted_line"):
        if col not in df.columns:
            print(f"{args.series}: no `{col}` column", file=sys.stderr)
            return 2
    df = df[df["time"].str.strip() != ""].copy()
    # instants as integer ns since the epoch, UTC (pandas may parse at a coarser unit: force ns)
    df["t_ns"] = pd.to_datetime(df["time"], utc=True, format="ISO8601").dt.as_unit("ns").astype("int64")
    df = df.sort_values("t_ns", kind="stable").reset_index(drop=True)
    if df.empty:
        print(f"{args.series}: no row with a time", file=sys.stderr)
        return 2

    distinct = sorted(set(df["t_ns"].tolist()))
    next_after = {a: b for a, b in zip(distinct, distinct[1:])}

    first_day = df["t_ns"].iloc[0] // NS_PER_DAY
    last_day = df["t_ns"].iloc[-1] // NS_PER_DAY
    # per day index: [volume, measured, estimated, covered_s, measured_s, estimated_s]
    days: dict[int, list[float]] = {}

    def day_row(k: int) -> list[float]:
        return days.setdefault(k, [0.0, 0.0, 0.0, 0.0, 0.0, 0.0])

    empty_q = 0
    for t_ns, q_text, flag, line, counted in zip(
        df["t_ns"], df["discharge_m3s"], df["flag"], df["line"], df["counted_line"]
    ):
        flag = flag.strip()
        if flag not in MEASURED and flag not in ESTIMATED:
            continue
        counted, line = counted.strip(), line.strip()
        if counted != "" and (line == "" or int(counted) != int(line)):
            continue
        if q_text.strip() == "":
            empty_q += 1
            continue
        q = float(q_text)
        nxt = next_after.get(t_ns)
        dt_ns = interval_ns if nxt is None else min(nxt - t_ns, interval_ns)
        measured = flag in MEASURED
        start, end = t_ns, t_ns + dt_ns
        while start < end:
            k = start // NS_PER_DAY
            part_end = min(end, (k + 1) * NS_PER_DAY)
            secs = (part_end - start) / NS_PER_S
            v = q * secs
            r = day_row(k)
            r[0] += v
            r[3] += secs
            if measured:
                r[1] += v
                r[4] += secs
            else:
                r[2] += v
                r[5] += secs
            start = part_end
    if empty_q:
        print(f"warning: {empty_q} counting row(s) with an empty discharge were not counted", file=sys.stderr)

    last_day = max([last_day, *[k for k, r in days.items() if r[3] > 0]])
    epoch = date(1970, 1, 1)
    with open(args.out, "w", newline="\n") as f:
        f.write("date,volume_m3,volume_measured_m3,volume_estimated_m3,covered_h,measured_h,estimated_h,missing_h\n")
        for k in range(first_day, last_day + 1):
            vol, vm, ve, cs, ms, es = days.get(k, [0.0] * 6)
            covered_h = cs / 3600.0
            fields = [vol, vm, ve, covered_h, ms / 3600.0, es / 3600.0, 24.0 - covered_h]
            f.write((epoch + timedelta(days=int(k))).isoformat() + "," + ",".join(repr(float(x)) for x in fields) + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
