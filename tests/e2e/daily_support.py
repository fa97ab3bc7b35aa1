"""Shared pieces of the daily-figure end-to-end tests (not a test itself: ctest runs only files
named *_test.py): invented stage series, running `stagewell`, reading the views, and the
independent reference for daily figures.

The reference is written from the definitions in docs/daily-and-statistics.md ("Definitions"), not
from the C++: the discharge is made a piecewise-linear function with numpy.interp on a grid that
holds every used reading and every day boundary, the grid segments that fall in a missing stretch
are masked, and each day is integrated with scipy.integrate.trapezoid over its runs of valid
segments (exact for a piecewise-linear function). Day boundaries come from pandas.date_range over
the IANA zone or the fixed offset; minima, maxima and counts from pandas groupby on the local date.
"""
import datetime as dt
import json
import os
import sqlite3
import subprocess
import sys

import numpy as np
import pandas as pd
from scipy.integrate import trapezoid

import daemon_support

REL = 1e-9  # the agreement required of the daily figures (docs/daily-and-statistics.md)


class Results(daemon_support.Results):
    """daemon_support.Results, comparing at the 1e-9 relative agreement by default."""

    def close(self, label, got, want, rel_tol=REL, abs_tol=1e-12):
        return super().close(label, got, want, rel_tol, abs_tol)


parse_args = daemon_support.parse_args


def run(program, *args, expect=0):
    """Runs `stagewell ARGS`; returns stdout. Exits the test when the status is not `expect`."""
    done = subprocess.run([program, *map(str, args)], capture_output=True, text=True)
    if done.returncode != expect:
        print(f"stagewell {' '.join(map(str, args))} exited {done.returncode}, want {expect}\n"
              f"stdout: {done.stdout}\nstderr: {done.stderr}", flush=True)
        sys.exit(1)
    return done.stdout


def run_json(program, *args):
    return json.loads(run(program, *args))


# ---- times -------------------------------------------------------------------------------------

def zone_of(name):
    """A pandas-usable zone for a configuration `timezone`: an IANA name or "+HH:MM"."""
    if name[0] in "+-":
        sign = -1 if name[0] == "-" else 1
        hours, minutes = int(name[1:3]), int(name[4:6])
        return dt.timezone(sign * dt.timedelta(hours=hours, minutes=minutes))
    return name


def rfc3339_ms(ms):
    """RFC 3339 UTC text for integer ms, '.mmm' only when there are milliseconds (the views)."""
    seconds, millis = divmod(int(ms), 1000)
    text = dt.datetime.fromtimestamp(seconds, dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%S")
    return text + (f".{millis:03d}" if millis else "") + "Z"


def day_bounds(first_day, last_day, zone):
    """{day text: (start ms, end ms)} for local days first..last, from pandas.date_range."""
    starts = pd.date_range(pd.Timestamp(first_day), pd.Timestamp(last_day) + pd.Timedelta(days=1),
                           freq="D", tz=zone)
    ms = [int(s.value // 1_000_000) for s in starts]
    return {s.strftime("%Y-%m-%d"): (ms[i], ms[i + 1]) for i, s in enumerate(starts[:-1])}


# ---- the database ------------------------------------------------------------------------------

def stored_readings(db, site):
    """The site's readings from the `discharge` view: DataFrame t (int ms), q (float or NaN),
    flags (set of names)."""
    con = sqlite3.connect(f"file:{db}?mode=ro", uri=True)
    rows = con.execute("SELECT unix_time, discharge, flags FROM discharge WHERE site = ? "
                       "ORDER BY unix_time", (site,)).fetchall()
    con.close()
    return pd.DataFrame({
        "t": np.array([round(r[0] * 1000) for r in rows], dtype=np.int64),
        "q": np.array([np.nan if r[1] is None else r[1] for r in rows], dtype=float),
        "flags": [frozenset(f for f in r[2].split(",") if f) for r in rows],
    })


def daily_view(db, site):
    con = sqlite3.connect(f"file:{db}?mode=ro", uri=True)
    con.row_factory = sqlite3.Row
    rows = [dict(r) for r in con.execute("SELECT * FROM daily WHERE site = ? ORDER BY day",
                                         (site,))]
    flags = {}
    for day, flag, count in con.execute("SELECT day, flag, readings FROM daily_flags "
                                        "WHERE site = ?", (site,)):
        flags.setdefault(day, {})[flag] = count
    con.close()
    return rows, flags


# ---- the reference -----------------------------------------------------------------------------

def reference_days(readings, zone, max_gap_ms, excluded, bridged):
    """Daily figures of `readings` (stored_readings) by the definitions in
    docs/daily-and-statistics.md.

    excluded, bridged: sets of flag names. Returns {day: dict} with the `daily` view's columns
    (times as ms) plus 'flags' {name: count}; days with neither readings nor covered time left out.
    """
    t = readings["t"].to_numpy()
    q = readings["q"].to_numpy()
    flags = list(readings["flags"])
    status = []
    for f, value in zip(flags, q):
        if f & excluded:
            status.append("x")
        elif f & bridged:
            status.append("b")
        elif np.isnan(value):
            status.append("x")
        else:
            status.append("u")
    status = np.array(status)

    # Intervals: consecutive readings once bridged ones are dropped; valid when both ends are
    # used and they are at most max_gap apart.
    kept = status != "b"
    tk, sk = t[kept], status[kept]
    pair_valid = (sk[:-1] == "u") & (sk[1:] == "u") & (np.diff(tk) <= max_gap_ms)
    used = status == "u"
    tu, qu = t[used], q[used]

    local = pd.to_datetime(t, unit="ms", utc=True).tz_convert(zone)
    local_day = np.array(local.strftime("%Y-%m-%d"))
    first = min(local_day)
    last = max(local_day)
    bounds = day_bounds(pd.Timestamp(first) - pd.Timedelta(days=1),
                        pd.Timestamp(last) + pd.Timedelta(days=1), zone)
    edges = sorted({e for b in bounds.values() for e in b})

    grid = np.unique(np.concatenate([tu, np.array(edges, dtype=np.int64)]))
    values = np.interp(grid.astype(float), tu.astype(float), qu)
    mids = (grid[:-1] + grid[1:]) / 2.0
    j = np.searchsorted(tk, mids, side="right") - 1
    seg_valid = (j >= 0) & (j < len(tk) - 1)
    seg_valid[seg_valid] = pair_valid[j[seg_valid]]

    frame = pd.DataFrame({"day": local_day, "t": t, "q": q, "used": used,
                          "flagged": [bool(f) for f in flags]})
    counts = frame.groupby("day").size()
    flagged = frame.groupby("day")["flagged"].sum()
    used_frame = frame[frame["used"]]
    idx_min = used_frame.groupby("day")["q"].idxmin()
    idx_max = used_frame.groupby("day")["q"].idxmax()
    flag_counts = {}
    for day, f in zip(local_day, flags):
        for name in f:
            flag_counts.setdefault(day, {}).setdefault(name, 0)
            flag_counts[day][name] += 1

    out = {}
    for day, (start, end) in bounds.items():
        lo = np.searchsorted(grid, start)
        hi = np.searchsorted(grid, end)  # grid[hi] == end
        volume = 0.0
        covered = 0
        k = lo
        while k < hi:  # runs of valid segments k..m-1 between grid points k..m
            if not seg_valid[k]:
                k += 1
                continue
            m = k
            while m < hi and seg_valid[m]:
                m += 1
            volume += trapezoid(values[k:m + 1], grid[k:m + 1] / 1000.0)
            covered += int(grid[m] - grid[k])
            k = m
        n = int(counts.get(day, 0))
        if n == 0 and covered == 0:
            continue
        row = {
            "day": day,
            "volume": volume if covered > 0 else None,
            "mean_discharge": volume / (covered / 1000.0) if covered > 0 else None,
            "min_discharge": None, "min_time": None, "max_discharge": None, "max_time": None,
            "coverage": covered / (end - start),
            "readings": n,
            "flagged": int(flagged.get(day, 0)),
            "flags": flag_counts.get(day, {}),
        }
        if day in idx_min.index:
            row["min_discharge"] = float(q[idx_min[day]])
            row["min_time"] = int(t[idx_min[day]])
            row["max_discharge"] = float(q[idx_max[day]])
            row["max_time"] = int(t[idx_max[day]])
        out[day] = row
    return out


def compare_days(results, label, got_rows, want, flow_factor=1.0, volume_factor=1.0,
                 times_are_text=True):
    """Compares rows of the `daily` view or `stagewell daily --json` with reference_days()."""
    got = {r["day"]: r for r in got_rows}
    results.check(f"{label}: the same days", sorted(got) == sorted(want),
                  f"got {sorted(got)}, want {sorted(want)}")
    for day in sorted(set(got) & set(want)):
        g, w = got[day], want[day]

        def scaled(value, factor):
            return None if value is None else value * factor

        results.close(f"{label} {day} volume", g["volume"], scaled(w["volume"], volume_factor))
        for key in ("mean_discharge", "min_discharge", "max_discharge"):
            results.close(f"{label} {day} {key}", g[key], scaled(w[key], flow_factor))
        results.close(f"{label} {day} coverage", g["coverage"], w["coverage"])
        for key in ("min_time", "max_time"):
            want_time = None if w[key] is None else rfc3339_ms(w[key])
            results.check(f"{label} {day} {key}", g[key] == want_time,
                          f"got {g[key]}, want {want_time}")
        for key in ("readings", "flagged"):
            results.check(f"{label} {day} {key}", g[key] == w[key], f"got {g[key]}, want {w[key]}")
