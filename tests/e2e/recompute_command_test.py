"""`stagewell recompute` after a site's history and corrections are edited: readings on both sides
of a change checked against Manning's equation in closed form (daemon_support.rectangular), a
drift checked at its start, middle and end against its closed form, a day's volume across a
change against numpy.trapz, the `recomputations` view, the `version` column, idempotence, and a bad
configuration refused with file:line:col.

References: Manning's equation Q = (1/n) A R^(2/3) S^(1/2), SI (common practice; V. T. Chow,
Open-Channel Hydraulics, 1959, ch. 5); the trapezoidal rule as numpy.trapz computes it; a linear
drift d(t) = drift * (t - from) / (to - from) (the definition in config/reference.yaml).
"""
import math
import os
import subprocess
import sys
import tempfile

import numpy

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import daemon_support as ds  # noqa: E402

WIDTH, HEIGHT, SLOPE = 2.0, 1.5, 0.001  # m, m, m/m
N_BEFORE, N_AFTER = 0.015, 0.030
START_MS = 1777593600000  # 2026-05-01T00:00:00Z (Python: datetime(2026,5,1,tzinfo=utc))
STEP_MS = 600_000  # 10 minutes
DAY_MS = 86_400_000
COUNT = 3 * 144 + 1  # three days and the midnight that ends them
CHANGE_MS = START_MS + DAY_MS + DAY_MS // 2  # 2026-05-02T12:00:00Z: the middle of the 2nd day
DRIFT_FROM_MS = START_MS + 6 * 3_600_000  # 2026-05-01T06:00:00Z
DRIFT_TO_MS = START_MS + 18 * 3_600_000  # 2026-05-01T18:00:00Z
DRIFT_M = 0.05

BASE = f"""units: metric
database: flows.db
timezone: UTC
sites:
  - id: canal
    section: {{shape: rectangular, width: {WIDTH}, height: {HEIGHT}}}
    roughness: {N_BEFORE}
    slope: {SLOPE}
    checks: {{max_gap: 1h}}
  - id: raceway
    section: {{shape: rectangular, width: 1.0, height: 1.0}}
    roughness: 0.013
    slope: 0.002
"""
HISTORY = f"""    changes:
      - from: {ds.iso(CHANGE_MS)}
        roughness: {N_AFTER}
    corrections:
      - from: {ds.iso(DRIFT_FROM_MS)}
        to: {ds.iso(DRIFT_TO_MS)}
        drift: {DRIFT_M}
"""
# The raceway is widened from the change on, and its sensor found reading 2 cm high from then (a
# stage offset of -0.02 m); a 2-hour period before it is corrected by a constant +0.01 m.
OFFSET_FROM_MS = START_MS + 3 * 3_600_000
OFFSET_TO_MS = START_MS + 5 * 3_600_000
RACEWAY_HISTORY = f"""    changes:
      - from: {ds.iso(CHANGE_MS)}
        section: {{shape: rectangular, width: 1.5, height: 1.0}}
        stage: {{offset: -0.02}}
    corrections:
      - {{from: {ds.iso(OFFSET_FROM_MS)}, to: {ds.iso(OFFSET_TO_MS)}, offset: 0.01}}
"""


def raceway_expected(time_ms, stage):
    """Depth and discharge of the raceway with RACEWAY_HISTORY, from their definitions."""
    width, depth = (1.5, stage - 0.02) if time_ms >= CHANGE_MS else (1.0, stage)
    if OFFSET_FROM_MS <= time_ms < OFFSET_TO_MS:
        depth += 0.01
    area, perimeter = width * depth, width + 2 * depth
    return depth, area * (area / perimeter) ** (2 / 3) * math.sqrt(0.002) / 0.013


def stage_at(i):
    """Invented smooth stage, m: 0.4 m with a daily swing of 0.15 m."""
    return round(0.4 + 0.15 * math.sin(2 * math.pi * i / 144), 4)


def manning(depth, n):
    geometry, _ = ds.rectangular(WIDTH, HEIGHT)
    area, perimeter, _ = geometry(depth)
    return area * (area / perimeter) ** (2 / 3) * math.sqrt(SLOPE) / n


def expected(time_ms, stage):
    """Discharge with the history and correction of HISTORY, computed here from their definitions."""
    n = N_AFTER if time_ms >= CHANGE_MS else N_BEFORE
    depth = stage
    if DRIFT_FROM_MS <= time_ms < DRIFT_TO_MS:
        depth += DRIFT_M * (time_ms - DRIFT_FROM_MS) / (DRIFT_TO_MS - DRIFT_FROM_MS)
    return depth, manning(depth, n)


def run(args, *command):
    return subprocess.run(command, capture_output=True, text=True, timeout=120)


def main():
    args = ds.parse_args()
    _, stagewell = ds.programs(args)
    r = ds.Results()
    with tempfile.TemporaryDirectory() as tmp:
        config = os.path.join(tmp, "site.yaml")
        db = os.path.join(tmp, "flows.db")
        ds.write(config, BASE)
        lines = ["site,time,stage"]
        times = [START_MS + i * STEP_MS for i in range(COUNT)]
        for i, t in enumerate(times):
            lines.append(f"canal,{ds.iso(t)},{stage_at(i)}")
            lines.append(f"raceway,{ds.iso(t)},{stage_at(i)}")
        data = os.path.join(tmp, "canal.csv")
        ds.write(data, "\n".join(lines) + "\n")
        done = run(args, stagewell, "ingest", "--config", config, "--quiet", data)
        r.check("ingest", done.returncode == 0, done.stderr)
        before = {t: (d, q) for t, d, q in ds.query(
            db, "SELECT round(unix_time * 1000), depth, discharge FROM discharge "
                "WHERE site = 'canal'")}
        old_versions = {v for (v,) in ds.query(
            db, "SELECT DISTINCT version FROM discharge WHERE site = 'canal'")}
        r.check("one version before the edit", len(old_versions) == 1, str(old_versions))

        # Nothing to do while the configuration is unchanged.
        again = run(args, stagewell, "recompute", "--config", config, "--site", "canal")
        r.check("unchanged: nothing to do", "nothing to recompute" in again.stdout, again.stdout)

        ds.write(config, BASE.replace("    checks: {max_gap: 1h}\n",
                                      "    checks: {max_gap: 1h}\n" + HISTORY)
                 + RACEWAY_HISTORY)
        done = run(args, stagewell, "recompute", "--config", config, "--site", "canal")
        r.check("recompute runs", done.returncode == 0, done.stderr + done.stdout)
        raceway = run(args, stagewell, "recompute", "--config", config, "--site", "raceway")
        r.check("recompute of the raceway runs", raceway.returncode == 0,
                raceway.stderr + raceway.stdout)

        # The raceway on both sides of its change of section and offset, and in its corrected
        # period, against the closed form.
        raceway_rows = {t: (s, d, q) for t, s, d, q in ds.query(
            db, "SELECT round(unix_time * 1000), stage, depth, discharge FROM discharge "
                "WHERE site = 'raceway'")}
        worst = 0.0
        for i, t in enumerate(times):
            want_depth, want_q = raceway_expected(t, stage_at(i))
            _, depth, q = raceway_rows[t]
            worst = max(worst, abs(q - want_q) / want_q, abs(depth - want_depth))
        r.check("raceway: every reading matches Manning's equation with its history",
                worst < 1e-5, f"worst relative error {worst:.2e}")
        for t in (CHANGE_MS - STEP_MS, CHANGE_MS, OFFSET_FROM_MS - STEP_MS, OFFSET_FROM_MS,
                  OFFSET_TO_MS - STEP_MS, OFFSET_TO_MS):
            i = (t - START_MS) // STEP_MS
            r.close(f"raceway discharge at {ds.iso(t)}", raceway_rows[t][2],
                    raceway_expected(t, stage_at(i))[1], 1e-5)

        stored = {t: (s, d, q, v) for t, s, d, q, v in ds.query(
            db, "SELECT round(unix_time * 1000), stage, depth, discharge, version FROM discharge "
                "WHERE site = 'canal'")}
        r.check("every reading kept", len(stored) == COUNT, str(len(stored)))
        # Every reading against the closed form (the rating table's interpolation is within 1e-6
        # relative of the formula: docs/hydraulics.md, "Hydraulics"; 1e-5 allowed here).
        worst = 0.0
        for i, t in enumerate(times):
            stage, depth, q, _ = stored[t]
            want_depth, want_q = expected(t, stage_at(i))
            worst = max(worst, abs(q - want_q) / want_q, abs(depth - want_depth))
        r.check("all readings match Manning's equation with the history", worst < 1e-5,
                f"worst relative error {worst:.2e}")
        # Both sides of the change, one step apart.
        for t in (CHANGE_MS - STEP_MS, CHANGE_MS):
            i = (t - START_MS) // STEP_MS
            r.close(f"discharge at {ds.iso(t)}", stored[t][2], expected(t, stage_at(i))[1], 1e-5)
        # The raw stage is never changed; the drift is 0 at its start, half at the middle, and
        # (just before) the whole at its end, which is excluded.
        for t, share in ((DRIFT_FROM_MS, 0.0), ((DRIFT_FROM_MS + DRIFT_TO_MS) // 2, 0.5),
                         (DRIFT_TO_MS - STEP_MS, (DRIFT_TO_MS - STEP_MS - DRIFT_FROM_MS)
                          / (DRIFT_TO_MS - DRIFT_FROM_MS)), (DRIFT_TO_MS, 0.0)):
            i = (t - START_MS) // STEP_MS
            r.close(f"stage kept at {ds.iso(t)}", stored[t][0], stage_at(i), 0, 1e-12)
            r.close(f"depth with drift at {ds.iso(t)}", stored[t][1],
                    stage_at(i) + DRIFT_M * share, 1e-12, 1e-12)

        # Versions: the old one before the drift and again between its end and the change (the
        # same keys, no correction: the same version), one for the drift, one after the change.
        versions = [stored[t][3] for t in times]
        r.check("a version per period", len(set(versions)) == 3
                and versions[0] == stored[DRIFT_TO_MS][3] and versions[0] in old_versions,
                str(sorted(set(versions))))
        drift_version = stored[DRIFT_FROM_MS][3]
        (json_text,) = ds.query(db, "SELECT config_json FROM config_versions WHERE hash = ?",
                                (drift_version,))[0]
        r.check("the drift's version holds the correction", '"drift":0.05' in json_text, json_text)

        # The day across the change against numpy.trapz of the independently computed discharge.
        day_start = START_MS + DAY_MS
        day_times = [t for t in times if day_start <= t <= day_start + DAY_MS]
        q_ref = [expected(t, stage_at((t - START_MS) // STEP_MS))[1] for t in day_times]
        volume_ref = numpy.trapz(q_ref, [(t - day_start) / 1000.0 for t in day_times])
        (volume,) = ds.query(db, "SELECT volume FROM daily WHERE site = 'canal' AND day = ?",
                             ("2026-05-02",))[0]
        r.close("volume of 2026-05-02 (numpy.trapz)", volume, volume_ref, 1e-5)

        # The record of the recomputation.
        rows = ds.query(db, "SELECT at, site, period_from, period_to, config_before, config_after, "
                            "readings_changed, max_discharge_change, max_daily_volume_change "
                            "FROM recomputations WHERE site = 'canal'")
        r.check("one row in recomputations", len(rows) == 1, str(rows))
        if rows:
            (at, site, p_from, p_to, c_before, c_after, changed, max_dq, max_dv) = rows[0]
            # Readings whose discharge changes: after the change, and in the drift but its start.
            want_changed = sum(1 for t in times if t >= CHANGE_MS
                               or DRIFT_FROM_MS < t < DRIFT_TO_MS)
            r.check("readings_changed", changed == want_changed, f"{changed} vs {want_changed}")
            want_dq = max(abs(stored[t][2] - before[t][1]) for t in times)
            r.close("max_discharge_change", max_dq, want_dq, 1e-9)
            r.check("period_from is the first reading redone", p_from == ds.iso(DRIFT_FROM_MS),
                    p_from)
            r.check("period_to is the last reading", p_to == ds.iso(times[-1]), p_to)
            r.check("config_before is the old version", c_before == next(iter(old_versions)),
                    c_before)
            r.check("config_after names the new versions",
                    set(c_after.split(",")) == set(versions) - old_versions, c_after)
            r.check("at is RFC 3339 UTC", at.endswith("Z") and "T" in at, at)
            r.check("max_daily_volume_change is positive", max_dv > 0, str(max_dv))
        summary = done.stdout
        r.check("summary: readings recomputed",
                f"readings recomputed: {sum(1 for t in times if t >= DRIFT_FROM_MS and not (DRIFT_TO_MS <= t < CHANGE_MS))}"
                in summary, summary)
        r.check("summary: units of the discharge change", "m^3/s" in summary, summary)

        # Idempotent: a second run does nothing and records nothing.
        second = run(args, stagewell, "recompute", "--config", config, "--site", "canal")
        r.check("second run: nothing to do", "nothing to recompute" in second.stdout,
                second.stdout)
        r.check("second run: no second row",
                ds.count(db, "SELECT count(*) FROM recomputations WHERE site = 'canal'") == 1)
        after_second = {t: q for t, q in ds.query(
            db, "SELECT round(unix_time * 1000), discharge FROM discharge WHERE site = 'canal'")}
        r.check("second run: no value changed",
                all(after_second[t] == stored[t][2] for t in times))

        # A bad edit is refused with file:line:col and changes nothing.
        ds.write(config, BASE + """    changes:
      - from: last june
        roughness: 0.02
""")
        bad = run(args, stagewell, "recompute", "--config", config, "--site", "canal")
        r.check("bad from refused", bad.returncode == 1 and
                f"{config}:15:15: sites[1].changes[0].from = last june" in bad.stderr, bad.stderr)
        r.check("bad edit: nothing recorded", ds.count(db, "SELECT count(*) FROM recomputations") == 2)
    return r.finish()


if __name__ == "__main__":
    sys.exit(main())
