#!/usr/bin/env python3
"""`stagewelld` on a drop folder and a tailed file: discharges against Manning's equation, the flag
of every injected fault, and every kind of bad input kept in `rejects` with its reason.

The reference is independent of the C++ core: Manning's equation in closed form for rectangular,
trapezoidal and circular sections (daemon_support.manning; Manning's equation, closed form, common
practice), and the check definitions as docs/checks-and-alarms.md states them, applied by hand to
each injected fault below. The steady-flow rule of `unsteady` (the Jones estimate, on by default)
is off on the two sites whose test series rise fast (`checks.unsteady: 0%`): band_and_jones_test
checks that rule against its own reference.

Tolerances. Depth is stage + offset - zero_flow, converted: one or two roundings, so 1e-12 m.
Discharge inside a section is read from the site's rating table, a piecewise cubic documented
(rating.hpp) as within 0.01 % of the direct formula; we allow 0.05 % (5e-4 relative) so that the
check is about the right formula, section and units — a wrong roughness, slope or unit factor is
off by percent — and not about the table's last digits. Above the top of a section (and for a
surcharged pipe) the service uses the direct formula, so there we require 1e-6 relative.
"""
import os
import random
import signal
import tempfile
import time

import daemon_support as ds

R = ds.Results()
T0 = 1714521600_000  # 2024-05-01T00:00:00Z, ms
MIN = 60_000

CONFIG = """\
units: metric
database: db/stagewell.db
sources:
  - type: directory
    path: incoming
  - type: tail
    path: logger/level.csv
    site: tailsite
    columns: {time: when, stage: level}
    time_zone: "-07:00"
  - type: tail             # a mistake: a directory, not a file
    path: logger/a-directory
    site: tailsite
sites:
  - id: rect
    section: {shape: rectangular, width: 2.4, height: 1.2}
    roughness: 0.014
    slope: 0.0015
    stage: {units: m, offset: 0.02, zero_flow: 0.10}
    checks: {min_stage: 0.0, max_stage: 1.5, unsteady: 0%}
  - id: trap
    section: {shape: trapezoidal, width: 1.8, side_slope: [1.5, 2.0], height: 1.3}
    roughness: 0.025
    slope: 0.0004
    stage: {units: cm, offset: 2.0, zero_flow: 5.0}
    checks: {unsteady: 0%}
  - id: pipe
    section: {shape: circular, diameter: 0.9}
    roughness: 0.013
    slope: 0.005
  - id: steep
    section: {shape: rectangular, width: 1.0, height: 0.8}
    roughness: 0.010
    slope: 0.04
  - id: chk
    section: {shape: rectangular, width: 2.4, height: 1.2}
    roughness: 0.014
    slope: 0.0015
    checks: {min_stage: 0.0, max_stage: 1.5, spike: 0.25, spike_window: 3, max_rate: 0.5,
             flatline: 1h, max_gap: 15m, max_clock_skew: 5m}
  - id: wide
    section: {shape: rectangular, width: 50.0, height: 2.0}
    roughness: 0.03
    slope: 0.001
  - id: tailsite
    section: {shape: rectangular, width: 1.5, height: 1.0}
    roughness: 0.015
    slope: 0.002
"""

# Each site: (shape, n, S, offset, zero_flow, unit factor to m). Must match CONFIG.
SITES = {
    "rect": (ds.rectangular(2.4, 1.2), 0.014, 0.0015, 0.02, 0.10, 1.0),
    "trap": (ds.trapezoidal(1.8, 1.5, 2.0, 1.3), 0.025, 0.0004, 2.0, 5.0, 0.01),
    "pipe": (ds.circular(0.9), 0.013, 0.005, 0.0, 0.0, 1.0),
    "steep": (ds.rectangular(1.0, 0.8), 0.010, 0.04, 0.0, 0.0, 1.0),
    "chk": (ds.rectangular(2.4, 1.2), 0.014, 0.0015, 0.0, 0.0, 1.0),
    "tailsite": (ds.rectangular(1.5, 1.0), 0.015, 0.002, 0.0, 0.0, 1.0),
}
STAGE_RANGE = {"rect": (0.0, 1.5), "chk": (0.0, 1.5)}  # checks.min_stage, max_stage


def series(site, start_ms, step_ms, stages_and_flags):
    """[(site, time_ms, stage text, expected check flags)] at regular times."""
    out = []
    for i, (stage, flags) in enumerate(stages_and_flags):
        out.append((site, start_ms + i * step_ms, stage, set(flags.split(",")) if flags else set()))
    return out


def at(site, minute, stage, flags=""):
    return (site, T0 + minute * MIN, stage, set(flags.split(",")) if flags else set())


# ---- what file 1 holds, and the flags the checks must give (docs/checks-and-alarms.md) -----------

def first_file_readings():
    rows = []
    # rect: clean readings over the section's depth range, then one reading per fault.
    # depth = stage + 0.02 - 0.10 (m); top of the section 1.2 m.
    clean = ["0.15", "0.2", "0.3", "0.45", "0.6", "0.75", "0.9", "1.05", "1.2", "1.27"]
    rows += series("rect", T0, 5 * MIN, [(s, "") for s in clean])
    rows += series("rect", T0 + 50 * MIN, 5 * MIN, [
        ("0.06", "below_zero_flow"),   # depth -0.02 m: no flow, discharge 0
        ("0.08", "below_zero_flow"),   # depth exactly 0: "depth <= 0"
        ("1.35", "above_section"),     # depth 1.27 m > 1.2 m: walls taken to continue up
        ("1.6", "out_of_range"),       # above max_stage 1.5: no discharge (NULL), still kept
        ("-0.05", "out_of_range"),     # below min_stage 0: out_of_range wins, no discharge
        ("1.5", "above_section"),      # exactly max_stage: in range ("outside" is strict)
    ])
    # trap, stage in cm: depth = (stage + 2 - 5) / 100 m; top 1.3 m, the last one above it.
    rows += series("trap", T0, 5 * MIN, [(s, "") for s in
                                         ["10", "25", "40", "62.5", "80", "100", "120", "128"]]
                   + [("140", "above_section")])
    # pipe: part full, then above the crown (surcharged: full-pipe figures).
    rows += series("pipe", T0, 5 * MIN, [(s, "") for s in
                                         ["0.05", "0.2", "0.45", "0.7", "0.85", "0.89"]]
                   + [("1.1", "surcharged")])
    # steep: a smooth, steep channel; supercritical is added below from the reference's Froude.
    rows += series("steep", T0, 5 * MIN, [(s, "") for s in ["0.05", "0.1", "0.3", "0.6"]])

    # chk: every check on one site, readings 5 minutes apart (minutes after T0).
    rows += [
        at("chk", 0, "0.5"), at("chk", 5, "0.501"), at("chk", 10, "0.502"), at("chk", 15, "0.503"),
        # A jump of 0.401 >= spike 0.25 that comes back next time: spike, flagged when it comes
        # back (retroactively); 0.401 m in 5 min is 4.8 m/h > max_rate 0.5: unsteady too.
        at("chk", 20, "0.904", "spike,unsteady"),
        at("chk", 25, "0.505", "unsteady"),  # back within spike/2; fast against the spike reading
        at("chk", 30, "0.506"),
        at("chk", 35, "0.606", "unsteady"),  # 0.1 m in 5 min = 1.2 m/h; < spike: no spike
        at("chk", 40, "0.607"), at("chk", 45, "0.608"),
    ]
    # flatline 1h: the same stage from minute 50 to 130; flagged once MORE than 60 min after the
    # run's first reading, i.e. from minute 115 (minute 110 is exactly 60 min: not flagged).
    for minute in range(50, 135, 5):
        rows.append(at("chk", minute, "0.61", "flatline" if minute - 50 > 60 else ""))
    rows += [
        at("chk", 145, "0.612"),          # exactly max_gap (15 min) later: not a gap
        at("chk", 165, "0.613", "gap"),   # 20 min > 15 min
    ]
    return rows


def second_file_lines(now_ms):
    """File 2 (read after file 1): repeats, conflicts, late and future readings.
    Returns (lines, new readings with their expected flags, conflicts as (line no, site, time))."""
    future_ms = (now_ms // MIN + 2 * 24 * 60) * MIN  # two days ahead of the clock
    rows = [
        ("chk", T0 + 100 * MIN, "0.61"),     # identical repeat: no new row, no reject
        ("chk", T0 + 165 * MIN, "0.95"),     # conflict with the stored 0.613: a jump >= spike
        ("chk", T0 + 170 * MIN, "0.614"),    # new, back at the level: must not make 165 a spike
        ("chk", T0 + 145 * MIN, "1.2"),      # conflict with the stored 0.612
        ("chk", T0 + 150 * MIN, "0.6125"),   # late; its neighbours are the STORED 145 and 165
        ("chk", T0 + 140 * MIN, "0.611"),    # late, between 130 and 145
        ("rect", T0 + 0 * MIN, "0.15"),      # identical repeat of another site's reading
        ("chk", future_ms, "0.615"),         # more than max_clock_skew ahead of the clock
    ]
    lines = ["site,time,stage"] + [f"{s},{ds.iso(t)},{v}" for s, t, v in rows]
    new = [
        ("chk", T0 + 170 * MIN, "0.614", set()),
        ("chk", T0 + 150 * MIN, "0.6125", {"late"}),
        ("chk", T0 + 140 * MIN, "0.611", {"late"}),
        ("chk", future_ms, "0.615", {"future"}),
    ]
    conflicts = [(3, "chk", T0 + 165 * MIN), (5, "chk", T0 + 145 * MIN)]
    return "\n".join(lines) + "\n", new, conflicts


# ---- bad input -----------------------------------------------------------------------------------

LONG = "rect,2024-05-01T03:20:00Z," + "9" * 5000  # longer than the 4096-byte line limit
BAD_LINES = [  # (line, reject kind); line 1 is the header, line 2 a good reading
    ('rect,"2024-05-01T03:05:00Z,0.5', "malformed"),
    ("nowhere,2024-05-01T03:05:00Z,0.5", "unknown_site"),
    ("rect,2024-13-45T03:05:00Z,0.5", "bad_time"),
    ("rect,yesterday,0.5", "bad_time"),
    ("rect,2024-05-01T03:10:00Z,abc", "bad_stage"),
    ("rect,2024-05-01T03:10:00Z,0,5", "field_count"),
    ("rect,2024-05-01T03:10:00Z", "field_count"),
    ("rect,2024-05-01T03:10:00Z,nan", "non_finite_stage"),
    ("rect,2024-05-01T03:10:00Z,inf", "non_finite_stage"),
    ("rect,2024-05-01T03:10:00Z,-Infinity", "non_finite_stage"),
    ("rect,2024-05-01T03:10:00Z,1e999", "non_finite_stage"),
    (LONG, "too_long"),
    ("rect,2024-05-01T03:10:00Z,\x00\x01\x7f0.5", "not_text"),
    # A finite stage whose discharge is not: 1e307 m deep in a 50 m wide channel, the flow area
    # overflows a double. No number to store. (Site wide has no max_stage; on rect a huge stage is
    # simply out_of_range, stored without discharge.)
    ("wide,2024-05-01T03:30:00Z,1e307", "non_finite_stage"),
]


def bad_file():
    lines = ["site,time,stage", "rect,2024-05-01T03:00:00Z,0.5"]
    lines += [line for line, _ in BAD_LINES]
    data = "\n".join(lines).encode() + b"\nrect,2024-05-01T03:15:00Z,\xff\xfe0.5\n"  # bad UTF-8
    data += b"rect,2024-05-01T03:30:00Z,1e200\n"
    data += b"\n# a comment, skipped\nrect,2024-05-01T03:25:00Z,0.51"  # no final newline
    expected = [(i + 3, kind) for i, (_, kind) in enumerate(BAD_LINES)]
    expected.append((len(lines) + 1, "not_text"))
    good = [("rect", T0 + 180 * MIN, 0.5), ("rect", T0 + 210 * MIN, 1e200),
            ("rect", T0 + 205 * MIN, 0.51)]
    return data, expected, good


NOT_CSV = ("Readings for the spring season\n"
           "The logger was replaced on the third; see the field book.\n"
           "{\"this\": \"is not a CSV header either\"}\n"
           "stage 0.41 at noon\n")


def binary_file():
    rng = random.Random(20240501)  # fixed seed: the same bytes every run
    data = bytes(rng.randrange(256) for _ in range(3000))
    pieces = data.split(b"\n")
    lines = len(pieces) - (1 if pieces[-1] == b"" else 0)
    return data, lines


# ---- the checks ----------------------------------------------------------------------------------

def expected_state(site, stage_text):
    """(depth m, discharge or None, flags from the geometry, discharge tolerance)."""
    shape, n, slope, offset, zero_flow, factor = SITES[site]
    stage = float(stage_text)
    depth = (stage + offset - zero_flow) * factor
    low, high = STAGE_RANGE.get(site, (-1e300, 1e300))
    if stage < low or stage > high:
        return depth, None, set(), 0.0
    if depth <= 0:
        return depth, 0.0, set(), 0.0
    discharge, froude = ds.manning(shape, n, slope, depth)
    flags = {"supercritical"} if froude > 1 else set()
    direct = depth > shape[1]  # above the top: the direct formula, not the rating table
    return depth, discharge, flags, (1e-6 if direct else 5e-4)


def check_reading(stored, site, time_ms, stage_text, check_flags):
    got = stored.get((site, time_ms))
    label = f"{site} {ds.iso(time_ms)} stage {stage_text}"
    if not R.check(f"{label}: stored", got is not None):
        return
    stage, depth, discharge, flags = got
    R.check(f"{label}: raw stage kept", stage == float(stage_text), f"{stage!r}")
    want_depth, want_q, geometry_flags, tolerance = expected_state(site, stage_text)
    R.close(f"{label}: depth", depth, want_depth, 0.0, abs_tol=1e-12)
    R.close(f"{label}: discharge", discharge, want_q, tolerance, abs_tol=1e-15)
    want_flags = check_flags | geometry_flags
    R.check(f"{label}: flags", flags == want_flags, f"got {sorted(flags)}, want {sorted(want_flags)}")


def main():
    args = ds.parse_args()
    daemon_program, _ = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        config = os.path.join(root, "stagewell.yaml")
        ds.write(config, CONFIG)
        incoming = os.path.join(root, "incoming")
        tail_path = os.path.join(root, "logger", "level.csv")
        db = os.path.join(root, "db", "stagewell.db")
        os.makedirs(incoming)
        os.makedirs(os.path.dirname(tail_path))
        os.makedirs(os.path.join(root, "logger", "a-directory"))

        with ds.Daemon(daemon_program, config, os.path.join(root, "daemon.log")) as daemon:
            daemon.start()
            # Files the daemon must leave alone: being written (.part, .tmp) or hidden.
            for name in ["later.csv.part", "later.csv.tmp", ".hidden.csv"]:
                path = os.path.join(incoming, name)
                ds.write(path, "site,time,stage\nrect,2024-06-01T00:00:00Z,0.5\n")
                os.utime(path, (time.time() - 60, time.time() - 60))

            # File 1: the readings and the faults.
            first = first_file_readings()
            lines = ["site,time,stage"] + [f"{s},{ds.iso(t)},{v}" for s, t, v, _ in first]
            ds.drop_file(incoming, "a-readings.csv", "\r\n".join(lines) + "\r\n")  # CRLF too
            done = os.path.join(incoming, "done")
            R.check("file 1 moved to done/", ds.wait_until(
                lambda: os.path.exists(os.path.join(done, "a-readings.csv")), 20),
                daemon.log())
            # Moved only after its last batch is committed: every reading is there now.
            stored = ds.readings(db)
            R.check("file 1: one row per reading", len(stored) == len(first),
                    f"{len(stored)} rows for {len(first)} readings")

            # File 2: repeats, conflicts, late and future readings.
            text2, new2, conflicts = second_file_lines(int(time.time() * 1000))
            ds.drop_file(incoming, "b-repeats.csv", text2)
            R.check("file 2 moved to done/", ds.wait_until(
                lambda: os.path.exists(os.path.join(done, "b-repeats.csv")), 20))

            # Bad input: one file with every kind of bad line, one that is not CSV, one binary.
            data, bad_expected, bad_good = bad_file()
            ds.drop_file(incoming, "c-bad.csv", data)
            ds.drop_file(incoming, "d-notes.csv", NOT_CSV)
            binary, binary_lines = binary_file()
            ds.drop_file(incoming, "e-binary.csv", binary)

            # The tailed file: local times at -07:00, custom column names.
            ds.write(tail_path, "when,level\n2024-05-01 06:15:00,0.42\n")
            ds.append(tail_path, "2024-05-01 06:20:00,0.43\n")

            names = ["c-bad.csv", "d-notes.csv", "e-binary.csv"]
            R.check("bad files moved to done/", ds.wait_until(
                lambda: all(os.path.exists(os.path.join(done, n)) for n in names), 20))
            tail_ms = [T0 + (13 * 60 + 15) * MIN, T0 + (13 * 60 + 20) * MIN]  # 06:15-07:00 = 13:15Z
            R.check("tailed lines stored", ds.wait_until(
                lambda: all(("tailsite", t) in ds.readings(db, "tailsite") for t in tail_ms), 10))

            stored = ds.readings(db)
            for site, time_ms, stage_text, flags in first + new2:
                check_reading(stored, site, time_ms, stage_text, flags)
            for time_ms, stage_text in zip(tail_ms, ["0.42", "0.43"]):
                check_reading(stored, "tailsite", time_ms, stage_text, set())
            R.check("steep channel: some readings supercritical (reference Fr > 1)",
                    any("supercritical" in v[3] for k, v in stored.items() if k[0] == "steep"))
            # Conflicts: the stored value is kept, the new line is a reject named 'conflict'.
            R.check("conflict at 165: stored stage kept",
                    stored[("chk", T0 + 165 * MIN)][0] == 0.613)
            R.check("conflict at 145: stored stage kept",
                    stored[("chk", T0 + 145 * MIN)][0] == 0.612)
            for site, time_ms, stage, in bad_good:
                R.check(f"good line among bad ones stored ({ds.iso(time_ms)})",
                        stored.get((site, time_ms), (None,))[0] == stage)
            huge = stored.get(("rect", T0 + 210 * MIN))
            R.check("stage 1e200 on a site with max_stage: out_of_range, no discharge",
                    huge is not None and huge[2] is None and huge[3] == {"out_of_range"},
                    f"{huge}")
            expected_rows = len(first) + len(new2) + len(tail_ms) + len(bad_good)
            R.check("no other rows (repeats and conflicts add none; ignored files unread)",
                    len(stored) == expected_rows, f"{len(stored)} rows, want {expected_rows}")

            kept = ds.rejects(db)
            by_source = {}
            for source, position, raw, reason in kept:
                by_source.setdefault(os.path.basename(source), []).append((position, raw, reason))
            R.check("file 1 has no rejects", "a-readings.csv" not in by_source)
            repeats = by_source.get("b-repeats.csv", [])
            R.check("file 2: exactly the two conflicts rejected", len(repeats) == 2, f"{repeats}")
            for (line, site, time_ms), got in zip(conflicts, repeats):
                position, raw, reason = got
                R.check(f"conflict line {line}: position", position == f"line {line}", position)
                R.check(f"conflict line {line}: reason 'conflict'", reason.startswith("conflict"),
                        reason)
                R.check(f"conflict line {line}: raw text kept",
                        raw.decode().startswith(f"{site},{ds.iso(time_ms)},"))

            bad = by_source.get("c-bad.csv", [])
            R.check("bad file: one reject per bad line", len(bad) == len(bad_expected),
                    f"{len(bad)} rejects for {len(bad_expected)} bad lines: {bad}")
            for (line, kind), got in zip(bad_expected, bad):
                position, raw, reason = got
                R.check(f"bad line {line}: position", position == f"line {line}", position)
                R.check(f"bad line {line}: reason {kind}", reason.startswith(kind + ":"), reason)
                if kind == "too_long":
                    R.check("too_long: the first 4096 bytes kept", raw == LONG.encode()[:4096])
                elif kind != "not_text":
                    R.check(f"bad line {line}: raw text kept", raw == BAD_LINES[line - 3][0].encode())

            notes = by_source.get("d-notes.csv", [])
            note_lines = NOT_CSV.splitlines()
            R.check("not-CSV file: every line kept as a reject", len(notes) == len(note_lines),
                    f"{len(notes)} rejects for {len(note_lines)} lines")
            for i, (position, raw, reason) in enumerate(notes):
                R.check(f"not-CSV line {i + 1}: kept whole, reason bad_header",
                        position == f"line {i + 1}" and raw == note_lines[i].encode()
                        and reason.startswith("bad_header:"), f"{position} {raw!r} {reason}")
            garbage = by_source.get("e-binary.csv", [])
            R.check("binary file: every line kept as a reject", len(garbage) == binary_lines,
                    f"{len(garbage)} rejects for {binary_lines} lines")
            R.check("binary file: reason bad_header",
                    all(reason.startswith("bad_header:") for _, _, reason in garbage))
            R.check("no other rejects", set(by_source) <= {"b-repeats.csv", "c-bad.csv",
                                                           "d-notes.csv", "e-binary.csv"},
                    f"{sorted(by_source)}")

            for name in ["a-readings.csv", "b-repeats.csv"] + names:
                R.check(f"{name} no longer in the drop folder",
                        not os.path.exists(os.path.join(incoming, name)))
            for name in ["later.csv.part", "later.csv.tmp", ".hidden.csv"]:
                R.check(f"{name} left alone", os.path.exists(os.path.join(incoming, name)))

            # A file written in place (no temporary name) is read only once it has settled: not
            # modified for 2 s. An older file dropped with it is read first.
            fresh = os.path.join(incoming, "h-fresh.csv")
            ds.write(fresh, "site,time,stage\nsteep," + ds.iso(T0 + 400 * MIN) + ",0.3\n")
            written = time.time()
            ds.drop_file(incoming, "h-old.csv",
                         "site,time,stage\nsteep," + ds.iso(T0 + 405 * MIN) + ",0.31\n")
            R.check("settled file read", ds.wait_until(
                lambda: os.path.exists(os.path.join(done, "h-old.csv")), 20))
            if time.time() - written < 1.5:  # otherwise this machine is too slow to tell
                R.check("a file modified within 2 s is not read yet",
                        os.path.exists(fresh) and ("steep", T0 + 400 * MIN) not in ds.stages(db))
            R.check("the fresh file is read once settled", ds.wait_until(
                lambda: os.path.exists(os.path.join(done, "h-fresh.csv")), 20))
            R.check("... and not before 2 s after it was written",
                    time.time() - written >= 1.9, f"{time.time() - written:.2f} s")

            # A file read, moved to done/ and deleted there; a new file under the same name (which
            # may get the same inode) is read from its start.
            g1 = [("steep", T0 + 300 * MIN, "0.21"), ("steep", T0 + 305 * MIN, "0.22")]
            g2 = [("steep", T0 + 310 * MIN, "0.23"), ("steep", T0 + 315 * MIN, "0.24"),
                  ("steep", T0 + 320 * MIN, "0.25")]
            for rows in (g1, g2):
                ds.drop_file(incoming, "g-same-name.csv", "site,time,stage\n" + "".join(
                    f"{s},{ds.iso(t)},{v}\n" for s, t, v in rows))
                moved = os.path.join(done, "g-same-name.csv")
                R.check("same-name file moved to done/", ds.wait_until(
                    lambda: os.path.exists(moved), 20))
                os.remove(moved)
            have = ds.readings(db, "steep")
            R.check("a new file under a read file's name is read whole",
                    all(("steep", t) in have for _, t, _ in g1 + g2), f"{sorted(have)}")

            R.check("the daemon is still running after all that", daemon.running(), daemon.log())
            complaints = daemon.log().count("a-directory is not a regular file")
            R.check("a source's lasting trouble is logged once, not at every poll",
                    complaints == 1, f"{complaints} times")
            code = daemon.stop()
            R.check("SIGTERM: exit status 0", code == 0, f"{code}\n{daemon.log()}")
    ds.exit_with(R)


if __name__ == "__main__":
    main()
