"""`stagewell gaugings import`, `gaugings list` and `calibrate` against independent references.

References:
- Manning's equation for a rectangular channel, Q = (1/n) A R^(2/3) S^(1/2), A = b y, P = b + 2 y,
  R = A/P (SI units; common practice, also V. T. Chow, Open-Channel Hydraulics, 1959, ch. 5):
  daemon_support.manning. The stored rating is within 1e-6 relative of it (docs/hydraulics.md), so
  computed discharges are compared to 1e-5 relative.
- The `gaugings` view's difference_percent = 100 (Qm - Qc) / Qc and implied_roughness = n Qc / Qm
  (Q proportional to 1/n), from their definitions with Qc from the formula above.
- Linear interpolation of stage between the two stored readings around a time (its definition).
- The roughness fit: ln f = mean of ln(Qc / Qm) (least squares on logarithms), 95 % interval
  ln f +- t(0.975, N - 1) s / sqrt(N): standard statistics, Student's t interval on the mean of the
  log ratios; numpy.mean / numpy.std(ddof=1) and scipy.stats.t.ppf as the reference, to 1e-9
  relative.
"""
import json
import math
import os
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET

import numpy
import scipy.stats

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import daemon_support as ds  # noqa: E402

WIDTH, HEIGHT, SLOPE = 2.0, 1.5, 0.001  # m, m, m/m
N_CONFIG, N_TRUE, N_EDITED = 0.020, 0.026, 0.022
MAX_STAGE = 1.4  # m: checks.max_stage
START_MS = 1777593600000  # 2026-05-01T00:00:00Z (Python: datetime(2026,5,1,tzinfo=utc))
STEP_MS = 600_000  # 10 minutes
COUNT = 145  # one day and the midnight that ends it
SCATTER = 0.05  # standard deviation of ln(measured / true), invented
GAUGINGS = 12

CONFIG = f"""units: metric
database: flows.db
timezone: UTC
sites:
  - id: canal
    section: {{shape: rectangular, width: {WIDTH}, height: {HEIGHT}}}
    roughness: {{n}}
    slope: {SLOPE}
    checks: {{max_gap: 1h, min_stage: -0.5, max_stage: {MAX_STAGE}}}
"""
SHAPE = ds.rectangular(WIDTH, HEIGHT)


def write_config(path, n):
    ds.write(path, CONFIG.replace("{n}", str(n)))


def flow(stage, n):
    return ds.manning(SHAPE, n, SLOPE, stage)[0]


def stage_at(i):
    """Invented smooth stage, m."""
    return round(0.6 + 0.3 * math.sin(2 * math.pi * i / 144), 4)


SVG = "{http://www.w3.org/2000/svg}"


def group(root, cls):
    return [g for g in root.iter(f"{SVG}g") if g.get("class") == cls]


def tick_map(g, anchor, coordinate, offset):
    """value -> pixel from one axis group's tick labels (x labels centred under their line, y
    labels drawn 4 px below theirs)."""
    ticks = [(float(t.text), float(t.get(coordinate)) - offset) for t in g.findall(f"{SVG}text")
             if t.get("text-anchor") == anchor and t.text.replace(".", "").replace("-", "").isdigit()]
    (v0, p0), (v1, p1) = ticks[0], ticks[-1]
    return lambda pixel: v0 + (pixel - p0) * (v1 - v0) / (p1 - p0)


def check_rating_plot(r, path, view):
    root = ET.parse(path).getroot()  # raises if the file is not well-formed XML
    circles = group(root, "gaugings")[0].findall(f"{SVG}circle")
    r.check("rating plot: a circle per gauging", len(circles) == 16, str(len(circles)))
    differences = group(root, "differences")[0].findall(f"{SVG}circle")
    r.check("rating plot: a difference per gauging with a computed discharge",
            len(differences) == 14, str(len(differences)))
    stage_of = tick_map(group(root, "y-axis")[0], "end", "y", 4)
    labelled = [g for g in group(root, "x-axis") if g.findall(f"{SVG}text")]
    q_of = tick_map(labelled[0], "middle", "x", 0)
    worst = 0.0
    line = group(root, "rating")[0].find(f"{SVG}polyline")
    for pair in line.get("points").split():
        x, y = map(float, pair.split(","))
        stage, q = stage_of(y), q_of(x)
        worst = max(worst, abs(q - flow(stage, N_EDITED)))
    # Coordinates are written to 0.01 px: a few thousandths of the axis in discharge.
    r.check("rating plot: the curve is Manning's equation with the n in force", worst < 0.02,
            f"worst {worst:.4f} m^3/s")
    # The band Q (1 +- band) (uncertainty.hpp; its width is checked by the readings' tests): an
    # area around the line, as far to the right of it as to the left (by its definition).
    bands = group(root, "band")
    r.check("rating plot: a band", len(bands) == 1)
    if bands:
        corners = [tuple(map(float, c.lstrip("ML").split(",")))
                   for c in bands[0].find(f"{SVG}path").get("d").rstrip("Z").split()]
        curve_points = [tuple(map(float, pair.split(","))) for pair in line.get("points").split()]
        half = len(corners) // 2
        lows, highs = corners[:half], corners[half:][::-1]
        # The low end never goes below 0 (x = 90 px, the panel's left edge): those points are not
        # symmetric by definition.
        worst_asymmetry = max(abs((x - lo[0]) - (hi[0] - x)) for (x, _), lo, hi
                              in zip(curve_points, lows, highs) if lo[0] > 90.01)
        r.check("rating plot: the band is as wide on both sides of the line",
                len(lows) == len(curve_points) and worst_asymmetry < 0.05,
                f"worst {worst_asymmetry:.3f} px")
        r.check("rating plot: the band has a width at the top",
                highs[-1][0] - lows[-1][0] > 1.0, f"{lows[-1]} {highs[-1]}")
    stages = sorted(stage_of(float(c.get("cy"))) for c in circles)
    want = sorted(v[0] for v in view.values())
    r.check("rating plot: circles at the gaugings' stages",
            all(abs(a - b) < 1e-3 for a, b in zip(stages, want)), f"{stages} vs {want}")


def run(*command):
    return subprocess.run(command, capture_output=True, text=True, timeout=120)


def main():
    args = ds.parse_args()
    _, stagewell = ds.programs(args)
    r = ds.Results()
    with tempfile.TemporaryDirectory() as tmp:
        config = os.path.join(tmp, "site.yaml")
        db = os.path.join(tmp, "flows.db")
        write_config(config, N_CONFIG)
        readings = ["site,time,stage"] + [
            f"canal,{ds.iso(START_MS + i * STEP_MS)},{stage_at(i)}" for i in range(COUNT)]
        data = os.path.join(tmp, "canal.csv")
        ds.write(data, "\n".join(readings) + "\n")
        done = run(stagewell, "ingest", "--config", config, "--quiet", data)
        r.check("readings ingested", done.returncode == 0, done.stderr)

        # Gaugings from a known n with log-normal scatter (fixed seed), at invented stages; two
        # more with the stage left to interpolation, one above max_stage (out_of_range), one at
        # negative depth (below_zero_flow).
        rng = numpy.random.default_rng(20261203)
        stages = rng.uniform(0.2, 1.2, GAUGINGS)
        scatter = rng.normal(0.0, SCATTER, GAUGINGS)
        times = [START_MS + 3_600_000 + k * 3_600_000 for k in range(GAUGINGS)]  # hourly from 01:00
        lines = ["time,site,discharge,stage,method,uncertainty,note"]
        measured = {}
        for t, stage, e in zip(times, stages, scatter):
            measured[t] = flow(stage, N_TRUE) * math.exp(e)
            lines.append(f"{ds.iso(t)},canal,{measured[t]!r},{stage!r},current meter,6,")
        interp_times = [START_MS + 3 * STEP_MS + 180_000, START_MS + 100 * STEP_MS + 420_000]
        for t in interp_times:
            measured[t] = 1.0
            lines.append(f"{ds.iso(t)},canal,1.0,,acoustic,,\"interpolated, no staff reading\"")
        high_ms, dry_ms = START_MS + 30 * 60_000, START_MS + 90 * 60_000
        lines.append(f"{ds.iso(high_ms)},canal,9.0,1.45,float,,")
        lines.append(f"{ds.iso(dry_ms)},canal,0,-0.1,volumetric,,")
        sheet = os.path.join(tmp, "gaugings.csv")
        ds.write(sheet, "\n".join(lines) + "\n")

        done = run(stagewell, "gaugings", "import", "--config", config, sheet)
        r.check("import", done.returncode == 0, done.stdout + done.stderr)
        r.check("import summary", "gaugings stored: 16 (0 replacing stored ones, 2 with the stage "
                "interpolated" in done.stdout, done.stdout)
        r.check("import shows the caution", "licensed engineer" in done.stdout, done.stdout)
        columns = ("time_ms, stage, stage_interpolated, measured, uncertainty, method, note, "
                   "computed, roughness, config_id")
        first = ds.query(db, f"SELECT {columns} FROM gauging_records ORDER BY time_ms")
        done = run(stagewell, "gaugings", "import", "--config", config, sheet)
        r.check("import again", done.returncode == 0 and "16 replacing" in done.stdout,
                done.stdout + done.stderr)
        second = ds.query(db, f"SELECT {columns} FROM gauging_records ORDER BY time_ms")
        r.check("import is idempotent: the same rows", first == second and len(first) == 16,
                f"{len(first)} then {len(second)} rows")

        # Interpolated stages against linear interpolation of the readings around them.
        rows = {row[0]: row for row in second}
        for t in interp_times:
            i = (t - START_MS) // STEP_MS
            t0, t1 = START_MS + i * STEP_MS, START_MS + (i + 1) * STEP_MS
            want = stage_at(i) + (stage_at(i + 1) - stage_at(i)) * (t - t0) / (t1 - t0)
            r.close(f"interpolated stage at {ds.iso(t)}", rows[t][1], want, 1e-12, 1e-12)
            r.check(f"marked interpolated at {ds.iso(t)}", rows[t][2] == 1)
            r.check(f"default uncertainty at {ds.iso(t)}", rows[t][4] == 5.0, str(rows[t][4]))
        r.check("note with a comma kept",
                rows[interp_times[0]][6] == "interpolated, no staff reading", str(rows[interp_times[0]]))
        r.check("uncertainty as written", rows[times[0]][4] == 6.0)
        r.check("out of range: no computed discharge", rows[high_ms][7] is None, str(rows[high_ms]))

        # The view against Manning's equation computed here.
        view = {t: (s, qm, qc, d, n) for t, s, qm, qc, d, n in ds.query(
            db, "SELECT time_ms, stage, measured, computed, difference_percent, implied_roughness "
                "FROM gaugings WHERE site = 'canal'")}
        for t in times + interp_times:
            stage, qm, qc, diff, implied = view[t]
            want_qc = flow(stage, N_CONFIG)
            r.close(f"computed at {ds.iso(t)}", qc, want_qc, 1e-5)
            r.close(f"difference_percent at {ds.iso(t)}", diff, 100 * (qm - want_qc) / want_qc,
                    1e-5, 1e-4)
            r.close(f"implied_roughness at {ds.iso(t)}", implied, N_CONFIG * want_qc / qm, 1e-5)
        r.check("dry gauging: no difference", view[dry_ms][3] is None and view[dry_ms][4] is None,
                str(view[dry_ms]))

        # gaugings list: JSON and text.
        done = run(stagewell, "gaugings", "list", "--config", config, "--site", "canal", "--json")
        r.check("list --json", done.returncode == 0, done.stderr)
        listed = json.loads(done.stdout) if done.returncode == 0 else {}
        r.check("list --json keys", {"site", "stage_unit", "discharge_unit", "gaugings"}
                <= set(listed), str(listed.keys()))
        r.check("list units as UCUM", listed.get("stage_unit") == "m"
                and listed.get("discharge_unit") == "m3/s", str(listed.get("discharge_unit")))
        entry_keys = {"time", "stage", "measured", "computed", "difference_percent",
                      "implied_roughness", "method", "note", "version"}
        r.check("list --json: 16 gaugings with their keys", len(listed.get("gaugings", [])) == 16
                and all(entry_keys <= set(g) for g in listed["gaugings"]))
        done = run(stagewell, "gaugings", "list", "--config", config, "--site", "canal",
                   "--flow-units", "L/s")
        r.check("list text with units in headers", done.returncode == 0
                and "measured L/s" in done.stdout and "stage m" in done.stdout
                and "implied n" in done.stdout and "licensed engineer" in done.stdout,
                done.stdout + done.stderr)

        # calibrate: the fit against numpy and scipy on the same computed and measured values.
        done = run(stagewell, "calibrate", "--config", config, "--site", "canal", "--json")
        r.check("calibrate --json", done.returncode == 0, done.stderr)
        fit = json.loads(done.stdout) if done.returncode == 0 else {}
        keys = {"count", "roughness", "roughness_fit", "roughness_low", "roughness_high",
                "rms_difference_percent_before", "rms_difference_percent_after", "used",
                "left_out", "change"}
        r.check("calibrate --json keys", keys <= set(fit), str(sorted(set(fit))))
        used = [t for t in times + interp_times]
        log_ratio = numpy.array([math.log(view[t][2] / view[t][1]) for t in sorted(used)])
        mean = numpy.mean(log_ratio)
        half = (scipy.stats.t.ppf(0.975, len(log_ratio) - 1) * numpy.std(log_ratio, ddof=1)
                / math.sqrt(len(log_ratio)))
        # The two interpolated gaugings (1 m^3/s at whatever stage) are part of the set: the fit
        # uses every usable gauging; recovery of N_TRUE is checked below without them.
        r.check("count", fit.get("count") == len(used), str(fit.get("count")))
        r.close("roughness now", fit.get("roughness", 0), N_CONFIG, 1e-12)
        r.close("roughness_fit = n exp(mean)", fit.get("roughness_fit", 0),
                N_CONFIG * math.exp(mean), 1e-9)
        r.close("roughness_low", fit.get("roughness_low", 0), N_CONFIG * math.exp(mean - half), 1e-9)
        r.close("roughness_high", fit.get("roughness_high", 0), N_CONFIG * math.exp(mean + half),
                1e-9)
        qc = numpy.array([view[t][2] for t in sorted(used)])
        qm = numpy.array([view[t][1] for t in sorted(used)])
        r.close("rms before", fit.get("rms_difference_percent_before", 0),
                math.sqrt(numpy.mean((100 * (qm - qc) / qc) ** 2)), 1e-9)
        after = qc / math.exp(mean)
        r.close("rms after", fit.get("rms_difference_percent_after", 0),
                math.sqrt(numpy.mean((100 * (qm - after) / after) ** 2)), 1e-9)
        reasons = {g["time"]: g["reason"] for g in fit.get("left_out", [])}
        r.check("left out: above max_stage", reasons.get(ds.iso(high_ms), "").startswith(
            "out_of_range"), str(reasons))
        r.check("left out: below zero flow", reasons.get(ds.iso(dry_ms), "").startswith(
            "below_zero_flow"), str(reasons))
        r.check("change entry", fit.get("change", "").startswith(
            f"      - from: {ds.iso(min(used))}\n        roughness: "), fit.get("change", ""))

        # Recovery of the known n from the seeded gaugings alone (the first and last hourly ones
        # bound the period; the interpolated ones fall outside it).
        window = ["--from", ds.iso(times[0]), "--to", ds.iso(times[-1])]
        done = run(stagewell, "calibrate", "--config", config, "--site", "canal", "--json", *window)
        seeded = json.loads(done.stdout) if done.returncode == 0 else {}
        seeded_ratio = numpy.array([math.log(view[t][2] / view[t][1]) for t in times])
        want_mean = numpy.mean(seeded_ratio)
        want_half = (scipy.stats.t.ppf(0.975, GAUGINGS - 1) * numpy.std(seeded_ratio, ddof=1)
                     / math.sqrt(GAUGINGS))
        r.check("seeded set: count", seeded.get("count") == GAUGINGS, done.stdout + done.stderr)
        r.close("seeded set: fit equals scipy's", seeded.get("roughness_fit", 0),
                N_CONFIG * math.exp(want_mean), 1e-9)
        r.close("seeded set: low equals scipy's", seeded.get("roughness_low", 0),
                N_CONFIG * math.exp(want_mean - want_half), 1e-9)
        r.close("seeded set: high equals scipy's", seeded.get("roughness_high", 0),
                N_CONFIG * math.exp(want_mean + want_half), 1e-9)
        r.check("seeded set: the interval holds the true n",
                seeded.get("roughness_low", 1) <= N_TRUE <= seeded.get("roughness_high", 0),
                f"{seeded.get('roughness_low')} .. {seeded.get('roughness_high')}")
        r.check("seeded set: no warnings", seeded.get("warnings") == [], str(seeded.get("warnings")))
        r.close("seeded set: the fit recovers the true n within the scatter",
                seeded.get("roughness_fit", 0), N_TRUE, 0.05)

        # Text output names its units and the caution.
        done = run(stagewell, "calibrate", "--config", config, "--site", "canal", *window)
        r.check("calibrate text", done.returncode == 0 and "95 % interval" in done.stdout
                and "m³/s" in done.stdout and "changes:" in done.stdout
                and "licensed engineer" in done.stdout, done.stdout + done.stderr)

        # Fewer than 3 usable gaugings: refused.
        done = run(stagewell, "calibrate", "--config", config, "--site", "canal", "--from",
                   ds.iso(times[0]), "--to", ds.iso(times[1]))
        r.check("fewer than 3: refused", done.returncode != 0
                and "2 usable gaugings: a roughness fit needs at least 3" in done.stderr,
                done.stdout + done.stderr)

        # A configuration edit shows at once: computed again with the new n.
        write_config(config, N_EDITED)
        done = run(stagewell, "gaugings", "list", "--config", config, "--site", "canal", "--json")
        edited = {g["time"]: g for g in json.loads(done.stdout)["gaugings"]} if \
            done.returncode == 0 else {}
        t = times[3]
        r.close("computed follows the edited n", edited.get(ds.iso(t), {}).get("computed", 0),
                flow(view[t][0], N_EDITED), 1e-5)

        # The rating plot: the curve of the version in force (now N_EDITED) against Manning's
        # equation, read back through the axes' tick labels; one circle per gauging, one
        # difference per gauging with a computed discharge.
        svg_path = os.path.join(tmp, "rating.svg")
        done = run(stagewell, "plot", "--config", config, "--site", "canal", "--from",
                   "2026-05-01", "--to", "2026-05-02", "--kind", "rating", "--out", svg_path)
        r.check("plot --kind rating", done.returncode == 0, done.stdout + done.stderr)
        if done.returncode == 0:
            check_rating_plot(r, svg_path, view)

        # Bad lines: refused with their line numbers, the good ones stored; a unit option.
        bad = os.path.join(tmp, "bad.csv")
        late_ms = START_MS + 3 * 86_400_000  # no readings around it
        ds.write(bad, "site,time,discharge,stage\n"
                      f"canal,{ds.iso(late_ms)},1.0,\n"
                      f"nowhere,{ds.iso(START_MS)},1.0,0.5\n"
                      f"canal,{ds.iso(START_MS)},-1,0.5\n"
                      f"canal,{ds.iso(START_MS + 60_000)},250,0.5\n")
        done = run(stagewell, "gaugings", "import", "--config", config, "--flow-units", "L/s", bad)
        r.check("bad lines: exit status 1", done.returncode == 1, str(done.returncode))
        r.check("no readings around: refused", f"bad.csv:2: no stage given" in done.stderr,
                done.stderr)
        r.check("unknown site: refused", "bad.csv:3: unknown site 'nowhere'" in done.stderr,
                done.stderr)
        r.check("negative: refused", "bad.csv:4: discharge '-1' is negative" in done.stderr,
                done.stderr)
        (stored,) = ds.query(db, "SELECT measured FROM gauging_records WHERE time_ms = ?",
                             (START_MS + 60_000,))[0]
        r.close("--flow-units L/s: 250 L/s stored as 0.25 m^3/s", stored, 0.25, 1e-15)
    ds.exit_with(r)


if __name__ == "__main__":
    main()
