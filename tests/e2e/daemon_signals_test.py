#!/usr/bin/env python3
"""`stagewelld` and its signals: SIGHUP with an invalid configuration keeps the running one (and
says why in the log); SIGHUP with a valid, changed configuration (a change of roughness in the
site's history, from a time on) applies it to the readings after that time;
a SIGHUP in the middle of a large file takes the file up again where it was; SIGTERM in the
middle of it exits 0 with exactly the lines before the stored progress committed, and the next
start finishes the file with every line stored once.

Discharges are compared with Manning's equation in closed form for a rectangular channel
(daemon_support.manning; common practice) at 5e-4 relative: the service reads them from a rating
table documented as within 0.01 % of the formula, and a change of roughness from 0.014 to 0.020
moves them by 30 %, so the tolerance cannot hide which configuration computed a reading.
"""
import os
import signal
import tempfile

import daemon_support as ds

R = ds.Results()
T0 = 1714521600_000  # 2024-05-01T00:00:00Z, ms
MIN = 60_000
BIG_LINES = 1_000_000  # large enough that the SIGTERM below lands before the file ends


def config(roughness, extra_site=False, error=False, change=None):
    text = f"""\
units: metric
database: db/stagewell.db
log:
  file: var/stagewell.log
sources:
  - type: directory
    path: incoming
sites:
  - id: a
    section: {{shape: rectangular, width: 2.0, height: 1.5}}
    roughness: {roughness}
    slope: 0.001
"""
    if change is not None:  # (from_ms, roughness): the site's history (docs/configuration.md)
        text += f"""\
    changes:
      - from: {ds.iso(change[0])}
        roughness: {change[1]}
"""
    if extra_site:
        text += f"""\
  - id: b
    section: {{shape: rectangular, width: 1.0, height: 1.0}}
    roughness: {0.5 if error else 0.015}
    slope: 0.002
"""
    return text


def csv(rows):
    return "site,time,stage\n" + "".join(f"{s},{ds.iso(t)},{v}\n" for s, t, v in rows)


def manning_a(roughness, stage):
    return ds.manning(ds.rectangular(2.0, 1.5), roughness, 0.001, stage)[0]


def main():
    args = ds.parse_args()
    daemon_program, _ = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        config_path = os.path.join(root, "stagewell.yaml")
        ds.write(config_path, config(0.014))
        incoming = os.path.join(root, "incoming")
        done = os.path.join(incoming, "done")
        os.makedirs(incoming)
        db = os.path.join(root, "db", "stagewell.db")
        log_file = os.path.join(root, "var", "stagewell.log")

        def drop_and_wait(name, text):
            ds.drop_file(incoming, name, text)
            return R.check(f"{name} read and moved to done/", ds.wait_until(
                lambda: os.path.exists(os.path.join(done, name)), 20))

        def log_has(daemon, words):
            return "\n".join(daemon.log().splitlines()[-200:]).count(words)

        os.umask(0o022)  # the usual shell umask, whatever ctest was given: the service's own wins
        daemon = ds.Daemon(daemon_program, config_path, os.path.join(root, "daemon.log"))
        try:
            daemon.start()
            first = [("a", T0 + i * MIN, f"{0.3 + 0.05 * i:.2f}") for i in range(5)]
            drop_and_wait("f1.csv", csv(first))

            # The service sets its own umask (this test runs it under the usual 022): what it
            # creates is not readable by other users. -wal and -shm exist while it runs.
            for path in (db, db + "-wal", db + "-shm", log_file):
                mode = os.stat(path).st_mode & 0o777 if os.path.exists(path) else None
                R.check(f"{os.path.basename(path)} is not readable by others (mode "
                        f"{mode and oct(mode)})", mode is not None and mode & 0o007 == 0)
            # ... but its group (analysts) may read the database beside the service, which in WAL
            # mode needs the -shm file writable (sqlite.org, "Write-Ahead Logging", read-only
            # databases): the database files are group-readable and -writable.
            for path in (db, db + "-wal", db + "-shm"):
                mode = os.stat(path).st_mode & 0o777 if os.path.exists(path) else None
                R.check(f"{os.path.basename(path)} is group-readable and -writable (mode "
                        f"{mode and oct(mode)})", mode is not None and mode & 0o060 == 0o060)

            # SIGHUP with an invalid configuration (site b's roughness out of bounds).
            ds.write(config_path, config(0.020, extra_site=True, error=True))
            daemon.signal(signal.SIGHUP)
            R.check("invalid reload: the log says the running configuration is kept",
                    ds.wait_until(lambda: log_has(daemon, "keeping the running one"), 10),
                    daemon.log())
            R.check("invalid reload: the log names the bad key",
                    "sites[1].roughness" in daemon.log(), daemon.log()[-2000:])
            with open(log_file, errors="replace") as f:
                R.check("invalid reload: logged to the configured log file too",
                        "keeping the running one" in f.read())

            # SIGHUP with a file that holds one byte, `,`: yaml-cpp's LoadAll never returned on
            # it (memory grew without bound); now it is an error like any other, and the
            # service carries on.
            ds.write(config_path, ",")
            daemon.signal(signal.SIGHUP)
            R.check("a `,` configuration on reload: refused, the running one kept",
                    ds.wait_until(lambda: log_has(daemon, "keeping the running one") == 2, 10),
                    daemon.log()[-2000:])
            R.check("a `,` configuration on reload: the error says where",
                    "1:1: YAML syntax error" in daemon.log(), daemon.log()[-2000:])
            second = [("a", T0 + (10 + i) * MIN, f"{0.5 + 0.05 * i:.2f}") for i in range(3)]
            drop_and_wait("f2.csv", csv(second + [("b", T0 + 10 * MIN, "0.4")]))
            R.check("after an invalid reload the daemon still ingests new files",
                    all((s, t) in ds.readings(db) for s, t, _ in second))
            kept = [r for r in ds.rejects(db) if r[0].endswith("f2.csv")]
            R.check("the old configuration is in force: site b unknown",
                    len(kept) == 1 and kept[0][3].startswith("unknown_site:"), f"{kept}")

            # SIGHUP with a valid configuration: new roughness for a from a time on (a change in
            # its history; readings before it keep theirs), a new site b.
            ds.write(config_path, config(0.014, extra_site=True, change=(T0 + 15 * MIN, 0.020)))
            daemon.signal(signal.SIGHUP)
            R.check("valid reload logged", ds.wait_until(lambda: log_has(daemon, "reloaded"), 10),
                    daemon.log())
            third = [("a", T0 + (20 + i) * MIN, f"{0.5 + 0.05 * i:.2f}") for i in range(3)]
            drop_and_wait("f3.csv", csv(third + [("b", T0 + 20 * MIN, "0.4")]))
            have = ds.readings(db)
            R.check("after a valid reload the new site is read", ("b", T0 + 20 * MIN) in have)
            for site, t, v in third:
                R.close(f"new roughness applies: a {ds.iso(t)}", have[(site, t)][2],
                        manning_a(0.020, float(v)), 5e-4)
            for site, t, v in first + second:
                R.close(f"stored readings keep the roughness they were computed with: "
                        f"a {ds.iso(t)}", have[(site, t)][2], manning_a(0.014, float(v)), 5e-4)
            R.check("still running after two reloads", daemon.running(), daemon.log())

            # SIGTERM in the middle of a large file: exit 0; what is stored is exactly the lines
            # before the stored progress offset.
            big = [("a", T0 + (1000 + i) * MIN, f"{0.2 + (i % 900) / 1000:.3f}")
                   for i in range(BIG_LINES)]
            big_text = csv(big)
            ds.drop_file(incoming, "big.csv", big_text)
            count_before = ds.count(db, "SELECT count(*) FROM discharge")
            # A reload in the middle of the file: the file is taken up again from its progress.
            ds.wait_until(lambda: ds.count(db, "SELECT count(*) FROM discharge")
                          > count_before + 10_000, 30, interval_s=0.005)
            reloads = daemon.log().count("reloaded")
            daemon.signal(signal.SIGHUP)
            R.check("reload during a file", ds.wait_until(
                lambda: daemon.log().count("reloaded") > reloads, 10), daemon.log()[-2000:])
            count_reloaded = ds.count(db, "SELECT count(*) FROM discharge")
            ds.wait_until(lambda: ds.count(db, "SELECT count(*) FROM discharge")
                          > count_reloaded + 5_000, 30, interval_s=0.005)
            daemon.signal(signal.SIGTERM)
            try:
                code = daemon.process.wait(timeout=20)
            except Exception:
                code = None
            R.check("SIGTERM: exit status 0", code == 0, f"{code}\n{daemon.log()[-2000:]}")
            R.check("SIGTERM: the log says it stopped", "stopped" in daemon.log())
            key = "folder:" + os.path.normpath(os.path.join(incoming, "big.csv"))
            rows = ds.query(db, "SELECT byte_offset FROM ingest_progress WHERE source = ?", (key,))
            have = ds.stages(db, "a")
            stored_big = sum(1 for s, t, _ in big if (s, t) in have)
            if rows and not os.path.exists(os.path.join(done, "big.csv")):
                offset = rows[0][0]
                lines_before = big_text.encode()[:offset].count(b"\n") - 1  # minus the header
                R.check("SIGTERM mid-file: the stored readings are exactly the lines before the "
                        "stored offset", stored_big == lines_before and all(
                            (s, t) in have for s, t, _ in big[:lines_before]),
                        f"{stored_big} stored, {lines_before} lines before byte {offset}")
                R.check("SIGTERM came in the middle of the file", 0 < stored_big < BIG_LINES,
                        f"{stored_big}")
            else:
                R.check("SIGTERM came in the middle of the file", False,
                        "the file was finished before the signal")

            daemon.start()
            R.check("restart: the big file is finished", ds.wait_until(
                lambda: os.path.exists(os.path.join(done, "big.csv")), 60), daemon.log())
            have = ds.stages(db, "a")
            R.check("every line of the big file stored once, with its stage",
                    all(have.get((s, t)) == float(v) for s, t, v in big))
            R.check("no conflicts", not any(r[3].startswith("conflict") for r in ds.rejects(db)))
            daemon.signal(signal.SIGINT)
            try:
                code = daemon.process.wait(timeout=20)
            except Exception:
                code = None
            R.check("SIGINT: exit status 0", code == 0, f"{code}")
        finally:
            daemon.kill9()
    ds.exit_with(R)


if __name__ == "__main__":
    main()
