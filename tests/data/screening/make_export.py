#!/usr/bin/env python3
"""Writes the invented Marlow Cut flume screening fixture (all data here is invented for tests).

Marlow Cut is an invented irrigation-return channel; its flume and its logger are made up.
This script writes, next to itself:

  export.csv           level-logger export, 15-minute readings on UTC, 2026-04-01 00:00 to
                       2026-06-30 23:45, header `time,stage_m`, stage in m with 3 decimals
  station.toml         the invented station (rectangular long-throated flume)
  edits.csv            the hydrographer's edits log (one `exclude` window)
  expected_flags.csv   `line,flag` for every row of export.csv, in file order
  events.md            the scenario, each event's times and its line numbers in export.csv

Python 3.11, standard library only, deterministic (random.Random(20261202)).

Logger: zero (stage with the water level with the crest) 0.250 m; dry reading 0.000 m (the
sensor sits 0.25 m below the crest in the approach pool). Head h = stage - 0.250 m.

Baseline: baseflow head 0.08-0.14 m drifting over weeks, a diurnal wiggle of +-3 mm and noise of
+-1 mm (stage rounded to the mm), plus small rain events (times UTC, head at the peak):
  R1 rain  rises from 2026-04-11 12:00, peak 2026-04-11 15:00, about 0.22 m
  R2 rain  rises from 2026-04-26 22:00, peak 2026-04-27 02:00, about 0.30 m
  R3 rain  rises from 2026-05-27 15:00, peak 2026-05-27 18:00, about 0.26 m
  R4 rain  rises from 2026-06-12 02:00, peak 2026-06-12 05:00, about 0.18 m
  R5 rain  rises from 2026-06-22 19:00, peak 2026-06-22 22:00, about 0.28 m

Events (times UTC, readings every 15 minutes):
  a. flood above the rated range (max_head 0.45 m): rises from 2026-05-04 06:00 to a peak of
     about 0.62 m head at 2026-05-04 12:00, recedes over about 2 days (exponential, 10 h
     time constant) back to baseflow.
  b. maintenance lift-out: flowing at about 0.12 m head at 2026-04-08 10:00; readings
     2026-04-08 10:15, 10:30 and 10:45 read 0.002-0.006 m (sensor in air); flowing again from
     2026-04-08 11:00.
  c. single-reading spike: 2026-04-22 14:30 reads 0.350 m above the reading before it; the
     reading at 14:45 is back.
  d. flat line: the stage repeats exactly the same value from 2026-05-12 20:00 to
     2026-05-13 10:00 (57 readings, 14 h from first to last) at about 0.12 m head.
  e. 90-minute gap: no rows from 2026-04-15 10:15 to 2026-04-15 11:30 (6 readings absent);
     rows at 10:00 then 11:45, a time step of 105 minutes.
  f. 6-hour gap: no rows from 2026-06-03 21:15 to 2026-06-04 03:00 (24 readings absent);
     rows at 2026-06-03 21:00 then 2026-06-04 03:15, a time step of 6 h 15 min (the gap
     crosses midnight).
  g. well cleaning: 2026-05-20 09:00 to 2026-05-20 09:30 (both included, 3 readings) the
     readings are disturbed by about +-4 cm; edits.csv excludes this window.

Expected flags (flumerate convert --edits edits.csv, default settings), most severe first:
missing, excluded, out-of-water, spike, flat, submerged, above-range, below-range,
beyond-limits, filled, dry, ok. A measured row: head > 0.45 above-range, 0 < head < 0.05
below-range, head <= 0 dry, else ok. Screened or excluded rows whose usable neighbours are at
most 2 h apart are filled: their head is interpolated linearly in time and they are `filled`
(or a range flag if the filled head is outside 0.055-0.45 m). The flat run (14 h) is not filled.
Rows that flumerate inserts into the 90-minute gap are not input lines and are not listed.
"""

from __future__ import annotations

import math
import random
from datetime import datetime, timedelta, timezone
from pathlib import Path

HERE = Path(__file__).resolve().parent
SEED = 20261202

START = datetime(2026, 4, 1, 0, 0, tzinfo=timezone.utc)
END = datetime(2026, 6, 30, 23, 45, tzinfo=timezone.utc)
STEP = timedelta(minutes=15)

ZERO_MM = 250  # logger stage with the water level with the crest
DRY_MM = 0  # logger stage with the sensor in air
MIN_HEAD_MM = 55
MAX_HEAD_MM = 450
FILL_MAX = timedelta(hours=2)
FLAT_HOURS = 12


def t(text: str) -> datetime:
    """A time on the logger's clock (UTC), written `YYYY-MM-DD HH:MM`."""
    return datetime.strptime(text, "%Y-%m-%d %H:%M").replace(tzinfo=timezone.utc)


def fmt(d: datetime) -> str:
    return d.strftime("%Y-%m-%d %H:%M")


# ---- event definitions (the docstring above repeats them; a check below keeps them equal) ----

# rain events: (rise start, rise hours, peak head m, recession time constant h)
RAIN = [
    ("R1", t("2026-04-11 12:00"), 3, 0.22, 5.0),
    ("R2", t("2026-04-26 22:00"), 4, 0.30, 6.0),
    ("R3", t("2026-05-27 15:00"), 3, 0.26, 5.0),
    ("R4", t("2026-06-12 02:00"), 3, 0.18, 4.0),
    ("R5", t("2026-06-22 19:00"), 3, 0.28, 5.0),
]

# a. flood
FLOOD_START = t("2026-05-04 06:00")
FLOOD_RISE_H = 6
FLOOD_PEAK_HEAD = 0.62
FLOOD_TAU_H = 10.0

# b. lift-out: the three readings in air
LIFT = [t("2026-04-08 10:15"), t("2026-04-08 10:30"), t("2026-04-08 10:45")]

# c. spike
SPIKE = t("2026-04-22 14:30")
SPIKE_MM = 350

# d. flat line, first and last reading of the repeated value
FLAT_FROM = t("2026-05-12 20:00")
FLAT_TO = t("2026-05-13 10:00")

# e. 90-minute gap and f. 6-hour gap: first and last absent reading
GAP_E = (t("2026-04-15 10:15"), t("2026-04-15 11:30"))
GAP_F = (t("2026-06-03 21:15"), t("2026-06-04 03:00"))

# g. well cleaning, excluded in edits.csv (both ends included)
CLEAN = (t("2026-05-20 09:00"), t("2026-05-20 09:30"))
CLEAN_REASON = "well cleaned, readings disturbed (invented)"

STATION_TOML = """\
# TEST DATA: invented station for flumerate's screening tests, not a real site.
# Marlow Cut is an invented irrigation-return channel; every dimension here is made up.
# Used with export.csv, edits.csv and expected_flags.csv in this folder (see README.md).
name = "Marlow Cut flume (test, invented)"
datum = "throat floor 27.410 m above the scheme's datum (invented)"
length_unit = "m"

[control]                      # rectangular long-throated flume throat, formed concrete
structure = "flume"
shape = "rectangle"
width = 0.50                   # throat width
length = 0.75                  # throat length in the flow direction
coefficient = "boundary-layer"

[approach]                     # walled rectangular approach pool at the logger's intake
shape = "rectangle"
width = 1.00
sill_height = 0.20             # throat floor above the approach bed (p1)

[range]
min_head = 0.055
max_head = 0.45

[logger]                       # pressure-level logger in the approach pool (invented)
time_column = "time"
time_format = "%Y-%m-%d %H:%M"
timezone = "UTC"
stage_column = "stage_m"
stage_unit = "m"
zero = 0.250                   # logger stage with the water level with the crest
dry_reading = 0.0              # the sensor sits 0.25 m below the crest; it reads 0.000 m in air

[screening]                    # flat_hours as the default; the other keys at their defaults
flat_hours = 12
spike_rise = 0.10
spike_return = 3
out_of_water_tolerance = 0.02
fill_max_hours = 2
"""


# ---- the signal ----


def baseflow_head(hours: float) -> float:
    """Smooth baseflow head (m), 0.08-0.14, drifting over weeks, with a +-3 mm diurnal wiggle."""
    slow = 0.110 + 0.022 * math.sin(2 * math.pi * hours / (24 * 21) + 0.4)
    slower = 0.004 * math.sin(2 * math.pi * hours / (24 * 43) + 2.0)
    diurnal = 0.003 * math.sin(2 * math.pi * ((hours % 24) - 9) / 24)
    return slow + slower + diurnal


def pulse(hours_since: float, rise_h: float, add: float, tau_h: float) -> float:
    """A rise of `add` (m) over `rise_h` (half-cosine), then an exponential recession."""
    if hours_since <= 0:
        return 0.0
    if hours_since <= rise_h:
        return add * 0.5 * (1 - math.cos(math.pi * hours_since / rise_h))
    return add * math.exp(-(hours_since - rise_h) / tau_h)


def in_window(d: datetime, w: tuple[datetime, datetime]) -> bool:
    return w[0] <= d <= w[1]


def build():
    rng = random.Random(SEED)
    slots = []
    d = START
    while d <= END:
        slots.append(d)
        d += STEP
    hours = lambda d: (d - START).total_seconds() / 3600.0  # noqa: E731

    flood_base = baseflow_head(hours(FLOOD_START + timedelta(hours=FLOOD_RISE_H)))
    flood_add = FLOOD_PEAK_HEAD - flood_base
    rain_add = {name: peak - baseflow_head(hours(start + timedelta(hours=rise))) for name, start, rise, peak, _ in RAIN}

    stage = {}  # slot -> stage (mm), every slot before the gaps are cut
    for d in slots:
        h = baseflow_head(hours(d))
        for name, start, rise, _peak, tau in RAIN:
            h += pulse(hours(d) - hours(start), rise, rain_add[name], tau)
        h += pulse(hours(d) - hours(FLOOD_START), FLOOD_RISE_H, flood_add, FLOOD_TAU_H)
        noise = rng.choice((-1, 0, 0, 1))
        stage[d] = ZERO_MM + round(h * 1000) + noise

    # b. lift-out: sensor in air
    for d in LIFT:
        stage[d] = DRY_MM + rng.randint(2, 6)
    # c. spike: 0.350 m above the reading before, back at the next
    stage[SPIKE] = stage[SPIKE - STEP] + SPIKE_MM
    # d. flat line: the value of the first reading, repeated
    flat_slots = [d for d in slots if FLAT_FROM <= d <= FLAT_TO]
    flat_mm = stage[FLAT_FROM]
    for d in flat_slots:
        stage[d] = flat_mm
    for edge in (FLAT_FROM - STEP, FLAT_TO + STEP):  # the run must end where it is defined to
        if stage[edge] == flat_mm:
            stage[edge] += 1
    # g. cleaning: irregular jumps of about +-4 cm (each step between readings < 0.10 m)
    clean_slots = [d for d in slots if in_window(d, CLEAN)]
    signs = [1, -1, 1, -1][: len(clean_slots)]
    rng.shuffle(signs)
    for d, sign in zip(clean_slots, signs):
        stage[d] += sign * rng.randint(30, 45)

    # e., f.: rows absent
    rows = [d for d in slots if not (in_window(d, GAP_E) or in_window(d, GAP_F))]
    return slots, rows, stage, flat_slots, clean_slots, flat_mm


def range_flag(head_m: float) -> str:
    if head_m > MAX_HEAD_MM / 1000:
        return "above-range"
    if 0 < head_m < MIN_HEAD_MM / 1000:
        return "below-range"
    if head_m <= 0:
        return "dry"
    return "ok"


def expected(rows, stage, flat_slots, clean_slots):
    """Flag per row (in file order), and the filled head of the filled rows, from the events."""
    screened = {}  # row time -> screening word before filling
    for d in clean_slots:
        screened[d] = "excluded"
    for d in LIFT:
        screened[d] = "out-of-water"
    screened[SPIKE] = "spike"
    for d in flat_slots:
        screened[d] = "flat"
    index = {d: i for i, d in enumerate(rows)}
    usable = [d for d in rows if d not in screened]
    flags, fills = [], {}
    # fill every stretch of screened rows between two usable readings at most FILL_MAX apart
    for a, b in zip(usable, usable[1:]):
        between = rows[index[a] + 1 : index[b]]
        if not between or b - a > FILL_MAX:
            continue
        ha, hb = (stage[a] - ZERO_MM) / 1000, (stage[b] - ZERO_MM) / 1000
        for d in between:
            fills[d] = ha + (hb - ha) * ((d - a) / (b - a))
    for d in rows:
        if d in fills:
            f = range_flag(fills[d])
            flags.append("filled" if f == "ok" else f)
        elif d in screened:
            flags.append(screened[d])
        else:
            head_mm = stage[d] - ZERO_MM
            flags.append(range_flag(head_mm / 1000))
    return flags, fills


def self_check(slots, rows, stage, flat_slots, clean_slots, flat_mm, flags, fills):
    """Guards that the invented record holds exactly the events it documents, nothing more."""
    doc = __doc__ or ""
    for d in [FLOOD_START, *LIFT, SPIKE, FLAT_FROM, FLAT_TO, *GAP_E, *GAP_F, *CLEAN] + [r[1] for r in RAIN]:
        assert fmt(d)[11:] in doc and fmt(d)[:10] in doc, f"docstring does not name {fmt(d)}"
    # events at least 2 days apart and from the file ends
    spans = {
        "a": (FLOOD_START, FLOOD_START + timedelta(hours=FLOOD_RISE_H + 48)),
        "b": (LIFT[0], LIFT[-1]),
        "c": (SPIKE, SPIKE),
        "d": (FLAT_FROM, FLAT_TO),
        "e": GAP_E,
        "f": GAP_F,
        "g": CLEAN,
    }
    two_days = timedelta(days=2)
    items = sorted(spans.items(), key=lambda kv: kv[1][0])
    assert items[0][1][0] - START >= two_days and END - items[-1][1][1] >= two_days
    for (n1, s1), (n2, s2) in zip(items, items[1:]):
        assert s2[0] - s1[1] >= two_days, f"events {n1} and {n2} closer than 2 days"
    # the screened events sit at about 0.12 m head
    for d in (LIFT[0] - STEP, SPIKE - STEP, FLAT_FROM, CLEAN[0] - STEP):
        assert 100 <= stage[d] - ZERO_MM <= 140, (fmt(d), stage[d])
    assert all(2 <= stage[d] <= 6 for d in LIFT)
    # baseflow away from events stays within 0.08-0.14 m (rain and flood excluded)
    # no reading sits exactly on a range boundary (float rounding of stage - zero would decide)
    for d in rows:
        assert stage[d] - ZERO_MM not in (MIN_HEAD_MM, MAX_HEAD_MM, 0), fmt(d)
    for d, h in fills.items():
        assert abs(h - 0.055) > 0.01 and abs(h - 0.45) > 0.01 and h > 0.07, (fmt(d), h)
    # steps between consecutive rows: only the lift-out and the spike jump more than 0.10 m,
    # and nothing else comes near; the cleaning jumps stay below 0.10 m
    special = {LIFT[0], LIFT[-1] + STEP, SPIKE, SPIKE + STEP}
    for a, b in zip(rows, rows[1:]):
        jump = abs(stage[b] - stage[a])
        if b in special:
            assert jump > 300, (fmt(b), jump)
        elif b in LIFT:
            assert jump < 10, (fmt(b), jump)
        elif a in clean_slots or b in clean_slots:
            assert jump < 100, (fmt(b), jump)
        else:
            assert jump < 50, (fmt(b), jump)
    assert abs(stage[SPIKE + STEP] - stage[SPIKE - STEP]) <= 10
    # no other run of the same value comes near flat_hours
    run_start = 0
    for i in range(1, len(rows) + 1):
        if i == len(rows) or stage[rows[i]] != stage[rows[run_start]]:
            span = rows[i - 1] - rows[run_start]
            if rows[run_start] == FLAT_FROM:
                assert rows[i - 1] == FLAT_TO and stage[rows[run_start]] == flat_mm
            else:
                assert span < timedelta(hours=3), (fmt(rows[run_start]), span)
            run_start = i
    # nothing near the dry reading but the lift-out
    assert all(stage[d] > 200 for d in rows if d not in LIFT)
    # the flood is the largest event by far
    peak = max(stage[d] for d in rows if d != SPIKE) - ZERO_MM
    flood_peak_at = max((d for d in rows if d != SPIKE), key=lambda d: stage[d])
    assert 600 <= peak <= 640 and FLOOD_START <= flood_peak_at <= FLOOD_START + timedelta(hours=8)
    others = max(stage[d] - ZERO_MM for d in rows if d != SPIKE and not (FLOOD_START <= d <= FLOOD_START + timedelta(days=3)))
    assert others <= 310, others
    assert len(flags) == len(rows)


def write(slots, rows, stage, flat_slots, clean_slots, flat_mm, flags, fills):
    line = {d: i + 2 for i, d in enumerate(rows)}
    with open(HERE / "export.csv", "w", newline="\n") as f:
        f.write("time,stage_m\n")
        for d in rows:
            f.write(f"{fmt(d)},{stage[d] / 1000:.3f}\n")
    (HERE / "station.toml").write_text(STATION_TOML)
    with open(HERE / "edits.csv", "w", newline="\n") as f:
        f.write("start,end,action,reason,value_mm\n")
        f.write(f'{CLEAN[0].strftime("%Y-%m-%dT%H:%M")},{CLEAN[1].strftime("%Y-%m-%dT%H:%M")},exclude,"{CLEAN_REASON}",\n')
    with open(HERE / "expected_flags.csv", "w", newline="\n") as f:
        f.write("line,flag\n")
        for d, flag in zip(rows, flags):
            f.write(f"{line[d]},{flag}\n")

    def lines(ds):
        ds = [d for d in ds if d in line]
        return f"{line[ds[0]]}" if len(ds) == 1 else f"{line[ds[0]]}-{line[ds[-1]]}"

    above = [d for d, fl in zip(rows, flags) if fl == "above-range"]
    flood_rows = [d for d in rows if FLOOD_START <= d <= FLOOD_START + timedelta(hours=FLOOD_RISE_H + 48)]
    flood_peak = max(flood_rows, key=lambda d: stage[d])
    counts = {}
    for fl in flags:
        counts[fl] = counts.get(fl, 0) + 1
    md = []
    md.append("# Marlow Cut flume: invented screening fixture\n")
    md.append("All data here is invented for tests.\n")
    md.append(
        "Marlow Cut is an invented irrigation-return channel that drains back to its scheme's main "
        "drain through a rectangular long-throated flume (`station.toml`: throat 0.50 m wide, "
        "0.75 m long, rated for heads 0.055-0.45 m). A level logger in the approach pool writes the "
        "stage every 15 minutes on UTC; its zero is 0.250 m (water level with the crest) and it reads "
        "0.000 m in air. This export covers 2026-04-01 00:00 to 2026-06-30 23:45: baseflow of "
        f"0.08-0.14 m head, five small rain events, and the seven events below. `export.csv` has "
        f"{len(rows)} rows (lines 2-{len(rows) + 1}). Line numbers count the header as line 1.\n"
    )
    md.append("## Events (times UTC)\n")
    md.append(
        f"- **a. Flood above the rated range.** Rises from {fmt(FLOOD_START)} (line {line[FLOOD_START]}) "
        f"to its peak of {(stage[flood_peak] - ZERO_MM) / 1000:.3f} m head at {fmt(flood_peak)} (line "
        f"{line[flood_peak]}), then recedes over about two days. Heads above 0.45 m from "
        f"{fmt(above[0])} to {fmt(above[-1])} (lines {line[above[0]]}-{line[above[-1]]}, "
        f"{len(above)} rows, expected `above-range`). The largest event by far.\n"
    )
    md.append(
        f"- **b. Maintenance lift-out.** Flowing at {(stage[LIFT[0] - STEP] - ZERO_MM) / 1000:.3f} m head at "
        f"{fmt(LIFT[0] - STEP)} (line {line[LIFT[0] - STEP]}); the readings at {', '.join(fmt(d)[11:] for d in LIFT)} "
        f"on {fmt(LIFT[0])[:10]} (lines {lines(LIFT)}) read "
        f"{', '.join(f'{stage[d] / 1000:.3f}' for d in LIFT)} m (sensor in air); flowing again at "
        f"{fmt(LIFT[-1] + STEP)} (line {line[LIFT[-1] + STEP]}). Expected: out-of-water, then filled "
        f"(usable readings 60 min apart) -> `filled`.\n"
    )
    md.append(
        f"- **c. Single-reading spike.** {fmt(SPIKE)} (line {line[SPIKE]}) reads {stage[SPIKE] / 1000:.3f} m, "
        f"0.350 m above the reading before ({stage[SPIKE - STEP] / 1000:.3f} m, line {line[SPIKE - STEP]}); "
        f"the next reading ({stage[SPIKE + STEP] / 1000:.3f} m, line {line[SPIKE + STEP]}) is back. "
        f"Expected: spike, then filled -> `filled`.\n"
    )
    md.append(
        f"- **d. Flat line.** The stage repeats {flat_mm / 1000:.3f} m (head {(flat_mm - ZERO_MM) / 1000:.3f} m) "
        f"from {fmt(FLAT_FROM)} to {fmt(FLAT_TO)} (lines {lines(flat_slots)}, {len(flat_slots)} readings, "
        f"14 h from first to last), crossing midnight. Expected: `flat` on every one, not filled "
        f"(the usable readings either side are more than 2 h apart).\n"
    )
    md.append(
        f"- **e. 90-minute gap.** No rows from {fmt(GAP_E[0])} to {fmt(GAP_E[1])} (6 readings absent); "
        f"line {line[GAP_E[0] - STEP]} is {fmt(GAP_E[0] - STEP)}, line {line[GAP_E[1] + STEP]} is "
        f"{fmt(GAP_E[1] + STEP)}: a time step of 105 minutes. flumerate fills it (105 min <= 2 h) with "
        f"inserted rows, which are not input lines and are not in `expected_flags.csv`.\n"
    )
    md.append(
        f"- **f. 6-hour gap.** No rows from {fmt(GAP_F[0])} to {fmt(GAP_F[1])} (24 readings absent); "
        f"line {line[GAP_F[0] - STEP]} is {fmt(GAP_F[0] - STEP)}, line {line[GAP_F[1] + STEP]} is "
        f"{fmt(GAP_F[1] + STEP)}: a time step of 6 h 15 min, across midnight. Not filled (longer than 2 h); "
        f"the rows either side are ordinary (`ok`).\n"
    )
    md.append(
        f"- **g. Well cleaning.** {fmt(CLEAN[0])} to {fmt(CLEAN[1])}, both included (lines "
        f"{lines(clean_slots)}): the readings jump by about +-4 cm "
        f"({', '.join(f'{stage[d] / 1000:.3f}' for d in clean_slots)} m, between "
        f"{stage[CLEAN[0] - STEP] / 1000:.3f} m at line {line[CLEAN[0] - STEP]} and "
        f"{stage[CLEAN[1] + STEP] / 1000:.3f} m at line {line[CLEAN[1] + STEP]}), each step below 0.10 m, "
        f"so not spikes. `edits.csv` excludes the window (\"{CLEAN_REASON}\"). Expected: excluded, "
        f"then filled (usable readings 60 min apart) -> `filled`.\n"
    )
    md.append("## Rain events (baseline, not screening events)\n")
    for name, start, rise, peak, _tau in RAIN:
        pk = start + timedelta(hours=rise)
        md.append(
            f"- {name}: rises from {fmt(start)} (line {line[start]}) to about {peak:.2f} m head at "
            f"{fmt(pk)} (line {line[pk]}); recedes within about a day.\n"
        )
    md.append("## Expected flags\n")
    md.append(
        "`expected_flags.csv` gives, for every line of `export.csv`, the flag flumerate must give with "
        "`--edits edits.csv` and default settings. It is computed by `make_export.py` from the event "
        "definitions, not by running flumerate. Counts: "
        + ", ".join(f"{k} {v}" for k, v in sorted(counts.items()))
        + ".\n"
    )
    (HERE / "events.md").write_text("\n".join(md))


def main():
    slots, rows, stage, flat_slots, clean_slots, flat_mm = build()
    flags, fills = expected(rows, stage, flat_slots, clean_slots)
    self_check(slots, rows, stage, flat_slots, clean_slots, flat_mm, flags, fills)
    write(slots, rows, stage, flat_slots, clean_slots, flat_mm, flags, fills)
    print(f"wrote {len(rows)} rows to {HERE / 'export.csv'} and the fixture files next to it")


if __name__ == "__main__":
    main()
