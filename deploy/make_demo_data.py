#!/usr/bin/env python3
"""The demo's stage readings (config/demo.yaml, the invented Brindlewick Valley), relative to the
moment the demo starts. deploy/demo.sh runs both parts:

  make_demo_data.py history --out DIR [--now TIME] [--gaugings FILE]
      One CSV file per site (site,time,stage) for the drop folder: a fortnight of readings every
      10 minutes, the last one at TIME (default: now, whole seconds). With --gaugings, also the
      feeder canal's field measurements of the fortnight (GAUGINGS below) for
      `stagewell gaugings import`.
  make_demo_data.py live --logger-dir DIR --start TIME [--speed S] [--until SECONDS]
      The loggers from TIME on: a reading per site every 10 seconds, appended to the followed
      files DIR/raceway-a.csv (time,stage; local standard time, UTC-07:00, without an offset)
      and DIR/telemetry.csv (site,time,stage in UTC; the other four sites), each when the clock
      reaches its time. It continues the history made for the same TIME without a seam.

The history, on local days (America/Denver) counted from its first (day 0): the feeder canal's
headgate opens on day 1 at 07:00; raceway A is drawn down for cleaning on day 4 from 09:00 to
11:00; a thunderstorm runs through the ditch, the culvert and the creek on day 6 from 15:00.
Planted faults, so that the demo shows its flags and rejects: a one-reading spike at the raceway
(day 3, 13:00), the canal's sensor stuck for 8 hours (day 9 from 02:00), the creek's logger
silent for 3 hours (day 11, 04:00 to 07:00), and two bad lines in the canal's file.

The live part, in minutes after START (the constants below; README.md, "The demo", tells it):
another storm. It has rained in the hills, and the creek has been rising since 12 minutes before
START, faster and faster: its rising-stage alarm (faster than 0.5 m/h across an hour) opens 1 to
2.5 minutes in, the creek crests at about 2.6 m, over both banks, about 28 minutes in, and the
alarm clears about 68 minutes in. The rain reaches the valley road: the ditch runs from about 1
minute (peak about 7) and the culvert from 1.5; the culvert is full past its crown from about 4.5
to 8.5 minutes. At the hatchery the crew draws raceway A down from 50 s to clear storm debris
from its screens and lets the water back in from 4.5 minutes: its low-flow alarm (below
0.5 m^3/s for 2 minutes) opens about 3.5 minutes in and clears about 5 minutes in.

Readings whose time has already come when the feeder starts (the service took a while to read the
history) are written at once. With --speed S they are instead played S times faster than the
clock until they catch up with it, never ahead of it: tests start the schedule some minutes in
the past and compress it this way. The values never depend on the pace.

GAUGINGS: the ditch rider measured the feeder canal's discharge six times in the fortnight (days
2 to 12, 10:00 local, current meter, 5 %), without reading the staff gauge: `stagewell gaugings
import` takes the stage from the stored readings. The canal carries more than its configured n
(0.030 with the weeds) says: the measurements follow Manning's equation with n = 0.027, with a
scatter of 4 % (log-normal, seeded), so that `stagewell calibrate` has something to find.

`history --now 2026-06-01T00:00:00-06:00` is the fortnight of 18 to 31 May 2026 (and one
reading at midnight) that the examples in docs/ were made from and that the feeder canal's dated
change and correction in config/demo.yaml were written for.

Standard library only; deterministic for a given TIME. Every place, organisation and value in it
is invented.
"""
import argparse
import datetime as dt
import math
import os
import random
import sys
import time
import zoneinfo

LOCAL = zoneinfo.ZoneInfo("America/Denver")
UTC = dt.timezone.utc
LOGGER_ZONE = dt.timezone(dt.timedelta(hours=-7))  # the raceway logger keeps standard time
STEP = dt.timedelta(minutes=10)
DAYS = 14
LIVE_STEP = dt.timedelta(seconds=10)
SITES = ("raceway-a", "feeder-canal", "roadside-ditch", "storm-culvert", "brindlewick-creek")

# The live storm, in seconds after START (deploy/demo.sh and README.md, "The demo", tell of it).
CREEK_RISE_FROM = -12 * 60   # the creek starts rising (rain in the hills)
CREEK_RISE_FOR = 40 * 60     # ... and crests this long after
CREEK_RISE = 1.6             # m
DITCH_FROM = 60              # the rain on the valley road
CULVERT_FROM = 90
RACEWAY_DOWN_FROM = 50       # the valve closed over a minute: 0.45 m down to 0.22 m
RACEWAY_UP_FROM = 270        # ... and opened again over a minute
RACEWAY_RAMP = 60
RACEWAY_DOWN_STAGE = 0.22    # m


def hours(delta):
    return delta.total_seconds() / 3600.0


def pulse(h, rise_h, fall_h):
    """0 before h = 0, rising to 1 over rise_h hours, receding exponentially over fall_h."""
    if h < 0:
        return 0.0
    if h < rise_h:
        return math.sin(0.5 * math.pi * h / rise_h)
    return math.exp(-(h - rise_h) / fall_h)


def ramp(seconds, length):
    """0 before 0, 1 after `length`, a half cosine between: a valve turned steadily."""
    x = min(max(seconds / length, 0.0), 1.0)
    return 0.5 - 0.5 * math.cos(math.pi * x)


class Scenario:
    """The valley's stages as functions of time, for a demo starting at `start` (aware)."""

    def __init__(self, start):
        self.start = start.astimezone(UTC).replace(microsecond=0)
        self.first = self.start - dt.timedelta(days=DAYS)
        self.day0 = self.first.astimezone(LOCAL).date()
        self.storm = self.local(6, 15)
        self.spike_at = self.on_grid(self.local(3, 13))
        self.stuck_from = self.local(9, 2)
        self.silent = (self.local(11, 4), self.local(11, 7))

    def local(self, day, hour):
        """The instant (UTC) of `hour`:00 local time on history day `day`."""
        day_date = self.day0 + dt.timedelta(days=day)
        return dt.datetime.combine(day_date, dt.time(hour), LOCAL).astimezone(UTC)

    def on_grid(self, t):
        """The first history time at or after t."""
        steps = (self.start - t) // STEP
        return self.start - steps * STEP

    def clock(self, t):
        """(local day index, local hour of day) of t."""
        local = t.astimezone(LOCAL)
        return (local.date() - self.day0).days, local.hour + local.minute / 60.0 + \
            local.second / 3600.0

    def smooth(self, t, day_index, day_h, trend_days):
        """Each site's stage without noise: daily cycles, the history's events, the live storm."""
        after = (t - self.start).total_seconds()
        raceway = 0.45 + 0.02 * math.sin(2 * math.pi * (day_h - 8) / 24)
        down = ramp(after - RACEWAY_DOWN_FROM, RACEWAY_RAMP) - \
            ramp(after - RACEWAY_UP_FROM, RACEWAY_RAMP)
        raceway += (RACEWAY_DOWN_STAGE - raceway) * down
        canal = 18.0 if day_index < 1 or (day_index == 1 and day_h < 7) else \
            62.0 - 6.0 * math.sin(2 * math.pi * (day_h - 14) / 24)
        ditch = 8.0 + 290.0 * pulse(hours(t - self.storm), 0.7, 2.0) + \
            280.0 * pulse((after - DITCH_FROM) / 3600.0, 0.1, 0.3)
        culvert = 1.1 * pulse(hours(t - self.storm), 0.5, 1.5) + \
            1.05 * pulse((after - CULVERT_FROM) / 3600.0, 0.08, 0.25)
        creek = 0.95 + 0.12 * math.sin(2 * math.pi * (day_h - 13) / 24) + 0.01 * trend_days
        creek += 1.9 * pulse(hours(t - self.storm), 3.0, 10.0)
        rise = (after - CREEK_RISE_FROM) / CREEK_RISE_FOR
        if rise > 0:  # a smooth rise to the crest, then a recession over about 100 minutes
            creek += CREEK_RISE * (ramp(rise, 1.0) if rise < 1 else math.exp(-(rise - 1) * 0.4))
        return {"raceway-a": raceway, "feeder-canal": canal, "roadside-ditch": ditch,
                "storm-culvert": culvert, "brindlewick-creek": creek}

    def history(self):
        """[(t, {site: stage})] every 10 minutes from `first` to `start`, noise included."""
        rng = random.Random(20260518)
        out = []
        t = self.first
        while t <= self.start:
            day_index, day_h = self.clock(t)
            s = self.smooth(t, day_index, day_h, day_index)
            raceway = s["raceway-a"] + rng.gauss(0, 0.003)
            if day_index == 4 and 9 <= day_h < 11:  # drawn down for cleaning
                raceway = 0.22 + rng.gauss(0, 0.003)
            canal = s["feeder-canal"] + rng.gauss(0, 0.4)
            ditch = s["roadside-ditch"] + abs(rng.gauss(0, 1.0))
            culvert = max(0.0, s["storm-culvert"] + rng.gauss(0, 0.002))
            creek = s["brindlewick-creek"] + rng.gauss(0, 0.004)
            out.append((t, {"raceway-a": round(raceway, 3), "feeder-canal": round(canal, 1),
                            "roadside-ditch": round(ditch, 0), "storm-culvert": round(culvert, 3),
                            "brindlewick-creek": round(creek, 3)}))
            t += STEP
        return out

    def history_files(self):
        """{site: [lines]}: the history with its planted faults, as the loggers' files."""
        rows = {site: [] for site in SITES}
        stuck_value = None
        for t, stages in self.history():
            text = t.astimezone(LOCAL).isoformat()
            for site, stage in stages.items():
                if site == "raceway-a" and t == self.spike_at:
                    stage = 0.93
                if site == "feeder-canal" and \
                        self.stuck_from <= t < self.stuck_from + dt.timedelta(hours=8):
                    stuck_value = stuck_value if stuck_value is not None else stage
                    stage = stuck_value
                if site == "brindlewick-creek" and self.silent[0] <= t < self.silent[1]:
                    continue
                rows[site].append(f"{site},{text},{stage}")
        files = {}
        for site, lines in rows.items():
            body = ["# Demo stage readings (invented): Brindlewick Valley Water Cooperative, " +
                    site, "site,time,stage"] + lines
            if site == "feeder-canal":
                # Lines a real logger file sometimes has: a typo in the site, a garbled time.
                body.insert(200, "feeder-canel," + self.local(1, 9).astimezone(LOCAL).isoformat()
                            + ",61.2")
                day2 = self.local(2, 0).astimezone(LOCAL)
                body.insert(400, f"feeder-canal,{day2.date().isoformat()}T25:00:00"
                            f"{day2.isoformat()[-6:]},60.8")
            files[site] = body
        return files

    def live(self):
        """Yields (t, {site: stage}) every 10 s after `start`, for ever. Each site starts from its
        last history reading (the difference to the smooth curve fades over a few minutes, so the
        first live readings do not look like a jump) and wanders a little."""
        last = self.history()[-1][1]
        day_index, day_h = self.clock(self.start)
        smooth0 = self.smooth(self.start, day_index, day_h, day_index)
        seam = {site: last[site] - smooth0[site] for site in SITES}
        fade_s = {"raceway-a": 120, "feeder-canal": 300, "roadside-ditch": 60,
                  "storm-culvert": 60, "brindlewick-creek": 120}
        wander = {"raceway-a": 0.0001, "feeder-canal": 0.01, "roadside-ditch": 0.0,
                  "storm-culvert": 0.0, "brindlewick-creek": 0.0003}
        digits = {"raceway-a": 4, "feeder-canal": 1, "roadside-ditch": 0, "storm-culvert": 3,
                  "brindlewick-creek": 3}
        walk = {site: 0.0 for site in SITES}
        rng = random.Random(int(self.start.timestamp()))
        k = 0
        while True:
            k += 1
            t = self.start + k * LIVE_STEP
            day_index, day_h = self.clock(t)
            s = self.smooth(t, day_index, day_h, hours(t - self.local(0, 0)) / 24)
            stages = {}
            for site in SITES:
                walk[site] = 0.9 * walk[site] + rng.gauss(0, wander[site])
                after = (t - self.start).total_seconds()
                value = s[site] + seam[site] * math.exp(-after / fade_s[site]) + walk[site]
                if site == "roadside-ditch":
                    value = max(value, 8.0)
                if site == "storm-culvert":
                    value = max(value, 0.0)
                stages[site] = round(value, digits[site])
            yield t, stages


def parse_time(text):
    t = dt.datetime.fromisoformat(text.replace("Z", "+00:00"))
    if t.tzinfo is None:
        raise argparse.ArgumentTypeError(f"{text}: give an offset, e.g. 2026-06-01T00:00:00-06:00")
    return t


def write_history(scenario, out):
    os.makedirs(out, exist_ok=True)
    for site, body in scenario.history_files().items():
        path = os.path.join(out, f"{site}.csv")
        with open(path + ".part", "w") as f:
            f.write("\n".join(body) + "\n")
        os.replace(path + ".part", path)


# The feeder canal as config/demo.yaml describes it, and the n its gaugings follow.
CANAL = dict(width=1.8, side_slope=1.5, slope=0.0004, offset_cm=2.0, zero_flow_cm=5.0)
CANAL_TRUE_N = 0.027
GAUGING_DAYS = (2, 4, 6, 8, 10, 12)


def canal_discharge(stage_cm, n):
    """Manning's equation (SI) for the canal's trapezoid at a logger stage, m^3/s."""
    depth = (stage_cm + CANAL["offset_cm"] - CANAL["zero_flow_cm"]) / 100.0
    if depth <= 0:
        return 0.0
    z, b = CANAL["side_slope"], CANAL["width"]
    area = (b + z * depth) * depth
    perimeter = b + 2 * depth * math.sqrt(1 + z * z)
    return area * (area / perimeter) ** (2 / 3) * math.sqrt(CANAL["slope"]) / n


def write_gaugings(scenario, path):
    stages = {t: s["feeder-canal"] for t, s in scenario.history()}
    scatter = random.Random(20260517)
    lines = ["site,time,discharge,method,uncertainty,note"]
    for day in GAUGING_DAYS:
        t = scenario.on_grid(scenario.local(day, 10))  # a reading's time: its stage is exact
        if t not in stages or canal_discharge(stages[t], CANAL_TRUE_N) <= 0:
            continue
        q = canal_discharge(stages[t], CANAL_TRUE_N) * math.exp(scatter.gauss(0.0, 0.04))
        lines.append(f"feeder-canal,{t.astimezone(UTC).strftime('%Y-%m-%dT%H:%M:%SZ')},"
                     f"{q:.4f},current meter,5,invented demo gauging at the lower headgate")
    with open(path, "w") as f:
        f.write("\n".join(lines) + "\n")


def logger_line(t, stages):
    """The raceway logger's line: local standard time without an offset (config/demo.yaml)."""
    local = t.astimezone(LOGGER_ZONE).replace(tzinfo=None)
    return f"{local.isoformat()},{stages['raceway-a']:.4f}\n"


def telemetry_lines(t, stages):
    text = t.strftime("%Y-%m-%dT%H:%M:%SZ")
    return "".join(f"{site},{text},{stages[site]}\n" for site in SITES if site != "raceway-a")


def open_follower(path, header):
    """A logger file opened for appending, with its header if it is new."""
    f = open(path, "a")
    if f.tell() == 0:
        f.write(header + "\n")
        f.flush()
    return f


def run_live(scenario, logger_dir, speed, until_s):
    os.makedirs(logger_dir, exist_ok=True)
    raceway = open_follower(os.path.join(logger_dir, "raceway-a.csv"), "time,stage")
    telemetry = open_follower(os.path.join(logger_dir, "telemetry.csv"), "site,time,stage")
    began = time.time()
    start = scenario.start.timestamp()
    for t, stages in scenario.live():
        offset_s = t.timestamp() - start
        if until_s is not None and offset_s > until_s:
            break
        # Never ahead of the clock; behind it, at once or `speed` times faster than the clock.
        due = t.timestamp() if speed is None else max(t.timestamp(), began + offset_s / speed)
        wait = due - time.time()
        if wait > 0:
            time.sleep(wait)
        # One write per line, flushed: the service reads whole lines as they arrive.
        raceway.write(logger_line(t, stages))
        raceway.flush()
        telemetry.write(telemetry_lines(t, stages))
        telemetry.flush()


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__,
                                     formatter_class=argparse.RawDescriptionHelpFormatter)
    commands = parser.add_subparsers(dest="command", required=True)
    history = commands.add_parser("history", help="write the fortnight before --now")
    history.add_argument("--out", required=True, help="folder for one CSV file per site")
    history.add_argument("--now", type=parse_time, help="RFC 3339 with offset; default: now")
    history.add_argument("--gaugings", help="also write the feeder canal's gaugings to this file")
    live = commands.add_parser("live", help="append live readings to the followed files")
    live.add_argument("--logger-dir", required=True)
    live.add_argument("--start", type=parse_time, required=True,
                      help="the --now the history was made for (RFC 3339 with offset)")
    live.add_argument("--speed", type=float,
                      help="play readings already due this many times faster than the clock "
                           "(default: at once); never ahead of the clock")
    live.add_argument("--until", type=float, help="stop after this many seconds of schedule")
    args = parser.parse_args(argv)
    if args.command == "history":
        now = args.now or dt.datetime.now(UTC)
        write_history(Scenario(now), args.out)
        if args.gaugings:
            write_gaugings(Scenario(now), args.gaugings)
    else:
        if args.speed is not None and args.speed <= 0:
            parser.error("--speed must be greater than 0")
        try:
            run_live(Scenario(args.start), args.logger_dir, args.speed, args.until)
        except KeyboardInterrupt:
            return 0
    return 0


if __name__ == "__main__":
    sys.exit(main())
