#!/usr/bin/env python3
"""`stagewell ingest` tells what became of a file, and reads it again when that is what is needed:

- a file whose every line is rejected (a header naming other columns) exits 1, with its rejects
  counted by kind and the first reasons on stderr; a file with some readings and some rejects
  exits 0 with the same report;
- run again with its columns named (--columns), the file is read again from its start, and the
  rejects of the earlier reading give way to the new reading's (unless --keep-rejects); the same
  command again reads nothing;
- a file rewritten since an earlier run (same size or not) is read again from its start; a file
  that only grew is resumed where the earlier run stopped;
- --stage-units converts the file's stages to the site's stage units, --time-zone places its
  local times; both as the configuration's source keys do (docs/input.md).

Expected values come from the files written here and from Python's own arithmetic: the stage
conversions by SI prefixes and the inch of exactly 25.4 mm (international yard and pound
agreement, 1959), local times by Python's zoneinfo (the system's IANA database).
"""
import datetime
import os
import re
import subprocess
import tempfile
import zoneinfo

import daemon_support as ds

R = ds.Results()
T0 = 1714521600_000  # 2024-05-01T00:00:00Z, ms
MIN = 60_000

CONFIG = """\
units: metric
database: db/stagewell.db
sites:
  - id: a
    section: {shape: rectangular, width: 2.0, height: 1.5}
    roughness: 0.014
    slope: 0.001
  - id: b
    section: {shape: rectangular, width: 1.0, height: 1.0}
    roughness: 0.015
    slope: 0.002
    stage: {units: ft}
"""


def line(site, minute, stage):
    return f"{site},{ds.iso(T0 + minute * MIN)},{stage}\n"


def run(stagewell, args, cwd):
    return subprocess.run([stagewell, "ingest", "--config", "stagewell.yaml", "-q"] + args,
                          cwd=cwd, capture_output=True, text=True, timeout=120)


def stored_count(stdout):
    m = re.search(r"(\d+) readings stored, (\d+) repeats of stored readings ignored, (\d+) lines "
                  r"rejected", stdout)
    return tuple(int(g) for g in m.groups()) if m else None


def rejects_of(db, name):
    return [r for r in ds.rejects(db) if os.path.basename(r[0]) == name]


def reason_lines(stderr, name):
    """{line number: 'kind: reason'} of the reasons the report quotes for file `name`."""
    out = {}
    for text in stderr.splitlines():
        m = re.match(re.escape(name) + r":(\d+): (.*)$", text)
        if m:
            out[int(m.group(1))] = m.group(2)
    return out


def main():
    args = ds.parse_args()
    _, stagewell = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        ds.write(os.path.join(root, "stagewell.yaml"), CONFIG)
        db = os.path.join(root, "db", "stagewell.db")

        # ---- a logger's export whose header names other columns --------------------------------
        logger = os.path.join(root, "logger.csv")
        ds.write(logger, "Station,Timestamp,Level\n"
                 + "".join(line("a", m, f"{0.4 + m / 1000:.3f}") for m in range(40)))
        first = run(stagewell, ["logger.csv"], root)
        R.check("every line rejected: exit 1", first.returncode == 1,
                f"{first.returncode}\n{first.stderr}")
        R.check("every line rejected: counted by kind on stderr",
                re.search(r"logger\.csv: 41 line\(s\) rejected \(bad_header 41\); 0 reading\(s\) "
                          r"stored", first.stderr) is not None, first.stderr)
        quoted = reason_lines(first.stderr, "logger.csv")
        R.check("every line rejected: the reason quoted once, at the header's line",
                list(quoted) == [1] and "no 'site' column" in quoted[1] and
                "'Station', 'Timestamp', 'Level'" in quoted[1], f"{quoted}\n{first.stderr}")
        R.check("every line rejected: says what to do", "--columns" in first.stderr, first.stderr)
        R.check("every line rejected: kept in rejects under the absolute path",
                len(rejects_of(db, "logger.csv")) == 41 and
                all(r[0] == os.path.realpath(logger) or r[0] == os.path.abspath(logger)
                    for r in rejects_of(db, "logger.csv")),
                f"{rejects_of(db, 'logger.csv')[:2]}")

        same = run(stagewell, ["logger.csv"], root)
        R.check("the same command again: read before, nothing read, no new rejects",
                same.returncode == 0 and "already read to its end" in same.stderr and
                len(rejects_of(db, "logger.csv")) == 41, f"{same.returncode}\n{same.stderr}")

        fixed = run(stagewell, ["--columns", "site=Station,time=Timestamp,stage=Level",
                                "logger.csv"], root)
        R.check("with its columns named: read again from the start, exit 0",
                fixed.returncode == 0 and "reading it again from the start" in fixed.stderr and
                stored_count(fixed.stdout) == (40, 0, 0), f"{fixed.returncode}\n{fixed.stdout}"
                f"{fixed.stderr}")
        R.check("with its columns named: every reading stored",
                len(ds.stages(db, "a")) == 40 and
                ds.stages(db, "a")[("a", T0 + 39 * MIN)] == 0.439)
        R.check("with its columns named: the 41 rejects of the earlier reading are gone",
                rejects_of(db, "logger.csv") == [] and "41 rejected line(s)" in fixed.stderr,
                f"{rejects_of(db, 'logger.csv')[:2]}\n{fixed.stderr}")
        again = run(stagewell, ["--columns", "site=Station,time=Timestamp,stage=Level",
                                "logger.csv"], root)
        R.check("the fixed command again: read before, nothing read",
                again.returncode == 0 and "already read to its end" in again.stderr and
                stored_count(again.stdout) == (0, 0, 0), f"{again.stdout}{again.stderr}")

        # ---- some readings and some rejects: exit 0, the same report ---------------------------
        bad_lines = [line("a", 100, "high"),          # bad_stage
                     "a,yesterday,0.5\n",             # bad_time
                     line("nowhere", 101, "0.5"),     # unknown_site
                     line("a", 102, "low"),           # bad_stage, another reason
                     line("a", 103, '"1,5"'),         # bad_stage, another reason
                     line("a", 104, "?"),             # bad_stage, another reason
                     line("a", 105, "--")]            # bad_stage, another reason
        mixed = ("site,time,stage\n" + "".join(line("a", 200 + m, "0.5") for m in range(10))
                 + "".join(bad_lines))
        ds.write(os.path.join(root, "mixed.csv"), mixed)
        some = run(stagewell, ["mixed.csv"], root)
        R.check("some rejected, some stored: exit 0", some.returncode == 0,
                f"{some.returncode}\n{some.stderr}")
        R.check("some rejected, some stored: counted by kind",
                "mixed.csv: 7 line(s) rejected (bad_stage 5, bad_time 1, unknown_site 1); "
                "10 reading(s) stored" in some.stderr, some.stderr)
        quoted = reason_lines(some.stderr, "mixed.csv")
        # Lines 12 to 18 are the bad ones (line 1 the header, 2-11 the readings): the first five
        # different reasons are quoted, each at its line; two more are counted.
        R.check("some rejected: the first five reasons, at their lines",
                sorted(quoted) == [12, 13, 14, 15, 16] and quoted[12].startswith("bad_stage:")
                and quoted[13].startswith("bad_time:") and
                quoted[14].startswith("unknown_site:"), f"{quoted}\n{some.stderr}")
        R.check("some rejected: the others counted",
                "mixed.csv: 2 more rejected line(s)" in some.stderr, some.stderr)

        # ---- --again: the rejects are replaced, not added again; --keep-rejects adds them ------
        forced = run(stagewell, ["--again", "mixed.csv"], root)
        R.check("--again: 10 repeats, the 7 rejects replaced by the same 7",
                forced.returncode == 0 and stored_count(forced.stdout) == (0, 10, 7) and
                len(rejects_of(db, "mixed.csv")) == 7,
                f"{forced.stdout}{forced.stderr}{len(rejects_of(db, 'mixed.csv'))}")
        kept = run(stagewell, ["--again", "--keep-rejects", "mixed.csv"], root)
        R.check("--again --keep-rejects: the earlier 7 kept beside the new 7",
                kept.returncode == 0 and len(rejects_of(db, "mixed.csv")) == 14,
                f"{kept.stderr}{len(rejects_of(db, 'mixed.csv'))}")

        # ---- a file rewritten since: read again from its start ---------------------------------
        rewritten = os.path.join(root, "rewritten.csv")
        before = ("site,time,stage\n" + "".join(line("a", 300 + m, "0.6") for m in range(10))
                  + "a,later,0.6\n")
        ds.write(rewritten, before)
        run(stagewell, ["rewritten.csv"], root)
        # The same size, other readings (minute 300+m becomes 400+m, the same number of
        # characters; stage 0.6 becomes 0.7), and the bad line become a comment of its length:
        # written in place (the same inode).
        after = ("site,time,stage\n" + "".join(line("a", 400 + m, "0.7") for m in range(10))
                 + "#fixed line\n")
        assert len(after) == len(before)
        with open(rewritten, "r+") as f:  # in place
            f.write(after)
        changed = run(stagewell, ["rewritten.csv"], root)
        have = ds.stages(db, "a")
        R.check("rewritten to the same size: read again from the start",
                changed.returncode == 0 and "changed since an earlier run" in changed.stderr and
                all(have.get(("a", T0 + (400 + m) * MIN)) == 0.7 for m in range(10)),
                f"{changed.returncode}\n{changed.stderr}")
        R.check("rewritten: the earlier readings are kept (stored readings are never removed)",
                all(have.get(("a", T0 + (300 + m) * MIN)) == 0.6 for m in range(10)))
        R.check("rewritten: the earlier reading's reject (the bad line, since fixed) is gone",
                rejects_of(db, "rewritten.csv") == [], f"{rejects_of(db, 'rewritten.csv')}")

        # ---- a file that only grew: resumed ----------------------------------------------------
        grown = os.path.join(root, "grown.csv")
        head = "site,time,stage\n" + "".join(line("a", 500 + m, "0.8") for m in range(10))
        ds.write(grown, head)
        run(stagewell, ["grown.csv"], root)
        ds.append(grown, "".join(line("a", 510 + m, "0.8") for m in range(5)))
        resumed = run(stagewell, ["grown.csv"], root)
        R.check("grown: resumed at the earlier end, only the new lines read",
                resumed.returncode == 0 and f"resuming at byte {len(head)}" in resumed.stderr and
                stored_count(resumed.stdout) == (5, 0, 0), f"{resumed.stdout}{resumed.stderr}")

        # ---- --stage-units ---------------------------------------------------------------------
        ds.write(os.path.join(root, "cm.csv"), "site,time,stage\n" + line("a", 600, "45.2"))
        ds.write(os.path.join(root, "inches.csv"), "site,time,stage\n" + line("b", 600, "18"))
        units = run(stagewell, ["--stage-units", "cm", "cm.csv"], root)
        inches = run(stagewell, ["--stage-units", "in", "inches.csv"], root)
        R.check("--stage-units cm: 45.2 cm stored as 0.452 m (the site's units; 1 cm = 0.01 m)",
                units.returncode == 0 and
                ds.stages(db, "a").get(("a", T0 + 600 * MIN)) == 45.2 / 100,
                f"{units.stderr} {ds.stages(db, 'a').get(('a', T0 + 600 * MIN))}")
        R.check("--stage-units in: 18 in stored as 1.5 ft at a site in feet (12 in = 1 ft)",
                inches.returncode == 0 and ds.stages(db, "b").get(("b", T0 + 600 * MIN)) == 1.5,
                f"{inches.stderr} {ds.stages(db, 'b')}")
        wrong = run(stagewell, ["--stage-units", "furlong", "cm.csv"], root)
        R.check("--stage-units with an unknown unit: exit 2, the choices named",
                wrong.returncode == 2 and "cm" in wrong.stderr and "ft" in wrong.stderr,
                f"{wrong.returncode} {wrong.stderr}")

        # ---- --time-zone, and --columns with --site --------------------------------------------
        ds.write(os.path.join(root, "local.csv"),
                 "when,level\n2024-07-01 06:15:00,0.44\n2024-12-01 06:15:00,0.45\n")
        zone = zoneinfo.ZoneInfo("America/Denver")
        expect = [round(datetime.datetime(2024, month, 1, 6, 15, tzinfo=zone).timestamp() * 1000)
                  for month in (7, 12)]
        local = run(stagewell, ["--site", "a", "--columns", "time=when,stage=level",
                                "--time-zone", "America/Denver", "local.csv"], root)
        have = ds.stages(db, "a")
        R.check("--time-zone America/Denver: summer and winter offsets as zoneinfo gives them",
                local.returncode == 0 and have.get(("a", expect[0])) == 0.44 and
                have.get(("a", expect[1])) == 0.45, f"{local.returncode} {local.stderr}")
        both = run(stagewell, ["--site", "a", "--columns", "site=station,time=when,stage=level",
                               "local.csv"], root)
        R.check("--columns naming a site column beside --site: exit 2",
                both.returncode == 2 and "--columns" in both.stderr,
                f"{both.returncode} {both.stderr}")
        bad_field = run(stagewell, ["--columns", "depth=level", "local.csv"], root)
        R.check("--columns with a field other than site, time, stage: exit 2",
                bad_field.returncode == 2 and "site, time, stage" in bad_field.stderr,
                f"{bad_field.returncode} {bad_field.stderr}")

    ds.exit_with(R)


if __name__ == "__main__":
    main()
