#!/usr/bin/env python3
"""Each reading's uncertainty band and Jones estimate, against an independent computation.

Two invented sites ride a flood wave (rise, crest, fall) with a hole longer than max_gap: a
trapezoidal canal (stage in m above a zero-flow stage) and a surveyed creek with two overbanks of
their own roughness (stage in cm). Their stored readings (the `discharge` view) are checked against
this script's own Manning's equation (daemon_support for the trapezoid; a divided-channel surveyed
section written here):

- the band (stored to a basis point, 0.01 %, of the discharge), by the first-order propagation of JCGM 100:2008 (the GUM, 5.1.2) with the sensitivity
  coefficients found numerically: central differences in numpy of ln Q in n, S and depth, each
  with a step other than the program's; u = sqrt(sum (c_i u_i)^2), band = 2u (GUM 6.2: coverage
  factor 2);
- the Jones estimate Q_J = Q sqrt(1 + (dh/dt)/(S c)), c = (dQ/dh)/T (the Jones formula as given in
  the standard open-channel texts), dh/dt from the in-range reading before, at most max_gap
  earlier; none after the hole, for the first reading, and where the root's argument is not
  positive;
- the `unsteady` flag exactly where |Q_J/Q - 1| > checks.unsteady (5 % by default, 3 % on the
  creek);
- the daily view's volume_low and volume_high against daily_support's independent integration
  (scipy) of the band's ends;
- `stagewell flow --json --rate` at one stage;
- a change of `uncertainty:` in the site's history, after `stagewell recompute`: the new band from
  the change's time on, the old one before.
"""
import json
import math
import os
import sqlite3
import subprocess
import tempfile

import numpy as np

import daemon_support as support
import daily_support as ds

R = support.Results()
MIN = 60_000
START_MS = 1_780_000_000_000 - 1_780_000_000_000 % 86_400_000  # a UTC midnight in 2026
REL = 1e-6  # the program's dQ/dh is a central difference too, with a step of its own
# Stored, both figures are rounded to a whole basis point (0.01 %) of the discharge
# (docs/uncertainty.md): half a basis point apart, and the references' difference (REL).
STORED = 0.5e-4 + REL

CANAL = dict(width=3.0, left=1.5, right=2.0, height=2.2, n=0.025, slope=0.0008, zero_flow=0.1,
             u_n=0.08, u_s=0.12, u_h=0.004)
# Station, elevation (m): a main channel between two overbanks, breaks at the bank tops.
CREEK_POINTS = [(0, 3.2), (4, 2.2), (10, 1.9), (12.5, 0.6), (16, 0.0), (19.5, 0.7), (22, 2.0),
                (30, 2.15), (34, 3.4)]
CREEK = dict(points=CREEK_POINTS, breaks=[11.0, 22.5], n=[0.06, 0.034, 0.07], slope=0.0015,
             u_n=0.10, u_s=0.10, u_h=0.5)  # u_h in cm, the creek's stage unit

CONFIG = f"""\
units: metric
database: db/stagewell.db
timezone: UTC
sites:
  - id: canal
    section: {{shape: trapezoidal, width: {CANAL['width']}, side_slope: [{CANAL['left']}, {CANAL['right']}],
               height: {CANAL['height']}}}
    roughness: {CANAL['n']}
    slope: {CANAL['slope']}
    stage: {{zero_flow: {CANAL['zero_flow']}}}
    checks: {{max_gap: 30m, flatline: 0}}
    uncertainty: {{roughness: 8%, slope: 12%, stage: {CANAL['u_h']}}}
  - id: creek
    section:
      shape: surveyed
      points: {json.dumps([list(p) for p in CREEK_POINTS])}
      breaks: {json.dumps(CREEK['breaks'])}
    roughness: {json.dumps(CREEK['n'])}
    slope: {CREEK['slope']}
    stage: {{units: cm}}
    checks: {{max_gap: 30m, flatline: 0, unsteady: 3%}}
    uncertainty: {{stage: {CREEK['u_h']}}}
{{changes}}"""

CHANGE_MS = START_MS + 15 * 3600_000
CHANGE = f"""    changes:
      - from: {ds.rfc3339_ms(CHANGE_MS)}
        uncertainty: {{roughness: 4%}}
"""


# ---- the reference sections -------------------------------------------------------------------

def surveyed_parts(points, breaks, depth):
    """[(area, wetted perimeter, top width)] of each subsection at `depth` above the lowest point:
    the polyline below the water, cut at the breaks (whose verticals add no perimeter)."""
    lowest = min(z for _, z in points)
    level = lowest + depth
    edges = [points[0][0]] + list(breaks) + [points[-1][0]]
    parts = []
    for a, b in zip(edges[:-1], edges[1:]):
        area = perimeter = top = 0.0
        for (x1, z1), (x2, z2) in zip(points[:-1], points[1:]):
            lo, hi = max(x1, a), min(x2, b)
            if x1 == x2:  # a vertical wall inside the subsection
                if a <= x1 < b or (x1 == b == edges[-1]):
                    wet = max(0.0, level - min(z1, z2)) - max(0.0, level - max(z1, z2))
                    perimeter += wet
                continue
            if hi <= lo:
                continue
            za = z1 + (z2 - z1) * (lo - x1) / (x2 - x1)
            zb = z1 + (z2 - z1) * (hi - x1) / (x2 - x1)
            if za >= level and zb >= level:
                continue
            if za < level and zb < level:
                xa, xb, ya, yb = lo, hi, za, zb
            else:  # crosses the water line
                xc = lo + (level - za) * (hi - lo) / (zb - za)
                if za < level:
                    xa, xb, ya, yb = lo, xc, za, level
                else:
                    xa, xb, ya, yb = xc, hi, level, zb
            area += (xb - xa) * (level - (ya + yb) / 2)
            perimeter += math.hypot(xb - xa, yb - ya)
            top += xb - xa
        parts.append((area, perimeter, top))
    return parts


def manning_parts(parts, roughness, slope):
    """Manning's equation (SI, k = 1) summed over subsections (the divided-channel method)."""
    q = 0.0
    for (area, perimeter, _), n in zip(parts, roughness):
        if area > 0 and perimeter > 0:
            q += area * (area / perimeter) ** (2 / 3) * math.sqrt(slope) / n
    return q


def canal_q(depth, n_scale=1.0, slope=CANAL["slope"]):
    shape = support.trapezoidal(CANAL["width"], CANAL["left"], CANAL["right"], CANAL["height"])
    return support.manning(shape, CANAL["n"] * n_scale, slope, depth)[0]


def canal_top(depth):
    return CANAL["width"] + (CANAL["left"] + CANAL["right"]) * min(depth, CANAL["height"])


def creek_q(depth, n_scale=1.0, slope=CREEK["slope"]):
    parts = surveyed_parts(CREEK["points"], CREEK["breaks"], depth)
    return manning_parts(parts, [n * n_scale for n in CREEK["n"]], slope)


def creek_top(depth):
    return sum(p[2] for p in surveyed_parts(CREEK["points"], CREEK["breaks"], depth))


SITES = {
    # id: (discharge(depth, n_scale, slope), top width(depth), depth of a stage, stage uncertainty
    #      in m, u_n, u_s, slope)
    "canal": (canal_q, canal_top, lambda s: s - CANAL["zero_flow"], CANAL["u_h"], CANAL["u_n"],
              CANAL["u_s"], CANAL["slope"]),
    "creek": (creek_q, creek_top, lambda s: s / 100.0, CREEK["u_h"] / 100.0, CREEK["u_n"],
              CREEK["u_s"], CREEK["slope"]),
}


def reference_band(site, depth, u_n=None):
    """2 u_c by the GUM's first-order propagation, sensitivity coefficients by numpy central
    differences (steps 1e-4 relative in n and S, 1e-5 of the depth)."""
    q_of, _, _, u_h, default_u_n, u_s, slope = SITES[site]
    u_n = default_u_n if u_n is None else u_n
    q = q_of(depth)
    e = 1e-4
    c_n = (math.log(q_of(depth, 1 + e)) - math.log(q_of(depth, 1 - e))) / (2 * e)  # d ln Q/d ln n
    c_s = (math.log(q_of(depth, 1, slope * (1 + e))) -
           math.log(q_of(depth, 1, slope * (1 - e)))) / (2 * e)                      # d ln Q/d ln S
    step = 1e-5 * depth
    c_h = (math.log(q_of(depth + step)) - math.log(q_of(depth - step))) / (2 * step)  # d ln Q/dh
    u = math.sqrt((c_n * u_n) ** 2 + (c_s * u_s) ** 2 + (c_h * u_h) ** 2)
    return 2.0 * u, q


def reference_jones_ratio(site, depth, rate):
    """Q_J / Q at `depth` (m) for a depth changing at `rate` m/s; None where not formed."""
    q_of, top_of, _, _, _, _, slope = SITES[site]
    step = 1e-5 * depth
    dq_dh = (q_of(depth + step) - q_of(depth - step)) / (2 * step)
    celerity = dq_dh / top_of(depth)
    argument = 1 + rate / (slope * celerity)
    return math.sqrt(argument) if argument > 0 else None


# ---- the series -------------------------------------------------------------------------------

def flood(site):
    """[(ms, stage text)] every 5 minutes over a day: a base flow, a rise to a crest at 8 h, a
    slower fall, with a hole of 45 minutes (longer than max_gap) on the falling limb."""
    out = []
    for i in range(288):
        t = START_MS + i * 5 * MIN
        hours = i * 5 / 60
        wave = math.exp(-((hours - 8) / (2.0 if hours < 8 else 4.5)) ** 2)
        if site == "canal":
            stage = f"{0.45 + 1.5 * wave:.4f}"            # m; depth 0.35 to 1.85 m
        else:
            stage = f"{40 + 230 * wave:.2f}"              # cm; over both banks at the crest
        if 150 <= i < 159:
            continue                                      # the hole: 9 readings missing, 50 minutes between neighbours
        out.append((t, stage))
    return out


def write_csv(path, rows_by_site):
    with open(path, "w") as f:
        f.write("site,time,stage\n")
        for site, rows in rows_by_site.items():
            for t, stage in rows:
                f.write(f"{site},{ds.rfc3339_ms(t)},{stage}\n")


def stored(db, site):
    con = sqlite3.connect(f"file:{db}?mode=ro", uri=True)
    rows = con.execute(
        "SELECT time_ms, stage, depth, discharge, discharge_low, discharge_high, "
        "discharge_jones, flags FROM discharge WHERE site = ? ORDER BY time_ms", (site,)).fetchall()
    con.close()
    return rows


def check_readings(db, label, change=False):
    for site in SITES:
        rows = stored(db, site)
        R.check(f"{label} {site}: readings stored", len(rows) == 279, f"{len(rows)}")
        _, _, depth_of, _, _, _, _ = SITES[site]
        limit = 0.05 if site == "canal" else 0.03
        previous = None
        jones_seen = unsteady_seen = 0
        for time_ms, stage, depth, q, low, high, jones, flags in rows:
            flags = set(filter(None, flags.split(",")))
            want_depth = depth_of(stage)
            R.close(f"{label} {site} {time_ms}: depth", depth, want_depth, 1e-12, 1e-12)
            u_n = None
            if change and site == "canal" and time_ms >= CHANGE_MS:
                u_n = 0.04
            band, q_ref = reference_band(site, depth, u_n)
            R.close(f"{label} {site} {time_ms}: discharge", q, q_ref, 1e-4)
            R.close(f"{label} {site} {time_ms}: discharge_high", high / q - 1, band, 0, STORED)
            R.close(f"{label} {site} {time_ms}: discharge_low", 1 - low / q, band, 0, STORED)
            # The Jones estimate: from the reading before, unless more than max_gap (30 min) ago.
            want = None
            if previous is not None and time_ms - previous[0] <= 30 * MIN:
                rate = (depth - previous[1]) / ((time_ms - previous[0]) / 1000.0)
                want = reference_jones_ratio(site, depth, rate)
            if want is None:
                R.check(f"{label} {site} {time_ms}: no Jones estimate", jones is None, f"{jones}")
            else:
                jones_seen += 1
                R.close(f"{label} {site} {time_ms}: discharge_jones / discharge", jones / q, want,
                        0, STORED)
                error = abs(want - 1)
                if abs(error - limit) > 1e-4:  # clear of the threshold
                    R.check(f"{label} {site} {time_ms}: unsteady where |Q_J/Q - 1| > {limit}",
                            ("unsteady" in flags) == (error > limit),
                            f"error {error:.4f}, flags {sorted(flags)}")
                    unsteady_seen += error > limit
            previous = (time_ms, depth)
        # The wave is steep enough to flag some readings and gentle enough to leave others.
        R.check(f"{label} {site}: Jones estimates formed", jones_seen > 200, f"{jones_seen}")
        R.check(f"{label} {site}: some readings unsteady, not all", 0 < unsteady_seen < jones_seen,
                f"{unsteady_seen} of {jones_seen}")


def check_daily(db, label):
    for site in SITES:
        con = sqlite3.connect(f"file:{db}?mode=ro", uri=True)
        rows = con.execute("SELECT time_ms, discharge_low, discharge_high, flags FROM discharge "
                           "WHERE site = ? ORDER BY time_ms", (site,)).fetchall()
        view = {r[0]: r[1:] for r in con.execute(
            "SELECT day, volume_low, volume_high FROM daily WHERE site = ?", (site,))}
        con.close()
        flags = [frozenset(f for f in r[3].split(",") if f) for r in rows]
        t = np.array([r[0] for r in rows], dtype=np.int64)
        for column, index in (("volume_low", 0), ("volume_high", 1)):
            frame = ds.pd.DataFrame({"t": t, "q": np.array([r[1 + index] for r in rows]),
                                     "flags": flags})
            want = ds.reference_days(frame, "UTC", 30 * MIN, {"out_of_range"}, {"spike"})
            for day, figures in want.items():
                R.close(f"{label} {site} {day}: {column}", view[day][index], figures["volume"],
                        1e-9)


def main():
    args = support.parse_args()
    _, program = support.programs(args)
    with tempfile.TemporaryDirectory() as tmp:
        config = os.path.join(tmp, "stagewell.yaml")
        support.write(config, CONFIG.replace("{changes}", ""))
        data = os.path.join(tmp, "flood.csv")
        write_csv(data, {site: flood(site) for site in SITES})
        ds.run(program, "ingest", "-c", config, "-q", data)
        db = os.path.join(tmp, "db", "stagewell.db")
        check_readings(db, "ingest")
        check_daily(db, "ingest")

        # flow --json --rate: one stage of the creek, rising 30 cm/h.
        out = ds.run_json(program, "flow", "-c", config, "-s", "creek", "--stage", "185.5",
                          "--rate", "30", "--json")
        band, q_ref = reference_band("creek", 1.855)
        R.close("flow: discharge", out["discharge"], q_ref, 1e-9)
        R.close("flow: band_percent", out["band_percent"] / 100, band, REL)
        R.close("flow: discharge_high", out["discharge_high"], q_ref * (1 + band), REL)
        R.close("flow: discharge_jones", out["discharge_jones"] / out["discharge"],
                reference_jones_ratio("creek", 1.855, 0.30 / 3600), REL)
        R.check("flow: the rate's unit", out["units"].get("rate") == "cm/h", f"{out['units']}")
        # Falling so fast that the root's argument is negative: no estimate.
        out = ds.run_json(program, "flow", "-c", config, "-s", "creek", "--stage", "185.5",
                          "--rate", "-1e6", "--json")
        R.check("flow: no Jones estimate for an impossible fall", out["discharge_jones"] is None,
                f"{out['discharge_jones']}")

        # A change of uncertainty in the canal's history: recomputed from its time on.
        support.write(config, CONFIG.replace("{changes}", "").replace(
            "    uncertainty: {roughness: 8%, slope: 12%, stage: 0.004}\n",
            "    uncertainty: {roughness: 8%, slope: 12%, stage: 0.004}\n" + CHANGE))
        ds.run(program, "recompute", "-c", config, "-s", "canal", "-q")
        check_readings(db, "after a change", change=True)
        check_daily(db, "after a change")
    support.exit_with(R)


if __name__ == "__main__":
    main()
