#!/usr/bin/env python3
"""Writes the network benchmark's data (invented): STATIONS logger exports of one year of
15-minute readings each, a network file listing them (all on the benchmark station), and the
same rows as one file (the stations' years laid end to end, one after another); and a second
network file whose stations each have a structure of their own (a throat 1 mm wider per station),
so that no two share a rating.

usage: make_network.py STATIONS DIR
"""
import math
import os
import random
import sys
from datetime import datetime, timedelta

n = int(sys.argv[1])
out = sys.argv[2]
os.makedirs(out, exist_ok=True)
random.seed(2)
station = os.path.abspath("benches/convert/bench-station.toml")
rows_per = 365 * 96
base = open(station).read()
with open(os.path.join(out, "network.toml"), "w") as net, open(os.path.join(out, "network-distinct.toml"), "w") as dis, open(os.path.join(out, "one-file.csv"), "w") as one:
    net.write('name = "network benchmark (invented)"\n')
    dis.write('name = "network benchmark, every station its own structure (invented)"\n')
    one.write("time,stage\n")
    for s in range(n):
        path = os.path.join(out, f"s{s:03d}.csv")
        net.write(f'[[station]]\nid = "s{s:03d}"\nstation = "{station}"\nlogger = "{os.path.abspath(path)}"\n')
        own = os.path.join(out, f"st{s:03d}.toml")
        with open(own, "w") as f:
            f.write(base.replace("width = 0.30", f"width = {0.30 + 0.001 * s:.3f}", 1))
        dis.write(f'[[station]]\nid = "s{s:03d}"\nstation = "{os.path.abspath(own)}"\nlogger = "{os.path.abspath(path)}"\n')
        t0 = datetime(2025, 1, 1)
        t_one = datetime(1900, 1, 1) + timedelta(days=366 * s)
        lines, lines_one = [], []
        phase = random.random() * 6.0
        for k in range(rows_per):
            stage = 0.35 + 0.12 * math.sin(2 * math.pi * k / 96.0 + phase) + random.random() * 0.004
            v = f"{stage:.4f}\n"
            t = t0 + timedelta(minutes=15 * k)
            lines.append(f"{t:%Y-%m-%d %H:%M},{v}")
            t1 = t_one + timedelta(minutes=15 * k)
            lines_one.append(f"{t1:%Y-%m-%d %H:%M},{v}")
        with open(path, "w") as f:
            f.write("time,stage\n" + "".join(lines))
        one.write("".join(lines_one))
