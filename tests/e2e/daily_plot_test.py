#!/usr/bin/env python3
"""`stagewell plot`: the SVG files parse as XML (Python's xml.etree), gaps are drawn as gaps,
flagged readings are marked by shape as well as colour, the axes carry units, values sit where
the axis says, and the duration curve runs along its plotting positions.

What is compared comes from outside the plotting code: the runs between gaps are counted from
the `discharge` view with the rule of docs/daily-and-statistics.md (a break where readings are more
than max_gap apart, and for discharge at readings without one); the value-to-pixel mapping is read
back from the SVG's own tick labels; the curve's points from `stagewell stats --json`.
"""
import os
import re
import tempfile
import xml.etree.ElementTree as ET

import numpy as np

import daily_support as ds

R = ds.Results()
SVG = "{http://www.w3.org/2000/svg}"
MIN = 60_000
GAP = 30 * MIN

CONFIG = """\
units: metric
database: db/stagewell.db
timezone: "America/Denver"
sites:
  - id: ditch
    name: Test ditch
    section: {shape: triangular, side_slope: 2.0, height: 1.0}
    roughness: 0.03
    slope: 0.004
    checks: {min_stage: 0.0, max_stage: 0.9, spike: 0.2, flatline: 0, max_gap: 30m}
"""


def write_readings(path):
    start = 1772780400000  # 2026-03-06T00:00 in Denver
    rng = np.random.default_rng(7)
    n = 12 * 288
    t = start + np.arange(n) * 5 * MIN
    stage = 0.3 + 0.2 * np.sin(np.arange(n) / 40.0) + 0.005 * rng.standard_normal(n)
    keep = np.ones(n, bool)
    keep[300:312] = False   # an hour: a gap
    keep[700:703] = False   # 20 minutes: not a gap
    stage[400] = 0.95       # out of range: no discharge
    stage[500] = stage[499] + 0.3  # a spike
    with open(path, "w") as f:
        f.write("site,time,stage\n")
        for a, b, k in zip(t, stage, keep):
            if k:
                f.write(f"ditch,{ds.rfc3339_ms(a)},{b:.4f}\n")


def runs(readings, with_discharge):
    """How many unbroken lines a series makes (docs/daily-and-statistics.md, `stagewell plot`)."""
    count, previous = 0, None
    for t, q in zip(readings["t"], readings["q"]):
        if with_discharge and np.isnan(q):
            previous = None
            continue
        if previous is None or t - previous > GAP:
            count += 1
        previous = t
    return count


def group(root, cls):
    found = [g for g in root.iter(f"{SVG}g") if g.get("class") == cls]
    return found


def lines_in(g):
    return len(g.findall(f"{SVG}polyline")) + len(g.findall(f"{SVG}circle"))


def points(polyline):
    return [tuple(map(float, p.split(","))) for p in polyline.get("points").split()]


def axis_map(y_axis):
    """value -> y from the tick labels of one y-axis group (label drawn 4 px below its line)."""
    ticks = [(float(t.text), float(t.get("y")) - 4) for t in y_axis.findall(f"{SVG}text")
             if t.get("text-anchor") == "end"]
    (v0, y0), (v1, y1) = ticks[0], ticks[-1]
    return lambda v: y0 + (v - v0) * (y1 - y0) / (v1 - v0)


def texts(root):
    return [t.text or "" for t in root.iter(f"{SVG}text")]


def check_hydrograph(path, readings, flow_symbol, factor):
    root = ET.parse(path).getroot()  # raises if the file is not well-formed XML
    discharge, stage = group(root, "discharge")[0], group(root, "stage")[0]
    R.check("discharge: one line per run between gaps", lines_in(discharge) == runs(readings, True),
            f"{lines_in(discharge)} vs {runs(readings, True)}")
    R.check("stage: one line per run between gaps", lines_in(stage) == runs(readings, False),
            f"{lines_in(stage)} vs {runs(readings, False)}")
    all_text = " ".join(texts(root))
    R.check("the discharge axis names its unit", f"Discharge ({flow_symbol})" in all_text)
    R.check("the stage axis names its unit", "Stage (m)" in all_text)
    R.check("the time axis names its zone", "Local time (America/Denver)" in all_text)
    R.check("the caution line", "verify it with field measurements" in all_text)

    # The highest discharge is the highest point, where the axis's own ticks put it.
    to_y = axis_map(group(root, "y-axis")[0])
    top = min(y for line in discharge.findall(f"{SVG}polyline") for _, y in points(line))
    R.close("the peak sits at its value on the axis", top, to_y(np.nanmax(readings["q"]) * factor),
            rel_tol=0, abs_tol=0.02)

    # Markers: a cross for out_of_range (left out, time missing), a triangle for the spike
    # (bridged), a circle for the gap flag (used): three shapes, three colours.
    flagged = group(root, "flagged")[0]
    shapes = {}
    for element in flagged:
        tag = element.tag.replace(SVG, "")
        d = element.get("d", "")
        shape = "circle" if tag == "circle" else ("triangle" if d.endswith("Z") else "cross")
        colour = re.search(r"stroke:(#[0-9a-f]{6})", element.get("style")).group(1)
        shapes.setdefault(shape, set()).add(colour)
    R.check("three marker shapes", set(shapes) == {"circle", "triangle", "cross"}, str(shapes))
    colours = [c for cs in shapes.values() for c in cs]
    R.check("one colour per shape, all different", len(colours) == len(set(colours)) == 3,
            str(shapes))
    legend = " ".join(texts(group(root, "legend")[0]))
    for name in ("out_of_range", "spike", "gap"):
        R.check(f"the legend names {name}", name in legend, legend)


def check_duration(path, stats):
    root = ET.parse(path).getroot()
    curve = group(root, "duration")[0].findall(f"{SVG}polyline")
    want = [p for p in stats["flow_duration"]["curve"] if p["mean_discharge"] > 0]
    R.check("the curve has a point per complete day", len(curve) == 1 and
            len(points(curve[0])) == len(want), f"{len(want)} days")
    if not curve:
        return
    xs = [x for x, _ in points(curve[0])]
    ys = [y for _, y in points(curve[0])]
    # x = left edge + exceedance x plot width: check against the stats' plotting positions.
    left, width = 90.0, 1000.0 - 90.0 - 50.0
    for (x, _), p in zip(points(curve[0]), want):
        R.close(f"curve x at exceedance {p['exceedance']:.4f}", x, left + p["exceedance"] * width,
                rel_tol=0, abs_tol=0.006)
    R.check("flows fall as exceedance grows", xs == sorted(xs) and ys == sorted(ys))
    all_text = " ".join(texts(root))
    R.check("the axis says log scale and its unit", "Daily mean discharge (m³/s), log scale"
            in all_text)


def main():
    args = ds.parse_args()
    program = os.path.join(args.bin_dir, "stagewell")
    with tempfile.TemporaryDirectory(prefix="stagewell-plot-") as root:
        os.makedirs(os.path.join(root, "db"))
        config = os.path.join(root, "stagewell.yaml")
        with open(config, "w") as f:
            f.write(CONFIG)
        csv = os.path.join(root, "ditch.csv")
        write_readings(csv)
        ds.run(program, "ingest", "-c", config, "-q", csv)
        stored = ds.stored_readings(os.path.join(root, "db", "stagewell.db"), "ditch")
        # The hydrograph's period: 2026-03-06 to 2026-03-09 local, [06T07:00Z, 10T06:00Z).
        readings = stored[(stored["t"] >= 1772780400000) & (stored["t"] < 1773122400000)]
        R.check("the flags the picture needs are there",
                all(any(name in f for f in readings["flags"])
                    for name in ("out_of_range", "spike", "gap")))

        svg = os.path.join(root, "hydrograph.svg")
        out = ds.run(program, "plot", "-c", config, "-s", "ditch", "--from", "2026-03-06",
                     "--to", "2026-03-09", "--out", svg)
        R.check("the command says what it wrote, with the caution", svg in out and
                "verify it with field measurements" in out)
        check_hydrograph(svg, readings, "m³/s", 1.0)
        ds.run(program, "plot", "-c", config, "-s", "ditch", "--from", "2026-03-06",
               "--to", "2026-03-09", "--out", svg, "--flow-units", "L/s")
        check_hydrograph(svg, readings, "L/s", 1000.0)

        svg = os.path.join(root, "duration.svg")
        ds.run(program, "plot", "-c", config, "-s", "ditch", "--from", "2026-03-06", "--to",
               "2026-03-17", "--out", svg, "--kind", "duration")
        stats = ds.run_json(program, "stats", "-c", config, "-s", "ditch", "--from", "2026-03-06",
                            "--to", "2026-03-17", "--json")
        check_duration(svg, stats)
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
