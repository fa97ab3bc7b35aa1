#!/usr/bin/env python3
"""The demo is live: deploy/make_demo_data.py's history ends at the moment it is made for, and its
live feed, read by stagewelld on config/demo.yaml, raises the storm's alarms on the schedule that
README.md ("The demo") and deploy/demo.sh promise.

1. `history --now T` for several T (the present, both daylight-saving changes, the 1 June 2026
   that docs/ use): every site's last reading is at T or at most one step (10 min) before it, its
   first a fortnight earlier; the times of each file increase.
2. The service on the demo configuration (paths moved to a temporary directory, its own port;
   the raceway's `stale` alarm left out, see below), the history for a start time T0 nine minutes
   ago dropped into its incoming folder, then `live --start T0 --speed 30 --until 480`: the first
   eight minutes of the live schedule in about 16 s. Every reading's time is in the past, so
   nothing is `future`; the alarms that judge readings by their own times (low_flow, rising) move
   exactly as they would in real time. `stale` judges the service's clock against the newest
   reading, which this compressed run keeps minutes old on purpose, so it is left out; instead
   the feed's readings are checked to be far closer together than its 5 minutes.
   Expected alarms are computed from the files the generator wrote (demo_support: the rules of
   docs/checks-and-alarms.md, Manning's equation in closed form, the thresholds read from
   demo.yaml) and compared with the `alarms` view; their times after T0 must fall in the windows
   the README gives.
"""
import datetime
import glob
import os
import subprocess
import tempfile
import time

import daemon_support as ds
import demo_support as demo
import http_support as hs

R = ds.Results()
FORTNIGHT_MS = 14 * 86_400_000
SCHEDULE_S = 480   # the part of the live schedule played: 8 minutes
SPEED = 30         # ... in 16 s
MINUTE_MS = 60_000

# What README.md ("The demo") and deploy/demo.sh's banner say, in minutes after the start.
CREEK_RISING_OPENS = (0.5, 3.0)    # "about 1 to 2.5 minutes in"
RACEWAY_LOW_OPENS = (3.0, 4.0)     # "about 3.5 minutes in"
RACEWAY_LOW_CLEARS = (4.5, 5.5)    # "about 5 minutes in"


def check_history_ends_at(source, now_text, root):
    out = os.path.join(root, "history-" + now_text.replace(":", ""))
    made = demo.make_history(source, now_text, out)
    if not R.check(f"history --now {now_text} ran", made.returncode == 0, made.stderr[-1000:]):
        return
    now_ms = demo.ms_of(now_text)
    for site in demo.DEMO_SITES:
        times = [t for t, _ in demo.parsed(demo.rows_of(os.path.join(out, f"{site}.csv")), site)]
        R.check(f"{now_text} {site}: the last reading is at most one step before now",
                times and now_ms - demo.HISTORY_STEP_MS < times[-1] <= now_ms,
                f"last {ds.iso(times[-1]) if times else None}")
        R.check(f"{now_text} {site}: the first reading is a fortnight before now",
                times and 0 <= times[0] - (now_ms - FORTNIGHT_MS) < demo.HISTORY_STEP_MS,
                f"first {ds.iso(times[0]) if times else None}")
        R.check(f"{now_text} {site}: times increase",
                all(a < b for a, b in zip(times, times[1:])))


def main():
    args = ds.parse_args()
    stagewelld, _ = ds.programs(args)
    source = os.path.abspath(args.source_dir)
    text, config = demo.demo_config(source)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        present = datetime.datetime.now(datetime.timezone.utc).replace(microsecond=0)
        # America/Denver changes clocks on 14 March and 7 November 2027 (US rule, second Sunday
        # of March and first Sunday of November, 02:00 local; from memory): fortnights across both.
        for now_text in (present.isoformat(), "2027-03-20T12:34:56-06:00",
                         "2027-11-12T05:06:07Z", "2026-06-01T00:00:00-06:00"):
            check_history_ends_at(source, now_text, root)
        run_live(stagewelld, source, text, config, root)
    ds.exit_with(R)


def run_live(stagewelld, source, text, config, root):
    port = hs.free_port()
    incoming, logger = os.path.join(root, "incoming"), os.path.join(root, "logger")
    os.makedirs(incoming)
    path = os.path.join(root, "demo.yaml")
    ds.write(path, demo.relocated_config(text, root, port,
                                         drop=[r"(?m)^      stale: .*\n"]))
    start = (datetime.datetime.now(datetime.timezone.utc).replace(microsecond=0) -
             datetime.timedelta(minutes=9))
    start_text = start.isoformat()
    start_ms = demo.ms_of(start_text)
    history = os.path.join(root, "history")
    made = demo.make_history(source, start_text, history)
    R.check("history for the run", made.returncode == 0, made.stderr[-1000:])
    for name in sorted(os.listdir(history)):
        with open(os.path.join(history, name)) as f:
            ds.drop_file(incoming, name, f.read())
    db = os.path.join(root, "stagewell.db")
    with ds.Daemon(stagewelld, path, os.path.join(root, "daemon.log")).start() as daemon:
        R.check("history read", ds.wait_until(
            lambda: not glob.glob(os.path.join(incoming, "*.csv")), 60), daemon.log()[-2000:])
        history_end = {site: ds.count(db, "SELECT max(time_ms) FROM discharge WHERE site = ?",
                                      (site,)) for site in demo.DEMO_SITES}
        R.check("the history ends at the start",
                all(t == start_ms for t in history_end.values()), history_end)
        began = time.monotonic()
        feed = subprocess.run(demo.live_command(source, logger, start_text, "--speed", str(SPEED),
                                                "--until", str(SCHEDULE_S)),
                              capture_output=True, text=True, timeout=120)
        took = time.monotonic() - began
        R.check("the live feed ran", feed.returncode == 0, feed.stderr[-1000:])
        R.check(f"--speed {SPEED} compresses the schedule ({took:.1f} s)",
                SCHEDULE_S / SPEED - 2 <= took <= SCHEDULE_S / SPEED + 20, took)
        raceway_live = demo.raceway_logger_rows(os.path.join(logger, "raceway-a.csv"))
        telemetry = demo.rows_of(os.path.join(logger, "telemetry.csv"))
        expected = len(raceway_live) + len(telemetry)
        R.check("every live reading stored", ds.wait_until(
            lambda: ds.count(db, "SELECT count(*) FROM discharge WHERE time_ms > ?",
                             (start_ms,)) == expected, 60), expected)
        check_live_readings(db, start_ms, raceway_live, telemetry)
        check_alarms(config, db, start_ms, raceway_live, telemetry, history)
        R.check("daemon stops cleanly", daemon.stop() == 0, daemon.log()[-2000:])


def check_live_readings(db, start_ms, raceway_live, telemetry):
    """Each site reports every 10 s from the start; the live readings are neither late nor
    future (the history was in first, and the feed is never ahead of the clock)."""
    stale_after = 5 * MINUTE_MS  # raceway-a's stale.after in demo.yaml
    for site in demo.DEMO_SITES:
        times = [t for t, _ in raceway_live] if site == "raceway-a" else \
            [t for t, _ in demo.parsed(telemetry, site)]
        R.check(f"{site}: live readings every 10 s from the start for 8 minutes",
                times == [start_ms + k * demo.LIVE_STEP_MS
                          for k in range(1, SCHEDULE_S * 1000 // demo.LIVE_STEP_MS + 1)],
                f"{len(times)} readings, first {times[:1]}")
        R.check(f"{site}: readings far closer together than raceway-a's stale.after",
                all(b - a < stale_after / 10 for a, b in zip(times, times[1:])))
    bad = ds.query(db, "SELECT site, time, flags FROM discharge WHERE time_ms > ? AND "
                       "(flags LIKE '%late%' OR flags LIKE '%future%')", (start_ms,))
    R.check("no live reading is late or future", bad == [], bad[:5])


def check_alarms(config, db, start_ms, raceway_live, telemetry, history):
    raceway = demo.parsed(demo.rows_of(os.path.join(history, "raceway-a.csv")), "raceway-a")
    creek_site = "brindlewick-creek"
    creek = demo.parsed(demo.rows_of(os.path.join(history, f"{creek_site}.csv")), creek_site)
    low = demo.raceway_low_flow(config, raceway + raceway_live)
    rising = demo.creek_rising(config, creek + demo.parsed(telemetry, creek_site))
    got_low = demo.alarm_events(db, "raceway-a", "low_flow")
    got_rising = demo.alarm_events(db, creek_site, "rising")
    R.check("raceway-a low_flow raised and cleared as computed", got_low == low,
            f"got {got_low}, want {low}")
    R.check("brindlewick-creek rising raised and cleared as computed", got_rising == rising,
            f"got {got_rising}, want {rising}")
    others = ds.query(db, "SELECT site, kind FROM alarms WHERE NOT ((site = 'raceway-a' AND "
                          "kind = 'low_flow') OR (site = ? AND kind = 'rising'))", (creek_site,))
    R.check("no other alarms", others == [], others)

    def minutes(t):
        return None if t is None else (t - start_ms) / MINUTE_MS

    live_low = [(minutes(r), minutes(c)) for r, c in low if r > start_ms]
    live_rising = [(minutes(r), minutes(c)) for r, c in rising if r > start_ms]
    R.check("the history's alarms are all closed by the start",
            all(c is not None and c <= start_ms for r, c in low + rising if r <= start_ms))
    R.check("raceway-a: one live low-flow alarm, opened and cleared on schedule "
            f"(README: opens {RACEWAY_LOW_OPENS}, clears {RACEWAY_LOW_CLEARS} min in)",
            len(live_low) == 1 and
            RACEWAY_LOW_OPENS[0] <= live_low[0][0] <= RACEWAY_LOW_OPENS[1] and
            live_low[0][1] is not None and
            RACEWAY_LOW_CLEARS[0] <= live_low[0][1] <= RACEWAY_LOW_CLEARS[1], live_low)
    R.check("brindlewick-creek: the live rising alarm opens on schedule and stays open "
            f"(README: opens {CREEK_RISING_OPENS} min in, clears after an hour)",
            len(live_rising) == 1 and
            CREEK_RISING_OPENS[0] <= live_rising[0][0] <= CREEK_RISING_OPENS[1] and
            live_rising[0][1] is None, live_rising)
    print(f"live alarms, minutes after the start: raceway-a low_flow {live_low}, "
          f"brindlewick-creek rising {live_rising}", flush=True)


if __name__ == "__main__":
    main()
