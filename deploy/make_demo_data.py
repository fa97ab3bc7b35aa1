#!/usr/bin/env python3
"""Writes the demo's stage history, config/demo-data/*.csv (committed; rerun only to change it).

An invented fortnight in the Brindlewick Valley (see config/demo.yaml): a hatchery raceway, an
irrigation feeder canal, a roadside ditch, a stormwater culvert and a creek, read every 10 minutes
from 2026-05-18 to 2026-05-31 local time (UTC-06:00, daylight time). A thunderstorm on the
afternoon of 2026-05-24 runs through the ditch, the culvert and the creek. A few faults are planted
so the demo shows its flags and rejects: a spike, a stuck sensor, a gap, and some bad lines.
Standard library only; deterministic.
"""
import datetime as dt
import math
import os
import random

START = dt.datetime(2026, 5, 18, 0, 0, tzinfo=dt.timezone(dt.timedelta(hours=-6)))
STEP = dt.timedelta(minutes=10)
DAYS = 14
STORM = dt.datetime(2026, 5, 24, 15, 0, tzinfo=START.tzinfo)
OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "config", "demo-data")


def hours_since(t, origin):
    return (t - origin).total_seconds() / 3600.0


def storm_pulse(t, rise_h, fall_h):
    """0 before the storm, rising to 1 over rise_h hours, receding exponentially over fall_h."""
    h = hours_since(t, STORM)
    if h < 0:
        return 0.0
    if h < rise_h:
        return math.sin(0.5 * math.pi * h / rise_h)
    return math.exp(-(h - rise_h) / fall_h)


def series():
    rng = random.Random(20260518)
    t = START
    end = START + dt.timedelta(days=DAYS)
    while t < end:
        day_h = t.hour + t.minute / 60.0
        day_index = (t - START).days
        # Raceway A: steady supply, a little feeding-time ripple; drawn down for cleaning on day 5.
        raceway = 0.45 + 0.02 * math.sin(2 * math.pi * (day_h - 8) / 24) + rng.gauss(0, 0.003)
        if day_index == 4 and 9 <= day_h < 11:
            raceway = 0.22 + rng.gauss(0, 0.003)
        # Feeder canal (cm): headgate opened on the morning of day 2, evening irrigation draw.
        canal = 18.0 if day_index < 1 or (day_index == 1 and day_h < 7) else \
            62.0 - 6.0 * math.sin(2 * math.pi * (day_h - 14) / 24)
        canal += rng.gauss(0, 0.4)
        # Roadside ditch (mm): dry (below the zero-flow stage) until the storm.
        ditch = 8.0 + 290.0 * storm_pulse(t, 0.7, 2.0) + abs(rng.gauss(0, 1.0))
        # Culvert (m): dry until the storm, which briefly fills it past the crown.
        culvert = max(0.0, 1.1 * storm_pulse(t, 0.5, 1.5) + rng.gauss(0, 0.002))
        # Creek (m): snowmelt cycle, peaking in the evening, plus the storm's flood wave.
        creek = 0.95 + 0.12 * math.sin(2 * math.pi * (day_h - 13) / 24) + 0.01 * day_index
        creek += 1.9 * storm_pulse(t, 3.0, 10.0) + rng.gauss(0, 0.004)
        yield t, {"raceway-a": round(raceway, 3), "feeder-canal": round(canal, 1),
                  "roadside-ditch": round(ditch, 0), "storm-culvert": round(culvert, 3),
                  "brindlewick-creek": round(creek, 3)}
        t += STEP


def main():
    os.makedirs(OUT, exist_ok=True)
    rows = {site: [] for site in ("raceway-a", "feeder-canal", "roadside-ditch", "storm-culvert",
                                  "brindlewick-creek")}
    stuck_from = dt.datetime(2026, 5, 27, 2, 0, tzinfo=START.tzinfo)
    stuck_value = None
    for t, stages in series():
        for site, stage in stages.items():
            text = t.isoformat()
            # Faults: a one-reading spike at the raceway; the canal sensor stuck for 8 hours;
            # the creek logger silent for 3 hours.
            if site == "raceway-a" and t == dt.datetime(2026, 5, 21, 13, 0, tzinfo=START.tzinfo):
                stage = 0.93
            if site == "feeder-canal" and stuck_from <= t < stuck_from + dt.timedelta(hours=8):
                stuck_value = stuck_value if stuck_value is not None else stage
                stage = stuck_value
            if site == "brindlewick-creek" and \
                    dt.datetime(2026, 5, 29, 4, 0, tzinfo=START.tzinfo) <= t < \
                    dt.datetime(2026, 5, 29, 7, 0, tzinfo=START.tzinfo):
                continue
            rows[site].append(f"{site},{text},{stage}")
    for site, lines in rows.items():
        body = ["# Demo stage readings (invented): Brindlewick Valley Water Cooperative, " + site,
                "site,time,stage"] + lines
        if site == "feeder-canal":
            # Lines a real logger file sometimes has: a typo in the site, a garbled time.
            body.insert(200, "feeder-canel,2026-05-19T09:00:00-06:00,61.2")
            body.insert(400, "feeder-canal,2026-05-20T25:00:00-06:00,60.8")
        with open(os.path.join(OUT, f"{site}-2026-05.csv"), "w") as f:
            f.write("\n".join(body) + "\n")


if __name__ == "__main__":
    main()
