#!/usr/bin/env python3
"""`stagewell flow --json` and `stagewell depth --json` against an independent computation.

The reference here is written separately from the C++ core: closed-form geometry for the
prismatic shapes (common practice; circular-segment formulas as in V. T. Chow, Open-Channel
Hydraulics, 1959, appendix A, from memory), a segment-by-segment integration for surveyed
sections, Manning's equation with k = (1/0.3048)^(1/3) in US units, and scipy.optimize.brentq
(Debian python3-scipy) for normal and critical depth. Agreement required: 1e-6 relative.
"""
import argparse
import json
import math
import os
import re
import subprocess
import sys
import tempfile

from scipy.optimize import brentq

G_SI = 9.80665
FT = 0.3048
REL = 1e-6

failures = []


def check(label, got, want, rel=REL, abs_tol=1e-12):
    if want is None or got is None:
        if got != want:
            failures.append(f"{label}: got {got}, want {want}")
        return
    if not math.isclose(got, want, rel_tol=rel, abs_tol=abs_tol):
        failures.append(f"{label}: got {got!r}, want {want!r} (rel err {abs(got - want) / max(abs(want), 1e-300):.2e})")


# ---- independent geometry: (area, wetted perimeter, top width) per subsection ----

def prismatic(b, zl, zr, height):
    def geom(y):
        if y <= 0:
            return [(0.0, 0.0, 0.0)]
        # Above the top the walls continue vertically at the top width.
        yi = min(y, height)
        area = (b + 0.5 * (zl + zr) * yi) * yi
        perim = b + yi * (math.sqrt(1 + zl * zl) + math.sqrt(1 + zr * zr))
        top = b + (zl + zr) * yi
        if y > height:
            area += top * (y - height)
            perim += 2 * (y - height)
        return [(area, perim, top)]
    return geom, height


def circular(d):
    def geom(y):
        if y <= 0:
            return [(0.0, 0.0, 0.0)]
        if y >= d:
            return [(math.pi * d * d / 4, math.pi * d, 0.0)]
        theta = 2 * math.acos(1 - 2 * y / d)
        return [(d * d * (theta - math.sin(theta)) / 8, d * theta / 2, d * math.sin(theta / 2))]
    return geom, d


def surveyed(points, breaks):
    zmin = min(z for _, z in points)
    top = min(points[0][1], points[-1][1]) - zmin
    edges = [points[0][0]] + list(breaks) + [points[-1][0]]

    def geom(y):
        out = []
        if y <= 0:
            return [(0.0, 0.0, 0.0) for _ in range(len(edges) - 1)]
        h = zmin + y
        # Extend the end points with vertical walls so that depths above the lower bank work.
        pts = [(points[0][0], max(h, points[0][1]) + 1)] + list(points) + \
              [(points[-1][0], max(h, points[-1][1]) + 1)]
        for lo, hi in zip(edges[:-1], edges[1:]):
            area = perim = top_w = 0.0
            for (x1, z1), (x2, z2) in zip(pts[:-1], pts[1:]):
                # Clip the segment to this subsection's stations.
                a, b_ = max(min(x1, x2), lo), min(max(x1, x2), hi)
                if x1 == x2:  # vertical wall: belongs to the subsection holding its station
                    if lo < x1 < hi or x1 == lo == edges[0] or x1 == hi == edges[-1]:
                        zlo, zhi = min(z1, z2), max(z1, z2)
                        perim += max(0.0, min(h, zhi) - zlo)
                    continue
                if b_ <= a:
                    continue
                def z_at(x):
                    return z1 + (z2 - z1) * (x - x1) / (x2 - x1)
                za, zb = z_at(a), z_at(b_)
                # Submerged part of [a, b_]: where z < h.
                if za >= h and zb >= h:
                    continue
                if za < h and zb < h:
                    sa, sb = a, b_
                elif za < h:
                    sa, sb = a, a + (h - za) / (zb - za) * (b_ - a)
                else:
                    sa, sb = a + (h - za) / (zb - za) * (b_ - a), b_
                zsa, zsb = z_at(sa), z_at(sb)
                area += (sb - sa) * (h - 0.5 * (zsa + zsb))
                perim += math.hypot(sb - sa, zsb - zsa)
                top_w += sb - sa
            out.append((area, perim, top_w))
        return out
    return geom, top


def state(geom_fn, roughness, slope, k, g, y):
    parts = geom_fn(y)
    area = sum(p[0] for p in parts)
    perim = sum(p[1] for p in parts)
    top = sum(p[2] for p in parts)
    q = 0.0
    for (a, p, _), n in zip(parts, roughness):
        if a > 0 and p > 0:
            q += k / n * a * (a / p) ** (2 / 3) * math.sqrt(slope)
    v = q / area if area > 0 else 0.0
    # A full conduit (water, no top width) has no free surface and so no Froude number, which
    # compares V with the speed of a surface wave, sqrt(g A/T) (common practice): None.
    froude = v / math.sqrt(g * area / top) if area > 0 and top > 0 else (None if area > 0 else 0.0)
    return dict(area=area, wetted_perimeter=perim, hydraulic_radius=area / perim if perim else 0.0,
                top_width=top, velocity=v, discharge=q, froude=froude,
                hydraulic_depth=(area / top if top > 0 else (None if area > 0 else 0.0)))


# ---- the channels: (id, section yaml, geometry in metres, n list, slope) ----

def channels():
    yield ("rect", {"shape": "rectangular", "width": 2.4, "height": 1.2}, prismatic(2.4, 0, 0, 1.2), [0.014], 0.0015)
    yield ("trap", {"shape": "trapezoidal", "width": 3.0, "side_slope": [1.5, 2.0], "height": 1.5},
           prismatic(3.0, 1.5, 2.0, 1.5), [0.025], 0.0004)
    yield ("tri", {"shape": "triangular", "side_slope": 2.0, "height": 0.8}, prismatic(0.0, 2.0, 2.0, 0.8), [0.02], 0.01)
    yield ("pipe", {"shape": "circular", "diameter": 0.9}, circular(0.9), [0.013], 0.002)
    pts = [[0.0, 3.0], [1.0, 1.2], [1.0, 0.6], [2.0, 0.0], [3.0, 0.4], [3.5, 1.1], [4.5, 0.3], [6.0, 1.0], [8.0, 2.6]]
    yield ("creek", {"shape": "surveyed", "points": pts}, surveyed(pts, []), [0.035], 0.003)
    yield ("creek3", {"shape": "surveyed", "points": pts, "breaks": [1.5, 5.0]}, surveyed(pts, [1.5, 5.0]),
           [0.045, 0.032, 0.06], 0.003)


def scaled_section(section, factor):
    out = dict(section)
    for key in ("width", "height", "diameter"):
        if key in out:
            out[key] = out[key] * factor
    if "points" in out:
        out["points"] = [[x * factor, z * factor] for x, z in out["points"]]
    if "breaks" in out:
        out["breaks"] = [x * factor for x in out["breaks"]]
    return out


def write_config(path, system, chans):
    factor = 1.0 if system == "metric" else 1 / FT
    lines = [f"units: {system}", "database: test.db", "timezone: UTC", "sites:"]
    for cid, section, _, ns, slope in chans:
        lines.append(f"  - id: {cid}")
        lines.append(f"    name: {cid}")
        lines.append(f"    section: {json.dumps(scaled_section(section, factor))}")
        lines.append(f"    roughness: {json.dumps(ns if len(ns) > 1 else ns[0])}")
        lines.append(f"    slope: {slope}")
        lines.append(f"    stage: {{units: {'m' if system == 'metric' else 'ft'}, offset: 0.0, zero_flow: 0.0}}")
    with open(path, "w") as f:
        f.write("\n".join(lines) + "\n")


def run(binary, *args):
    proc = subprocess.run([binary, *args], capture_output=True, text=True)
    if proc.returncode != 0:
        failures.append(f"{' '.join(args)} exited {proc.returncode}: {proc.stderr.strip()}")
        return None
    return json.loads(proc.stdout)


def check_full_pipe_text(binary, tmp):
    """A surcharged pipe's Froude number in the outputs for people and in CSV: missing, as its
    hydraulic depth is, never 0 (which would read as still water). Returns the checks made."""
    config = os.path.join(tmp, "metric.yaml")
    # 1.2 m on a 0.9 m pipe: above the crown, so full (the reference's circular() above).
    proc = subprocess.run([binary, "flow", "--config", config, "--site", "pipe", "--stage", "1.2"],
                          capture_output=True, text=True)
    line = [l for l in proc.stdout.splitlines() if l.strip().startswith("Froude number")]
    if proc.returncode != 0 or len(line) != 1 or line[0].split()[2] != "n/a":
        failures.append(f"flow text, full pipe: Froude line {line!r} (exit {proc.returncode})")
    # The table from just below the crown to above it: the rows at and above 0.9 m are full.
    proc = subprocess.run([binary, "table", "--config", config, "--site", "pipe", "--from", "0.8",
                           "--to", "1.0", "--step", "0.1", "--csv"], capture_output=True, text=True)
    rows = [l.split(",") for l in proc.stdout.splitlines()[1:]]
    froude = {round(float(r[0]), 6): r[4] for r in rows if len(r) == 6}
    if proc.returncode != 0 or froude.get(0.9) != "" or froude.get(1.0) != "" or \
            not froude.get(0.8) or not math.isfinite(float(froude[0.8])):
        failures.append(f"table --csv, full pipe: Froude fields {froude!r} (exit {proc.returncode})")
    proc = subprocess.run([binary, "table", "--config", config, "--site", "pipe", "--from", "0.8",
                           "--to", "1.0", "--step", "0.1"], capture_output=True, text=True)
    # Columns: stage, depth, discharge, velocity, Froude, flags.
    text = {l.split()[0]: l.split()[4] for l in proc.stdout.splitlines()
            if l.strip() and l.split()[0] in ("0.8000", "0.9000", "1.000")}
    if proc.returncode != 0 or text.get("0.9000") != "n/a" or text.get("1.000") != "n/a" or \
            text.get("0.8000") in (None, "n/a", "0"):
        failures.append(f"table, full pipe: Froude cells {text!r} (exit {proc.returncode})")
    return 3


# An invented surveyed section: a main channel 8 m wide at its bank tops (stations 60 and 68,
# both at elevation 2.0 m) between wide overbanks that rise only 0.06-0.08 m over 58-62 m.
OVERBANK_POINTS = [[0.0, 3.5], [2.0, 2.06], [60.0, 2.0], [62.0, 0.2], [63.0, 0.0], [66.0, 0.1],
                   [68.0, 2.0], [130.0, 2.08], [134.0, 3.5]]
OVERBANK_BANK_TOPS = (60.0, 68.0)


def overbank_config(path, breaks, roughness):
    section = {"shape": "surveyed", "points": OVERBANK_POINTS}
    if breaks:
        section["breaks"] = breaks
    with open(path, "w") as f:
        f.write("\n".join([
            "units: metric", "database: test.db", "timezone: UTC", "sites:",
            "  - id: meadow", "    name: meadow reach",
            f"    section: {json.dumps(section)}",
            f"    roughness: {json.dumps(roughness)}",
            "    slope: 0.0012",
            # Stage in cm, zero flow at a reading of 10 cm: stage = 100 * depth + 10.
            "    stage: {units: cm, offset: 0.0, zero_flow: 10.0}"]) + "\n")


def stage_cm(depth_m):
    return 100.0 * depth_m + 10.0


def depth_m(stage):
    return (stage - 10.0) / 100.0


def python_dips(breaks, roughness, steps=20000):
    """The falls of discharge, scanned independently: Manning's equation Q = (1/n) A R^(2/3)
    S^(1/2) on the clipped-segment geometry above (plain arithmetic), at equal steps and at each
    surveyed height. Returns [(from_depth, to_depth, loss fraction)] of falls of 0.1 % or more."""
    geom, top = surveyed(OVERBANK_POINTS, breaks)
    zmin = min(z for _, z in OVERBANK_POINTS)
    depths = sorted(set([top * i / steps for i in range(1, steps + 1)] +
                        [z - zmin for _, z in OVERBANK_POINTS if 0 < z - zmin <= top]))
    q = [state(geom, roughness, 0.0012, 1.0, G_SI, y)["discharge"] for y in depths]
    dips, i = [], 0
    while i + 1 < len(q):
        if q[i + 1] < q[i]:
            j = i + 1
            while j + 1 < len(q) and q[j + 1] < q[j]:
                j += 1
            if 1 - q[j] / q[i] >= 0.001:
                dips.append((depths[i], depths[j], 1 - q[j] / q[i]))
            i = j
        else:
            i += 1
    return dips


def check_discharge_dips(binary, tmp):
    """`stagewell check` on a section computed as one whose discharge falls where the water
    spreads over a wide overbank: the fall's stages, discharges and loss against the independent
    scan above, the bank tops named, and the suggested breaks that remove the fall."""
    checks = 0
    whole = os.path.join(tmp, "overbank.yaml")
    overbank_config(whole, [], 0.035)
    proc = subprocess.run([binary, "check", "--config", whole], capture_output=True, text=True)
    out = proc.stdout
    checks += 1
    if proc.returncode != 0:
        failures.append(f"check on the overbank section exited {proc.returncode}: {proc.stderr}")
        return checks
    # The usual caution is printed, since check prints discharges (README, "Cautions").
    checks += 1
    if "verify it with field measurements" not in out or "licensed engineer" not in out:
        failures.append(f"check prints no caution:\n{out}")
    geom, _ = surveyed(OVERBANK_POINTS, [])

    def q_at(stage):
        return state(geom, [0.035], 0.0012, 1.0, G_SI, depth_m(stage))["discharge"]

    want = python_dips([], [0.035])
    got = re.findall(r"discharge falls by ([0-9.]+) % as the stage rises from ([0-9.]+) to ([0-9.]+) cm\n"
                     r"\s+\(([0-9.e+-]+) to ([0-9.e+-]+) m³/s\); back to ([0-9.e+-]+) m³/s only at "
                     r"stage ([0-9.]+) cm", out)
    checks += 1
    if len(want) != 1 or len(got) != 1:
        failures.append(f"overbank: the reference finds {len(want)} fall(s), check reports {len(got)}:\n{out}")
        return checks
    loss, start, end, q_start, q_end, q_back, back = (float(v) for v in got[0])
    want_start, want_end, want_loss = want[0]
    # The reference's fall, against the printed one (4 significant digits: 0.05 cm of stage; the
    # trough lies on a flat bottom of Q, so its stage is within a few of both scans' steps).
    checks += 4
    if abs(start - stage_cm(want_start)) > 0.051:
        failures.append(f"overbank: fall starts at {start} cm, reference {stage_cm(want_start):.4f} cm")
    if abs(end - stage_cm(want_end)) > 0.051 + 100 * 3.5 * 3 / 20000:
        failures.append(f"overbank: fall ends at {end} cm, reference {stage_cm(want_end):.4f} cm")
    if abs(loss - 100 * want_loss) > 0.06:
        failures.append(f"overbank: loss {loss} %, reference {100 * want_loss:.3f} %")
    if want_loss < 0.5:
        failures.append(f"overbank: the invented section should lose most of its discharge, "
                        f"reference {100 * want_loss:.1f} %")
    # Manning's equation at the printed stages: the printed discharges, and a fall between them.
    checks += 3
    for label, stage, printed in (("start", start, q_start), ("end", end, q_end), ("back", back, q_back)):
        rel = 2e-3 if label != "back" else 5e-3
        if not math.isclose(q_at(stage), printed, rel_tol=rel):
            failures.append(f"overbank: Q at the {label} stage {stage} cm is {q_at(stage):.6g}, printed {printed}")
    checks += 2
    if not q_at(end) < q_at(start) * (1 - 0.9 * want_loss):
        failures.append(f"overbank: Q({end}) = {q_at(end):.6g} is not well below Q({start}) = {q_at(start):.6g}")
    if not (q_at(back - 0.1) < q_start < q_at(back + 0.1)):
        failures.append(f"overbank: Q does not come back to {q_start} near stage {back} cm")
    # The bank tops: where the water level at the fall's start meets the ground either side of the
    # lowest point (found from the points here, independently).
    level = min(z for _, z in OVERBANK_POINTS) + depth_m(start)
    lowest = min(range(len(OVERBANK_POINTS)), key=lambda i: OVERBANK_POINTS[i][1])
    left = next(x for x, z in reversed(OVERBANK_POINTS[:lowest]) if z >= level - 1e-3)
    right = next(x for x, z in OVERBANK_POINTS[lowest + 1:] if z >= level - 1e-3)
    checks += 3
    if (left, right) != OVERBANK_BANK_TOPS:
        failures.append(f"overbank: the reference's bank tops {left}, {right}")
    banks = re.search(r"left bank top\s+station ([0-9.]+) m, stage ([0-9.]+) cm \(overtopped here\)\n"
                      r"\s+right bank top\s+station ([0-9.]+) m, stage ([0-9.]+) cm \(overtopped here\)", out)
    if not banks or (float(banks[1]), float(banks[3])) != (left, right) or \
            abs(float(banks[2]) - stage_cm(2.0)) > 0.051 or abs(float(banks[4]) - stage_cm(2.0)) > 0.051:
        failures.append(f"overbank: bank tops not named as stations {left} and {right} m at stage "
                        f"{stage_cm(2.0)} cm:\n{out}")
    suggested = re.search(r"`breaks: \[([0-9., ]+)\]` \(m\), and `roughness` with (\d+) values", out)
    if not suggested or [float(v) for v in suggested[1].split(",")] != [left, right] or suggested[2] != "3":
        failures.append(f"overbank: no suggestion of breaks at {left}, {right}:\n{out}")

    # Divided at the suggested stations, the reference finds no fall, and neither does check.
    divided = os.path.join(tmp, "overbank-divided.yaml")
    overbank_config(divided, [left, right], [0.06, 0.035, 0.06])
    proc = subprocess.run([binary, "check", "--config", divided], capture_output=True, text=True)
    checks += 2
    if python_dips([left, right], [0.06, 0.035, 0.06]):
        failures.append("overbank divided: the reference still finds a fall")
    if proc.returncode != 0 or "discharge falls" in proc.stdout or "suggest" in proc.stdout:
        failures.append(f"overbank divided: check still warns (exit {proc.returncode}):\n{proc.stdout}")
    return checks


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--bin-dir", required=True)
    parser.add_argument("--source-dir", required=True)
    args = parser.parse_args()
    binary = os.path.join(args.bin_dir, "stagewell")
    chans = list(channels())
    checked = 0
    with tempfile.TemporaryDirectory() as tmp:
        for system in ("metric", "us"):
            factor = 1.0 if system == "metric" else 1 / FT
            k = 1.0 if system == "metric" else (1 / FT) ** (1 / 3)
            g = G_SI * factor
            config = os.path.join(tmp, f"{system}.yaml")
            write_config(config, system, chans)
            for cid, _, (geom_m, top_m), ns, slope in chans:
                def geom(y, geom_m=geom_m):  # geometry in this system's length unit
                    return [(a * factor ** 2, p * factor, t * factor) for a, p, t in geom_m(y / factor)]
                top = top_m * factor
                # At exactly the crown of a pipe the top width is 0 or a rounding error: not a fair test.
                fractions = (-0.1, 0.0, 0.02, 0.1, 0.33, 0.5, 0.77, 0.95, 0.999 if cid == "pipe" else 1.0, 1.2)
                for fraction in fractions:
                    y = fraction * top
                    got = run(binary, "flow", "--config", config, "--site", cid, "--stage", repr(y), "--json")
                    if got is None:
                        continue
                    want = state(geom, ns, slope, k, g, y)
                    label = f"{system} {cid} y={y:.6g}"
                    check(label + " depth", got["depth"], y, abs_tol=1e-12)
                    for key in ("area", "wetted_perimeter", "hydraulic_radius", "top_width", "velocity",
                                "discharge", "froude", "hydraulic_depth"):
                        check(f"{label} {key}", got[key], want[key])
                    expect_flags = set()
                    if y <= 0:
                        expect_flags.add("below_zero_flow")
                    if y > top:
                        expect_flags.add("surcharged" if cid == "pipe" else "above_section")
                    if want["froude"] is not None and want["froude"] > 1:
                        expect_flags.add("supercritical")
                    got_flags = set(got["flags"])
                    if cid == "pipe":  # a surcharged pipe is above its section too: either is fine
                        got_flags.discard("above_section")
                    if got_flags != expect_flags:
                        failures.append(f"{label} flags: got {got['flags']}, want {sorted(expect_flags)}")
                    checked += 1

                # Normal and critical depth by scipy's brentq on the independent functions.
                def q_of(y):
                    return state(geom, ns, slope, k, g, y)["discharge"]

                def crit(y, q):
                    st = state(geom, ns, slope, k, g, y)
                    return q * q * st["top_width"] / (g * st["area"] ** 3) - 1

                for fraction in (0.05, 0.4, 0.9):
                    q = q_of(fraction * top)
                    got = run(binary, "depth", "--config", config, "--site", cid, "--flow", repr(q), "--json")
                    if got is None:
                        continue
                    # Brackets: a pipe's discharge rises only up to y/D = 0.938 (the lower root is
                    # the one reported); open sections continue above the top with vertical walls.
                    upper_n = top * (0.938 if cid == "pipe" else 3.0)
                    upper_c = top * (0.999 if cid == "pipe" else 3.0)
                    yn = brentq(lambda y: q_of(y) - q, 1e-12 * top, upper_n, xtol=1e-15, rtol=1e-14)
                    yc = brentq(lambda y: crit(y, q), 1e-9 * top, upper_c, xtol=1e-15, rtol=1e-14)
                    label = f"{system} {cid} Q={q:.6g}"
                    check(label + " normal_depth", got["normal_depth"], yn)
                    check(label + " critical_depth", got["critical_depth"], yc)
                    check(label + " normal_stage", got["normal_stage"], yn)
                    checked += 1

        checked += check_full_pipe_text(binary, tmp)
        checked += check_discharge_dips(binary, tmp)

        # Errors: a negative flow, and more than the pipe can carry (exit status 1).
        metric = os.path.join(tmp, "metric.yaml")
        for flow in ("-1", "1000"):
            proc = subprocess.run([binary, "depth", "--config", metric, "--site", "pipe", "--flow", flow, "--json"],
                                  capture_output=True, text=True)
            if proc.returncode != 1 or not proc.stderr.strip():
                failures.append(f"depth --flow {flow} on the pipe: exit {proc.returncode}, stderr {proc.stderr!r}")
            checked += 1

    for failure in failures:
        print("FAIL", failure)
    print(f"{checked - len(failures)} passed, {len(failures)} failed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
