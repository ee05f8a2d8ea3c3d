#!/usr/bin/env python3
"""Writes the invented demo logger data for the Ridgeway canal flume (see examples/README.md).

DEMO DATA, INVENTED: a made-up absolute-pressure logger in a made-up canal, four weeks at
15-minute steps on local clock time (Europe/Berlin, so the file crosses the October clock
change), with a storm, a six-hour gap (battery swap), a spike, a sentinel value and logger drift.
Deterministic (fixed seed); standard library only. Run from the repository root:

    python3 examples/make_demo_data.py
"""
import math
import random
from datetime import datetime, timedelta, timezone

random.seed(20261010)
G = 9.80665
ZERO_M = 0.150  # depth over the sensor with the water level with the crest


def rho(t):  # Kell (1975), as flumerate uses it
    return (999.83952 + 16.945176 * t - 7.9870401e-3 * t**2 - 46.170461e-6 * t**3
            + 105.56302e-9 * t**4 - 280.54253e-12 * t**5) / (1 + 16.879850e-3 * t)


def berlin_offset(utc):  # CET/CEST for 2026: CEST until 2026-10-25 01:00 UTC
    return 2 if utc < datetime(2026, 10, 25, 1, 0, tzinfo=timezone.utc) else 1


start = datetime(2026, 10, 9, 22, 0, tzinfo=timezone.utc)   # 2026-10-10 00:00 CEST
steps = 28 * 96


def baro_kpa(t_h):  # fair weather, a low passing with the storm around day 8
    return 101.4 + 0.25 * math.sin(2 * math.pi * t_h / 80.0) - 1.6 * math.exp(-((t_h - 200) / 18.0) ** 2)


def true_head(t_h):
    base = 0.22 + 0.03 * math.sin(2 * math.pi * (t_h - 8) / 24.0)   # irrigation rhythm
    # a storm that peaks just above the rated range: steep rise, slower recession
    storm = 0.33 * (math.exp(-((t_h - 204) / 9.0) ** 2) if t_h <= 204 else math.exp(-(t_h - 204) / 20.0))
    return base + storm


def drift_m(t_h):  # the sensor reads low, 4 mm more by the end
    return 0.004 * t_h / (28 * 24)


rows = []
for k in range(steps):
    utc = start + timedelta(minutes=15 * k)
    t_h = k / 4.0
    local = utc + timedelta(hours=berlin_offset(utc))
    temp = 10.0 + 1.5 * math.sin(2 * math.pi * (t_h - 14) / 24.0)
    depth = true_head(t_h) + ZERO_M - drift_m(t_h) + random.gauss(0, 0.0008)
    p = baro_kpa(t_h) + rho(temp) * G * depth / 1000.0
    rows.append((local.strftime("%Y-%m-%d %H:%M"), f"{p:.3f}", f"{temp:.2f}", t_h))

out = ["Ridgeway km 3.2 pressure logger, serial RG-0417 (DEMO DATA, INVENTED)",
       "exported 2026-11-07; clock: local time with daylight saving",
       "time,p_kpa,temp_c"]
for (when, p, temp, t_h) in rows:
    if 300 <= t_h < 306:        # battery swap: six hours not logged at all
        continue
    if abs(t_h - 400.25) < 1e-9:  # a spike (electrical interference)
        p = "131.950"
    if abs(t_h - 450.5) < 1e-9:   # the logger's own code for a failed reading
        p = "-9999"
    out.append(f"{when},{p},{temp}")
open("examples/ridgeway-logger.csv", "w").write("\n".join(out) + "\n")

# barometric logger on site, hourly, kPa
baro = ["time,pressure_kpa"]
for k in range(0, steps, 4):
    utc = start + timedelta(minutes=15 * k)
    local = utc + timedelta(hours=berlin_offset(utc))
    if local.strftime("%Y-%m-%d %H") == "2026-10-25 02":
        continue  # the repeated hour is left out of the hourly file
    baro.append(f"{local.strftime('%Y-%m-%d %H:%M')},{baro_kpa(k / 4.0):.3f}")
open("examples/ridgeway-baro.csv", "w").write("\n".join(baro) + "\n")

# field visits: staff-gauge head read by the hydrographer
visits = ["time,head_m"]
for k in (2 * 96 + 40, 14 * 96 + 44, 27 * 96 + 38):
    utc = start + timedelta(minutes=15 * k)
    local = utc + timedelta(hours=berlin_offset(utc))
    visits.append(f"{local.strftime('%Y-%m-%d %H:%M')},{true_head(k / 4.0):.3f}")
open("examples/ridgeway-visits.csv", "w").write("\n".join(visits) + "\n")
print(len(out) - 3, "logger rows,", len(baro) - 1, "baro rows,", len(visits) - 1, "visits")
