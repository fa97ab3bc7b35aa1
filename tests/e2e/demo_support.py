"""Shared pieces of the demo's end-to-end tests (not a test itself: ctest runs only files named
*_test.py): the demo's data generator (deploy/make_demo_data.py) run as a program, its files read
back independently, the demo configuration moved to a temporary directory, and the alarm rules of
docs/checks-and-alarms.md, "Alarms", written out here so that expected alarms are computed without
the program.
"""
import datetime
import os
import re
import subprocess
import sys

import yaml  # python3-yaml (deploy/setup.sh): reads config/demo.yaml independently of the program

import daemon_support as ds

HISTORY_STEP_MS = 600_000  # the history's readings are 10 minutes apart (make_demo_data.py)
LIVE_STEP_MS = 10_000      # the live feed's, 10 seconds
DEMO_SITES = ("raceway-a", "feeder-canal", "roadside-ditch", "storm-culvert",
              "brindlewick-creek")


def generator(source_dir):
    return os.path.join(source_dir, "deploy", "make_demo_data.py")


def make_history(source_dir, now_text, out_dir):
    """Runs `make_demo_data.py history --now now_text --out out_dir` (a CompletedProcess)."""
    return subprocess.run([sys.executable, generator(source_dir), "history", "--now", now_text,
                           "--out", out_dir], capture_output=True, text=True, timeout=60)


def live_command(source_dir, logger_dir, start_text, *extra):
    return [sys.executable, generator(source_dir), "live", "--logger-dir", logger_dir,
            "--start", start_text, *extra]


def ms_of(text):
    """Milliseconds since the epoch of an RFC 3339 time with its offset (Python's datetime)."""
    return round(datetime.datetime.fromisoformat(text.replace("Z", "+00:00")).timestamp() * 1000)


def rows_of(path):
    """[(site, time text, stage text)] of a CSV file with a site,time,stage header ('#' comments
    skipped), every line as written, bad ones included."""
    out = []
    with open(path) as f:
        for line in f:
            if line.startswith("#") or line.startswith("site,") or not line.strip():
                continue
            site, time_text, stage = line.strip().split(",")
            out.append((site, time_text, stage))
    return out


def parsed(rows, site):
    """[(ms, stage)] of the rows of `site` whose time parses (the bad lines left out)."""
    out = []
    for s, time_text, stage in rows:
        if s != site:
            continue
        try:
            out.append((ms_of(time_text), float(stage)))
        except ValueError:
            continue
    return out


def raceway_logger_rows(path):
    """[(ms, stage)] of the raceway logger's followed file: time,stage with the time in local
    standard time, UTC-07:00, written without an offset (the source's time_zone in demo.yaml)."""
    out = []
    with open(path) as f:
        next(f)  # time,stage
        for line in f:
            time_text, stage = line.strip().split(",")
            out.append((ms_of(time_text + "-07:00"), float(stage)))
    return out


def demo_config(source_dir):
    with open(os.path.join(source_dir, "config", "demo.yaml")) as f:
        text = f.read()
    return text, yaml.safe_load(text)


def site_of(config, site_id):
    return next(s for s in config["sites"] if s["id"] == site_id)


def duration_ms(text):
    """A duration of the configuration ('90s', '15m', '2h', '1d', '1h30m') in ms, as
    docs/checks-and-alarms.md writes them."""
    units = {"s": 1000, "m": 60_000, "h": 3_600_000, "d": 86_400_000}
    parts = re.findall(r"(\d+(?:\.\d+)?)([smhd])", str(text))
    if not parts or "".join(a + b for a, b in parts) != str(text):
        raise ValueError(f"not a duration: {text!r}")
    return round(sum(float(value) * units[unit] for value, unit in parts))


def threshold_alarm(series, raises, clears, hold_ms):
    """[(raised_ms, cleared_ms or None)] for values in time order: raised at the value that
    completes hold_ms of values meeting `raises`, cleared at the first value meeting `clears`
    (docs/checks-and-alarms.md, "Alarms": hold and hysteresis)."""
    events, open_since, run_start = [], None, None
    for t, v in series:
        if open_since is not None:
            if clears(v):
                events.append((open_since, t))
                open_since = None
            continue
        if not raises(v):
            run_start = None
            continue
        run_start = t if run_start is None else run_start
        if t - run_start >= hold_ms:
            open_since, run_start = t, None
    if open_since is not None:
        events.append((open_since, None))
    return events


def rates(series, window_ms):
    """[(t, m/h)]: change from the oldest reading within the window to this one, when the window
    holds at least half a window of readings (docs/checks-and-alarms.md, "Alarms")."""
    out, window = [], []
    for t, stage in series:
        window.append((t, stage))
        window = [(u, s) for u, s in window if u >= t - window_ms]
        span = t - window[0][0]
        if span > 0 and 2 * span >= window_ms:
            out.append((t, (stage - window[0][1]) / (span / 3_600_000)))
    return out


def raceway_low_flow(config, series):
    """Expected low_flow alarms of raceway-a for [(ms, stage m)] in time order. Its section and
    thresholds are read from demo.yaml; discharge is Manning's equation in closed form
    (daemon_support.manning) at depth = stage + offset - zero_flow."""
    site = site_of(config, "raceway-a")
    section, stage = site["section"], site["stage"]
    assert section["shape"] == "rectangular" and stage["units"] == "m"
    shape = ds.rectangular(section["width"], section["height"])
    low = site["alarms"]["low_flow"]
    discharge = [(t, ds.manning(shape, site["roughness"], site["slope"],
                                s + stage.get("offset", 0.0) - stage["zero_flow"])[0])
                 for t, s in series
                 if site["checks"]["min_stage"] <= s <= site["checks"]["max_stage"]]
    below, hysteresis = low["below"], low.get("hysteresis", 0.0)
    return threshold_alarm(discharge, lambda q: q < below, lambda q: q > below + hysteresis,
                           duration_ms(low.get("hold", "0s")))


def creek_rising(config, series):
    """Expected rising alarms of brindlewick-creek for [(ms, stage m)] in time order; readings
    outside the stage range are left out of the rate (docs/checks-and-alarms.md, "Alarms")."""
    site = site_of(config, "brindlewick-creek")
    rising = site["alarms"]["rising"]
    in_range = [(t, s) for t, s in series
                if site["checks"]["min_stage"] <= s <= site["checks"]["max_stage"]]
    rate, hysteresis = rising["rate"], rising.get("hysteresis", 0.0)
    return threshold_alarm(rates(in_range, duration_ms(rising.get("window", "1h"))),
                           lambda r: r > rate, lambda r: r < rate - hysteresis,
                           duration_ms(rising.get("hold", "0s")))


def alarm_events(db, site, kind):
    """[(raised ms, cleared ms or None)] of the `alarms` view."""
    rows = ds.query(db, "SELECT raised, cleared FROM alarms WHERE site = ? AND kind = ? "
                        "ORDER BY raised", (site, kind))
    return [(ms_of(r), ms_of(c) if c else None) for r, c in rows]


def relocated_config(text, root, port=None, drop=()):
    """demo.yaml's text with its files in `root` (database root/stagewell.db, no log file, the
    sources under root/), the status page on `port` (or none), and each line matching a pattern
    of `drop` removed."""
    text = text.replace("../var/demo/", root.rstrip("/") + "/")
    text = re.sub(r"(?m)^log:\n(  .*\n)+", "", text)  # no log file: the log goes to stderr
    if port is None:
        text = re.sub(r"(?m)^http:\n(  .*\n)+", "", text)
    else:
        text = text.replace("127.0.0.1:8207", f"127.0.0.1:{port}")
    for pattern in drop:
        text = re.sub(pattern, "", text)
    return text
