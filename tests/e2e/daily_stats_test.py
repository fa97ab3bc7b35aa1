#!/usr/bin/env python3
"""`stagewell stats --json` against pandas, numpy and scipy computed from the `daily` view.

Invented hourly readings over 14 months in America/Denver, with whole days missing, days with
holes, and a few days of constant stage (equal daily means: ties). The references:
  totals          pandas groupby on month, calendar year and water year (October start, named by
                  the year it ends in, USGS usage), volumes summed, coverage = covered time /
                  length of the whole period (also where the range cuts it), day lengths from
                  pandas.date_range in the zone; days left out = days of the range less the
                  complete ones;
  flow duration   scipy.stats.rankdata(-x, method="average") / (n + 1) on the complete days
                  (Weibull plotting position, Vogel and Fennessey 1994, ties at their mean rank),
                  and Q(p) = numpy.quantile(x, 1 - p, method="weibull") (Hyndman and Fan type 6)
                  where 1/(n+1) <= p <= n/(n+1);
  7-day minimum   pandas rolling(7).mean() over each year's days, NaN on incomplete days (the
                  annual minimum of 7-day moving averages of daily mean flow, USGS Open-File
                  Report 2007-1033);
  peaks           the highest max_discharge of the period's days, the earliest on ties.
Agreement: 1e-9 relative. Also in acre-ft and ft^3/s (43,560 ft^3 per acre-ft; 0.3048 m per ft).
"""
import os
import tempfile

import numpy as np
import pandas as pd
from scipy.stats import rankdata

import daily_support as ds

R = ds.Results()
ZONE = "America/Denver"
HOUR = 3_600_000
FT3_M3 = 0.3048 ** 3
ACRE_FT_M3 = 43560 * FT3_M3

CONFIG = f"""\
units: metric
database: db/stagewell.db
timezone: "{ZONE}"
sites:
  - id: creek
    section: {{shape: rectangular, width: 3.0, height: 2.0}}
    roughness: 0.03
    slope: 0.002
    checks: {{min_stage: 0.0, max_stage: 1.9, flatline: 0, max_gap: 90m}}
"""


def write_readings(path, rng):
    start = 1756706400000  # 2025-09-01T00:00 in Denver (06:00Z)
    n = 440 * 24
    t = start + np.arange(n) * HOUR + rng.integers(-300_000, 300_000, n)
    day = np.arange(n) / 24.0
    stage = 0.6 + 0.4 * np.sin(2 * np.pi * day / 365.0) + 0.1 * np.sin(day / 3.0) \
        + 0.01 * rng.standard_normal(n)
    stage[2400:2472] = 0.55  # three days of one stage
    t[2400:2472] = start + np.arange(2400, 2472) * HOUR  # on the hour: equal days
    keep = np.ones(n, bool)
    for first in rng.choice(n - 60, 12, replace=False):
        keep[first:first + rng.integers(2, 40)] = False  # holes of 2 h to ~1.5 days
    with open(path, "w") as f:
        f.write("site,time,stage\n")
        for a, b, k in zip(t, stage, keep):
            if k:
                f.write(f"creek,{ds.rfc3339_ms(a)},{b:.4f}\n")


def period_key(day, kind):
    if kind == "months":
        return day[:7]
    if kind == "calendar_years":
        return day[:4]
    year, month = int(day[:4]), int(day[5:7])
    return f"WY{year + (1 if month >= 10 else 0):04d}"


def whole_period(label, kind):
    """First and last day (text) of the whole period a label names, whatever the range."""
    if kind == "months":
        year, month = int(label[:4]), int(label[5:7])
        end = pd.Timestamp(year=year, month=month, day=1) + pd.offsets.MonthEnd(0)
        return f"{label}-01", end.strftime("%Y-%m-%d")
    if kind == "calendar_years":
        return f"{label}-01-01", f"{label}-12-31"
    year = int(label[2:])  # WYnnnn: October of the year before to September
    return f"{year - 1:04d}-10-01", f"{year:04d}-09-30"


def period_length_ms(label, kind):
    """The whole period's length in ms: local days of the zone from pandas.date_range."""
    first, last = whole_period(label, kind)
    return sum(end - start for start, end in ds.day_bounds(first, last, ZONE).values())


def reference(view_rows, first, last):
    bounds = ds.day_bounds(first, last, ZONE)
    days = list(bounds)
    rows = {r["day"]: r for r in view_rows if first <= r["day"] <= last}
    length = {d: bounds[d][1] - bounds[d][0] for d in days}
    frame = pd.DataFrame({
        "day": days,
        "length": [length[d] for d in days],
        "volume": [rows[d]["volume"] if d in rows and rows[d]["volume"] is not None else 0.0
                   for d in days],
        "covered": [rows[d]["coverage"] * length[d] if d in rows else 0.0 for d in days],
        "has": [d in rows for d in days],
        "mean": [rows[d]["mean_discharge"] if d in rows and rows[d]["coverage"] == 1.0
                 else np.nan for d in days],
        "peak": [rows[d]["max_discharge"] if d in rows and rows[d]["max_discharge"] is not None
                 else np.nan for d in days],
        "peak_time": [rows[d]["max_time"] if d in rows else None for d in days],
    })
    out = {}
    for kind in ("months", "calendar_years", "water_years"):
        frame["period"] = [period_key(d, kind) for d in days]
        periods = []
        for label, g in frame.groupby("period", sort=True):
            covered = g["covered"].sum()
            volume = g["volume"].sum()
            rolling = g["mean"].rolling(7, min_periods=7).mean().reset_index(drop=True)
            low = rolling.min()
            low_first = None
            if not np.isnan(low):
                low_first = g["day"].iloc[int(rolling.idxmin()) - 6]
            peak = g["peak"].max()
            peak_time = None
            if not np.isnan(peak):  # the first of equal peaks, as idxmax would give
                peak_time = g["peak_time"].iloc[int(np.nanargmax(g["peak"].values))]
            periods.append({
                "period": label, "first_day": g["day"].iloc[0], "last_day": g["day"].iloc[-1],
                "volume": volume, "coverage": covered / period_length_ms(label, kind),
                "mean_discharge": volume / (covered / 1000.0) if covered > 0 else None,
                "days_with_figures": int(g["has"].sum()),
                "min_7day_mean": None if np.isnan(low) else low, "min_7day_first_day": low_first,
                "peak_discharge": None if np.isnan(peak) else peak, "peak_time": peak_time,
            })
        out[kind] = periods
    complete = frame[~frame["mean"].isna()]
    x = complete["mean"].to_numpy()
    n = len(x)
    exceedance = rankdata(-x, method="average") / (n + 1)
    out["curve"] = dict(zip(complete["day"], zip(x, exceedance)))
    out["exceeded"] = {}
    for percent in (5, 10, 25, 50, 75, 90, 95):
        p = percent / 100
        inside = n > 0 and 1 / (n + 1) <= p <= n / (n + 1)
        out["exceeded"][percent] = (float(np.quantile(x, 1 - p, method="weibull")) if inside
                                    else None)
    out["left_out"] = len(days) - n  # every day of the range without complete figures
    return out


def compare(label, got, want, flow=1.0, volume=1.0):
    for kind in ("months", "calendar_years", "water_years"):
        R.check(f"{label} {kind}: the same periods",
                [p["period"] for p in got[kind]] == [p["period"] for p in want[kind]],
                f"{[p['period'] for p in got[kind]]} vs {[p['period'] for p in want[kind]]}")
        for g, w in zip(got[kind], want[kind]):
            name = f"{label} {kind} {w['period']}"
            R.close(f"{name} volume", g["volume"], w["volume"] * volume)
            R.close(f"{name} coverage", g["coverage"], w["coverage"])
            for key in ("mean_discharge", "min_7day_mean", "peak_discharge"):
                R.close(f"{name} {key}", g[key], None if w[key] is None else w[key] * flow)
            for key in ("first_day", "last_day", "days_with_figures", "min_7day_first_day",
                        "peak_time"):
                R.check(f"{name} {key}", g[key] == w[key], f"got {g[key]}, want {w[key]}")
    fd = got["flow_duration"]
    R.check(f"{label}: days in the curve", fd["days"] == len(want["curve"]),
            f"{fd['days']} vs {len(want['curve'])}")
    R.check(f"{label}: days left out", fd["days_left_out"] == want["left_out"])
    for point in fd["curve"]:
        mean, p = want["curve"][point["day"]]
        R.close(f"{label} curve {point['day']} discharge", point["mean_discharge"], mean * flow)
        R.close(f"{label} curve {point['day']} exceedance", point["exceedance"], p)
    flows = [point["mean_discharge"] for point in fd["curve"]]
    R.check(f"{label}: the curve runs from the largest flow", flows == sorted(flows, reverse=True))
    for item in fd["exceeded"]:
        want_q = want["exceeded"][item["percent"]]
        R.close(f"{label} Q{item['percent']}", item["discharge"],
                None if want_q is None else want_q * flow)


def main():
    args = ds.parse_args()
    program = os.path.join(args.bin_dir, "stagewell")
    rng = np.random.default_rng(2026)
    with tempfile.TemporaryDirectory(prefix="stagewell-stats-") as root:
        os.makedirs(os.path.join(root, "db"))
        config = os.path.join(root, "stagewell.yaml")
        with open(config, "w") as f:
            f.write(CONFIG)
        csv = os.path.join(root, "creek.csv")
        write_readings(csv, rng)
        ds.run(program, "ingest", "-c", config, "-q", csv)
        rows, _ = ds.daily_view(os.path.join(root, "db", "stagewell.db"), "creek")
        first, last = rows[0]["day"], rows[-1]["day"]

        want = reference(rows, first, last)
        R.check("ties: some complete days share a mean",
                len(set(m for m, _ in want["curve"].values())) < len(want["curve"]))
        R.check("some days are incomplete", want["left_out"] > 0)
        got = ds.run_json(program, "stats", "-c", config, "-s", "creek", "--json")
        R.check("the whole record by default", (got["from"], got["to"]) == (first, last))
        compare("whole record", got, want)

        # A period that cuts months and water years, in other units.
        cut_from, cut_to = "2025-11-17", "2026-10-05"
        want = reference(rows, cut_from, cut_to)
        got = ds.run_json(program, "stats", "-c", config, "-s", "creek", "--json", "--from",
                          cut_from, "--to", cut_to, "--volume-units", "acre-ft",
                          "--flow-units", "ft3/s")
        compare("clipped, acre-ft", got, want, flow=1 / FT3_M3, volume=1 / ACRE_FT_M3)

        text = ds.run(program, "stats", "-c", config, "-s", "creek")
        R.check("the text names the water years", "WY2026" in text and "WY2027" in text)
        R.check("the text carries the caution", "verify it with field measurements" in text)
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
