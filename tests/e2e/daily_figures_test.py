#!/usr/bin/env python3
"""The `daily` view and `stagewell daily --json` against an independent pandas/scipy computation
(daily_support.reference_days) on the stored discharges, to 1e-9 relative.

Invented series around both DST changes of 2026 (America/Denver: 2026-03-08 lasts 23 hours,
2026-11-01 25 hours; python zoneinfo/tzdata) with irregular times and milliseconds, holes longer
and shorter than max_gap (some across midnight), out-of-range readings, spikes (one of them
recognised only in the next file, so its flag is added to a reading committed earlier), readings
below zero flow, and late readings ingested last, out of order. Two configurations: metric with an
IANA zone and the default flag treatment, and US units with a fixed offset (-07:00, 24-hour days
all year) and spikes excluded instead of bridged. Since the late readings are ingested after the
days they belong to were stored, agreement with the reference (computed from the final stored
readings) also shows that the figures kept current batch by batch equal a full recomputation.
The same readings reported with another time zone and max_gap than the stored figures were
computed with (the report then computes them from the readings as it runs) agree with the
reference in that zone too.
"""
import os
import tempfile

import numpy as np

import daily_support as ds

R = ds.Results()
MIN = 60_000

CONFIG = """\
units: {units}
database: db/stagewell.db
timezone: "{zone}"
daily:
  flagged: {flagged}
sites:
  - id: canal
    section: {{shape: rectangular, width: {width}, height: {height}}}
    roughness: 0.014
    slope: 0.001
    stage: {{zero_flow: {zero_flow}}}
    checks:
      min_stage: 0.0
      max_stage: {max_stage}
      spike: {spike}
      spike_window: 3
      flatline: 0
      max_gap: 20m
"""

SETUPS = [
    # (name, format arguments, excluded flags, bridged flags)
    ("metric, America/Denver, default treatment",
     dict(units="metric", zone="America/Denver", flagged="{}", width=2.0, height=1.5,
          zero_flow=0.1, max_stage=1.4, spike=0.3),
     {"out_of_range"}, {"spike"}),
    ("us, -07:00, spikes excluded",
     dict(units="us", zone="-07:00", flagged="{spike: exclude, below_zero_flow: bridge}",
          width=6.5, height=5.0, zero_flow=0.33, max_stage=4.6, spike=1.0),
     {"out_of_range", "spike"}, {"below_zero_flow"}),
]


def series(rng, start_ms, days, scale):
    """[(ms, stage)] every ~2 minutes for `days` days, with holes, spikes, out-of-range and
    below-zero-flow readings. `scale` converts the metric shape to the site's stage units."""
    n = days * 720
    t = start_ms + np.arange(n) * 2 * MIN + rng.integers(-30_000, 30_000, n)
    t[1:] = np.maximum(t[1:], t[:-1] + 1)  # strictly increasing
    stage = 0.45 + 0.3 * np.sin(np.arange(n) / 90.0) + 0.02 * rng.standard_normal(n)
    keep = np.ones(n, bool)
    # Holes: five longer than max_gap (20 min), five shorter.
    for length in (13, 20, 35, 15, 60, 6, 7, 8, 9, 5):
        first = rng.integers(0, n - length)
        keep[first:first + length] = False
    stage[rng.choice(n, 8, replace=False)] = 1.55   # out of range (max 1.4 m)
    for i in rng.choice(np.arange(10, n - 10), 6, replace=False):
        stage[i] = stage[i - 1] + 0.5                # a spike that comes back next reading
    low = rng.integers(0, n - 40)
    stage[low:low + 30] = 0.07                       # below zero flow (0.1 m): discharge 0
    return [(int(a), round(float(b) * scale, 4)) for a, b, k in zip(t, stage, keep) if k]


def write_csv(path, rows):
    with open(path, "w") as f:
        f.write("site,time,stage\n")
        for ms, stage in rows:
            f.write(f"canal,{ds.rfc3339_ms(ms)},{stage}\n")


def run_setup(program, root, name, args, excluded, bridged):
    rng = np.random.default_rng(20260308)
    scale = 1.0 if args["units"] == "metric" else 1 / 0.3048
    os.makedirs(os.path.join(root, "db"))
    config = os.path.join(root, "stagewell.yaml")
    with open(config, "w") as f:
        f.write(CONFIG.format(**args))

    # 2026-03-06T07:00Z and 2026-10-30T06:00Z: local midnight in Denver, 4 days each.
    readings = series(rng, 1772780400000, 4, scale) + series(rng, 1793340000000, 4, scale)
    readings.sort()
    late_mask = rng.random(len(readings)) < 0.05
    block = slice(1500, 1590)  # three hours held back whole
    late_mask[block] = True
    on_time = [r for r, late in zip(readings, late_mask) if not late]
    late = [r for r, is_late in zip(readings, late_mask) if is_late]
    rng.shuffle(late)
    # A spike as the last line of the first file, coming back in the second: its flag is added
    # in the second file's batch to a reading the first batch committed.
    cut = len(on_time) // 2
    on_time[cut - 1] = (on_time[cut - 1][0], round(on_time[cut - 2][1] + 0.6 * scale, 4))
    on_time[cut] = (on_time[cut][0], on_time[cut - 2][1])
    files = []
    for i, part in enumerate((on_time[:cut], on_time[cut:], late)):
        files.append(os.path.join(root, f"part{i}.csv"))
        write_csv(files[-1], part)
    ds.run(program, "ingest", "-c", config, "-q", *files)

    db = os.path.join(root, "db", "stagewell.db")
    stored = ds.stored_readings(db, "canal")
    R.check(f"{name}: every reading stored", len(stored) == len(readings),
            f"{len(stored)} of {len(readings)}")
    R.check(f"{name}: the late spike flag arrived", any("spike" in f for f in stored["flags"]))
    R.check(f"{name}: some readings are late", any("late" in f for f in stored["flags"]))
    want = ds.reference_days(stored, ds.zone_of(args["zone"]), 20 * MIN, excluded, bridged)
    R.check(f"{name}: some days have missing time", any(w["coverage"] < 1 for w in want.values()))

    rows, view_flags = ds.daily_view(db, "canal")
    ds.compare_days(R, f"{name}: daily view", rows, want)
    for day, w in want.items():
        R.check(f"{name}: daily_flags {day}", view_flags.get(day, {}) == w["flags"],
                f"got {view_flags.get(day)}, want {w['flags']}")

    first, last = min(want), max(want)
    out = ds.run_json(program, "daily", "-c", config, "-s", "canal", "--from", first, "--to",
                      last, "--json")
    R.check(f"{name}: figures are the stored ones", out["stored"] is True)
    ds.compare_days(R, f"{name}: daily --json", out["days"], want)
    for day in out["days"]:
        R.check(f"{name}: --json flags {day['day']}", day["flags"] == want[day["day"]]["flags"])

    # Other units: ML and L/s from m^3 (1 ML = 1000 m^3, 1 L = 0.001 m^3, exact), or acre-ft and
    # gal/min from ft^3 (43,560 ft^3; 1 US gal = 231 in^3, so 1 ft^3 = 1728/231 gal; exact).
    if args["units"] == "metric":
        units, volume_factor, flow_factor = ("ML", "L/s"), 1e-3, 1e3
    else:
        units, volume_factor, flow_factor = ("acre-ft", "gal/min"), 1 / 43560, 1728 / 231 * 60
    out = ds.run_json(program, "daily", "-c", config, "-s", "canal", "--from", first, "--to",
                      last, "--json", "--volume-units", units[0], "--flow-units", units[1])
    ds.compare_days(R, f"{name}: daily --json in {units}", out["days"], want,
                    flow_factor=flow_factor, volume_factor=volume_factor)

    text = ds.run(program, "daily", "-c", config, "-s", "canal", "--from", first, "--to", last)
    symbol = "m³" if args["units"] == "metric" else "ft³"
    R.check(f"{name}: the table names its units", f"volume {symbol}" in text, text[:300])
    R.check(f"{name}: the table carries the caution", "verify it with field measurements" in text)
    csv = ds.run(program, "daily", "-c", config, "-s", "canal", "--from", first, "--to", last,
                 "--csv").splitlines()
    R.check(f"{name}: CSV has a row per day", len(csv) == 1 + len(want), f"{len(csv)} lines")

    # Stale figures: another time zone and max_gap than those the figures were stored with, so
    # `daily` computes them from the readings now (stored: false), and they must agree with the
    # reference in that zone and with that max_gap just as well.
    stale_zone = "America/Chicago" if args["zone"] == "America/Denver" else "America/Denver"
    stale_config = os.path.join(root, "stale.yaml")
    with open(stale_config, "w") as f:
        f.write(CONFIG.format(**{**args, "zone": stale_zone}).replace("max_gap: 20m",
                                                                     "max_gap: 45m"))
    stale_want = ds.reference_days(stored, ds.zone_of(stale_zone), 45 * MIN, excluded, bridged)
    R.check(f"{name}: the stale zone moves the days' bounds", stale_want.keys() != want.keys()
            or any(stale_want[d]["readings"] != want[d]["readings"] for d in want))
    out = ds.run_json(program, "daily", "-c", stale_config, "-s", "canal", "--from",
                      min(stale_want), "--to", max(stale_want), "--json")
    R.check(f"{name}: stale figures are computed now", out["stored"] is False)
    ds.compare_days(R, f"{name}: stale daily --json", out["days"], stale_want)
    for day in out["days"]:
        R.check(f"{name}: stale --json flags {day['day']}",
                day["flags"] == stale_want[day["day"]]["flags"])


def main():
    args = ds.parse_args()
    program = os.path.join(args.bin_dir, "stagewell")
    for name, fmt_args, excluded, bridged in SETUPS:
        with tempfile.TemporaryDirectory(prefix="stagewell-daily-") as root:
            run_setup(program, root, name, fmt_args, excluded, bridged)
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
