#!/usr/bin/env python3
"""`stagewell ingest --config F FILE...`: the summary (readings stored, repeats, flagged by flag,
rejected by reason), exit statuses, resume after an interruption, `--again`, and the progress
display (a bar on a terminal, plain lines otherwise).

The expected counts come from the files this script writes and the check definitions in
docs/checks-and-alarms.md, applied by hand below; the stored rows are read back through the
`discharge` view.
"""
import os
import pty
import re
import signal
import subprocess
import tempfile

import daemon_support as ds

R = ds.Results()
T0 = 1714521600_000  # 2024-05-01T00:00:00Z, ms
MIN = 60_000
BIG_LINES = 300_000

CONFIG = """\
units: metric
database: db/stagewell.db
sites:
  - id: a
    section: {shape: rectangular, width: 2.0, height: 1.5}
    roughness: 0.014
    slope: 0.001
    checks: {min_stage: 0.0, max_stage: 2.0, max_gap: 15m, unsteady: 0%}
  - id: b
    section: {shape: rectangular, width: 1.0, height: 1.0}
    roughness: 0.015
    slope: 0.002
    checks: {unsteady: 0%}  # the series jump: the Jones rule is band_and_jones_test's
"""


def line(site, minute, stage):
    return f"{site},{ds.iso(T0 + minute * MIN)},{stage}\n"


# x.csv: 13 new readings (1 out_of_range, 1 gap), 1 identical repeat, 3 rejects.
X_CSV = ("site,time,stage\n"
         + "".join(line("a", m, f"{0.5 + m / 100:.2f}") for m in range(10))
         + line("a", 10, "2.5")          # above max_stage 2.0: out_of_range
         + line("a", 40, "0.6")          # 30 min after the previous reading > 15 min: gap
         + line("a", 41, "0.61")
         + line("a", 41, "0.61")         # identical repeat: ignored
         + line("a", 41, "0.7")          # same time, other stage: conflict
         + "a,not a time,0.6\n"          # bad_time
         + line("nowhere", 42, "0.6").rstrip("\n"))  # unknown_site; the file's last line has no
                                                     # line ending: read once, not at every run
# y.csv: 5 clean readings of site b.
Y_CSV = "site,time,stage\n" + "".join(line("b", m, f"{0.3 + m / 100:.2f}") for m in range(5))


def run(stagewell, args, cwd, **kwargs):
    return subprocess.run([stagewell, "ingest"] + args, cwd=cwd, capture_output=True, text=True,
                          timeout=120, **kwargs)


def summary(stdout):
    """(files, stored, repeats, rejected, {flag: n}, {reason: n}) from the summary, or None."""
    m = re.search(r"(\d+) file\(s\): (\d+) readings stored, (\d+) repeats of stored readings "
                  r"ignored, (\d+) lines rejected", stdout)
    if not m:
        return None
    sections = {"flagged": {}, "rejected": {}}
    current = None
    for text in stdout.splitlines():
        if text.startswith("flagged:"):
            current = "flagged"
        elif text.startswith("rejected"):
            current = "rejected"
        elif current and re.match(r"^\s+\S+\s+\d+$", text):
            name, n = text.split()
            sections[current][name] = int(n)
    return tuple(int(g) for g in m.groups()) + (sections["flagged"], sections["rejected"])


def main():
    args = ds.parse_args()
    _, stagewell = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        ds.write(os.path.join(root, "stagewell.yaml"), CONFIG)
        ds.write(os.path.join(root, "x.csv"), X_CSV)
        ds.write(os.path.join(root, "y.csv"), Y_CSV)
        db = os.path.join(root, "db", "stagewell.db")
        base = ["--config", "stagewell.yaml"]

        # First run: both files.
        done = run(stagewell, base + ["x.csv", "y.csv"], root)
        R.check("first run: exit status 0", done.returncode == 0, done.stderr)
        got = summary(done.stdout)
        R.check("first run: summary counts", got is not None and got[:4] == (2, 18, 1, 3),
                f"{got}\n{done.stdout}")
        if got:
            R.check("first run: flagged by flag", got[4] == {"gap": 1, "out_of_range": 1},
                    f"{got[4]}")
            R.check("first run: rejected by reason",
                    got[5] == {"bad_time": 1, "conflict": 1, "unknown_site": 1}, f"{got[5]}")
        have = ds.readings(db)
        R.check("first run: 18 rows in the discharge view", len(have) == 18, f"{len(have)}")
        R.check("conflict: the first stage is kept", have[("a", T0 + 41 * MIN)][0] == 0.61)
        R.check("out_of_range stored without discharge",
                have[("a", T0 + 10 * MIN)][2] is None and have[("a", T0 + 10 * MIN)][3] ==
                {"out_of_range"})
        R.check("non-terminal progress: plain lines ending at 100%",
                "100.0%" in done.stderr and "\r" not in done.stderr, done.stderr)
        # The usual caution under stored discharges (README, "Cautions": common practice).
        R.check("first run: the caution under the summary",
                "estimate" in done.stdout and "field measurements" in done.stdout, done.stdout)

        # Second run: both files are finished; nothing is read again.
        again = run(stagewell, base + ["x.csv", "y.csv"], root)
        got = summary(again.stdout)
        R.check("second run: exit 0, nothing stored, nothing rejected again",
                again.returncode == 0 and got is not None and got[:4] == (2, 0, 0, 0),
                f"{got}\n{again.stdout}{again.stderr}")
        R.check("second run: says the files were read before",
                again.stderr.count("already read to its end") == 2, again.stderr)
        R.check("second run: no new rejects", len(ds.rejects(db)) == 3)
        R.check("second run: nothing stored, no caution", "estimate" not in again.stdout,
                again.stdout)

        # --again: every line read again; readings are repeats, bad lines are rejected again.
        forced = run(stagewell, base + ["--again", "x.csv"], root)
        got = summary(forced.stdout)
        R.check("--again: exit 0, 0 stored, 14 repeats, 3 rejected",
                forced.returncode == 0 and got is not None and got[:4] == (1, 0, 14, 3),
                f"{got}\n{forced.stdout}{forced.stderr}")
        R.check("--again: no new rows", ds.count(db, "SELECT count(*) FROM discharge") == 18)

        # Exit statuses.
        # A missing file is a wrong file, not a wrong command line (docs/command-line.md: 1 when
        # "a file is wrong", 2 only for the command line itself); the other files are still read.
        ds.write(os.path.join(root, "v.csv"), "site,time,stage\n" + line("b", 90, "0.4"))
        missing = run(stagewell, base + ["no-such.csv", "v.csv"], root)
        R.check("a file that does not exist: exit 1, named, the others still read",
                missing.returncode == 1 and "no-such.csv" in missing.stderr and
                ("b", T0 + 90 * MIN) in ds.stages(db, "b"),
                f"{missing.returncode} {missing.stderr}")
        ds.write(os.path.join(root, "bad.yaml"), CONFIG.replace("roughness: 0.014",
                                                                "roughness: 9"))
        invalid = run(stagewell, ["--config", "bad.yaml", "x.csv"], root)
        R.check("an invalid configuration: exit 1, the key named", invalid.returncode == 1 and
                "roughness" in invalid.stderr, f"{invalid.returncode} {invalid.stderr}")
        ds.write(os.path.join(root, "z.csv"), "site,time,stage\n" + line("b", 100, "0.4"))
        partial = run(stagewell, base + ["/dev/null", "z.csv"], root)
        R.check("a file that cannot be read: exit 1, the others still read",
                partial.returncode == 1 and ("b", T0 + 100 * MIN) in ds.stages(db, "b"),
                f"{partial.returncode} {partial.stdout} {partial.stderr}")

        # --site and --time-zone: a file with no site column and local times at -07:00.
        ds.write(os.path.join(root, "local.csv"),
                 "time,stage\n2024-05-01 06:15:00,0.44\n2024-05-01 06:20,0.45\n")
        local = run(stagewell, base + ["--site", "b", "--time-zone", "-07:00", "local.csv"], root)
        have = ds.stages(db, "b")
        R.check("--site, --time-zone: local 06:15 at -07:00 is 13:15Z", local.returncode == 0 and
                have.get(("b", T0 + (13 * 60 + 15) * MIN)) == 0.44 and
                have.get(("b", T0 + (13 * 60 + 20) * MIN)) == 0.45,
                f"{local.returncode} {local.stdout} {local.stderr}")
        unknown = run(stagewell, base + ["--site", "nowhere", "local.csv"], root)
        R.check("--site naming no configured site: exit 1", unknown.returncode == 1,
                f"{unknown.returncode} {unknown.stderr}")

        # A terminal gets a progress bar redrawn in place.
        master, slave = pty.openpty()
        ds.write(os.path.join(root, "w.csv"), "site,time,stage\n" + line("b", 200, "0.4"))
        with subprocess.Popen([stagewell, "ingest"] + base + ["w.csv"], cwd=root,
                              stdout=subprocess.DEVNULL, stderr=slave) as bar:
            os.close(slave)
            shown = b""
            while True:
                try:
                    chunk = os.read(master, 4096)
                except OSError:  # EIO: the other end closed
                    break
                if not chunk:
                    break
                shown += chunk
            bar.wait(timeout=60)
        os.close(master)
        R.check("terminal: a progress bar redrawn with \\r", b"\r" in shown and b"[#" in shown,
                repr(shown[:200]))

        # Interrupted (SIGINT) in the middle of a large file, then resumed exactly.
        big = os.path.join(root, "big.csv")
        with open(big, "w") as f:
            f.write("site,time,stage\n")
            for i in range(BIG_LINES):
                f.write(line("b", 1000 + i, f"{0.2 + (i % 700) / 1000:.3f}"))
        rows_before = ds.count(db, "SELECT count(*) FROM discharge")
        with subprocess.Popen([stagewell, "ingest"] + base + ["big.csv"], cwd=root,
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True) as first:
            try:
                ds.wait_until(lambda: ds.count(db, "SELECT count(*) FROM discharge")
                              > rows_before + 40_000 or first.poll() is not None, 60,
                              interval_s=0.005)
                first.send_signal(signal.SIGINT)
                out, err = first.communicate(timeout=60)
            finally:
                if first.poll() is None:
                    first.kill()
        got = summary(out)
        after_first = ds.count(db, "SELECT count(*) FROM discharge") - rows_before
        R.check("SIGINT: exit status 130, says how to resume",
                first.returncode == 130 and "run again to resume" in err,
                f"{first.returncode} {err[-500:]}")
        R.check("SIGINT: the summary counts what was committed",
                got is not None and got[1] == after_first and 0 < after_first < BIG_LINES,
                f"{got} vs {after_first} stored")
        resumed = run(stagewell, base + ["big.csv"], root)
        got = summary(resumed.stdout)
        R.check("resume: exit 0, says where it resumes", resumed.returncode == 0 and
                "resuming at byte" in resumed.stderr, resumed.stderr)
        R.check("resume: exactly the rest is stored, nothing read twice",
                got is not None and got[1:3] == (BIG_LINES - after_first, 0),
                f"{got} (first run stored {after_first})")
        have = ds.stages(db, "b")
        R.check("resume: every line of the big file stored once, with its stage",
                all(have.get(("b", T0 + (1000 + i) * MIN)) == round(0.2 + (i % 700) / 1000, 3)
                    for i in range(BIG_LINES)))
    ds.exit_with(R)


if __name__ == "__main__":
    main()
