#!/usr/bin/env python3
"""`stagewelld` raising and clearing alarms from a tailed logger file, read through the `alarms`
view as the page and the metrics read it.

  low_flow  a run of low stages raises once the hold is complete and clears above the clear level;
            the expected times are worked out here from the lines this script wrote and Manning's
            equation in closed form (daemon_support.manning), not taken from the program.
  late      lines older than the newest stored reading raise nothing, even a run of them that
            would complete the hold.
  stale     when lines stop coming, stale is raised at a clock tick at least `after` after the
            newest reading; it stays one open alarm across a restart, and a fresh line clears it.
"""
import datetime
import os
import tempfile
import time

import daemon_support as ds

R = ds.Results()
MIN = 60_000

WIDTH, N, SLOPE = 2.0, 0.014, 0.001
BELOW, HYSTERESIS, HOLD_MIN = 0.2, 0.05, 10  # m^3/s, m^3/s, minutes
STALE_S = 5
# Every wait is bounded by this. Generous: on a loaded machine (ctest -j2 beside the big ingest
# tests) a commit has been seen to take over a minute; a passing run waits only seconds.
WAIT_S = 120

CONFIG = f"""\
units: metric
database: db/stagewell.db
sources:
  - type: tail
    path: logger/stage.csv
    site: raceway
sites:
  - id: raceway
    section: {{shape: rectangular, width: {WIDTH}, height: 1.0}}
    roughness: {N}
    slope: {SLOPE}
    alarms:
      low_flow: {{below: {BELOW}, hysteresis: {HYSTERESIS}, hold: {HOLD_MIN}m}}
      stale: {{after: {STALE_S}s}}
"""
HEADER = "time,stage\n"

# One reading a minute for 40 minutes: normal flow, a 15-minute drop, a partial recovery that
# stays inside the hysteresis band, then back to normal. Stage in m (offset and zero flow 0, so
# depth = stage).
STAGES = [0.30] * 10 + [0.10] * 15 + [0.16] * 5 + [0.30] * 10


def expected_low_flow(times_ms, stages):
    """(raised_ms, raised_q, cleared_ms) from the rules in docs/checks-and-alarms.md, "Alarms":
    raise at the reading that completes HOLD of consecutive readings below BELOW; clear at the first
    reading above BELOW + HYSTERESIS."""
    shape = ds.rectangular(WIDTH, 1.0)
    raised = cleared = raised_q = None
    run_start = None
    for t, s in zip(times_ms, stages):
        q, _ = ds.manning(shape, N, SLOPE, s)
        if raised is None:
            if q < BELOW:
                run_start = t if run_start is None else run_start
                if t - run_start >= HOLD_MIN * MIN:
                    raised, raised_q = t, q
            else:
                run_start = None
        elif cleared is None and q > BELOW + HYSTERESIS:
            cleared = t
    return raised, raised_q, cleared


def ms_of(text):
    """Milliseconds since the epoch of the view's RFC 3339 UTC text (Python's datetime)."""
    parsed = datetime.datetime.fromisoformat(text.replace("Z", "+00:00"))
    return round(parsed.timestamp() * 1000)


def alarm_rows(db, kind):
    return ds.query(db, "SELECT raised, cleared, value, threshold FROM alarms "
                        "WHERE site = 'raceway' AND kind = ? ORDER BY raised", (kind,))


def main():
    args = ds.parse_args()
    daemon_program, _ = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        config = os.path.join(root, "stagewell.yaml")
        ds.write(config, CONFIG)
        db = os.path.join(root, "db", "stagewell.db")
        path = os.path.join(root, "logger", "stage.csv")
        log = os.path.join(root, "daemon.log")
        ds.write(path, HEADER)

        # Readings end a minute before now (whole seconds), so none is flagged future.
        end_ms = (int(time.time()) - 60) * 1000
        times = [end_ms - (len(STAGES) - 1 - i) * MIN for i in range(len(STAGES))]
        raised, raised_q, cleared = expected_low_flow(times, STAGES)
        R.check("the series raises and clears (test set-up)", raised and cleared)

        with ds.Daemon(daemon_program, config, log).start() as daemon:
            ds.append(path, "".join(f"{ds.iso(t)},{s:.2f}\n" for t, s in zip(times, STAGES)))
            rows = ds.wait_until(lambda: [r for r in alarm_rows(db, "low_flow") if r[1]], WAIT_S)
            R.check("low_flow raised and cleared", rows, daemon.log()[-2000:])
            if rows:
                R.check("one low_flow alarm", len(alarm_rows(db, "low_flow")) == 1)
                got_raised, got_cleared, value, threshold = rows[0]
                R.check("raised at the reading completing the hold", got_raised == ds.iso(raised),
                        f"{got_raised} vs {ds.iso(raised)}")
                R.check("cleared at the first reading above below + hysteresis",
                        got_cleared == ds.iso(cleared), f"{got_cleared} vs {ds.iso(cleared)}")
                R.close("value is the discharge that raised it", value, raised_q, 1e-3)
                R.check("threshold is `below`", threshold == BELOW)

            # Late lines (30 s after each of the first 11 readings, flagged late): low enough to
            # raise low_flow had they been taken in arrival order (11 readings over 10 min), but
            # late readings move no alarm.
            late = [(t + 30_000, 0.05) for t in times[:11]]
            ds.append(path, "".join(f"{ds.iso(t)},{s:.2f}\n" for t, s in late))
            stored = ds.wait_until(lambda: ds.count(
                db, "SELECT count(*) FROM discharge WHERE site = 'raceway'") == len(times) + 11, WAIT_S)
            R.check("late lines stored", stored)
            R.check("late lines raise no alarm", len(alarm_rows(db, "low_flow")) == 1,
                    f"{alarm_rows(db, 'low_flow')}")

            # Lines have stopped: a tick at least STALE_S after the newest reading raises stale.
            stale = ds.wait_until(lambda: alarm_rows(db, "stale"), WAIT_S)
            R.check("stale raised once readings stop", stale, daemon.log()[-2000:])
            if stale:
                raised_text, cleared_text, value, threshold = stale[0]
                R.check("stale is open", cleared_text is None)
                R.check("stale threshold is `after` in seconds", threshold == STALE_S)
                R.check("stale value is at least `after`", value >= STALE_S, f"{value}")
                R.check("stale raised at least `after` past the newest reading",
                        ms_of(raised_text) >= times[-1] + STALE_S * 1000, raised_text)
            log_text = daemon.log()
            R.check("the raise is logged as a warning with units",
                    "alarm raised: site raceway low_flow" in log_text and "m³/s" in log_text)
            R.check("the clear is logged", "alarm cleared: site raceway low_flow" in log_text)
            R.check("daemon stopped cleanly", daemon.stop(WAIT_S) == 0)

        # Restart: the open stale alarm is restored, not raised again; a fresh line clears it.
        with ds.Daemon(daemon_program, config, log).start() as daemon:
            started = ds.wait_until(lambda: daemon.log().count("started:") >= 2, WAIT_S)
            R.check("daemon restarted", started, daemon.log()[-2000:])
            fresh_ms = int(time.time()) * 1000
            ds.append(path, f"{ds.iso(fresh_ms)},0.30\n")
            rows = ds.wait_until(lambda: [r for r in alarm_rows(db, "stale") if r[1]], WAIT_S)
            R.check("a fresh reading clears stale", rows, daemon.log()[-2000:])
            R.check("stale was one alarm across the restart", len(alarm_rows(db, "stale")) == 1,
                    f"{alarm_rows(db, 'stale')}")
            R.check("the open alarms are those with cleared NULL",
                    ds.count(db, "SELECT count(*) FROM alarms WHERE cleared IS NULL") == 0)
            R.check("daemon stopped cleanly", daemon.stop(WAIT_S) == 0)
    ds.exit_with(R)


if __name__ == "__main__":
    main()
