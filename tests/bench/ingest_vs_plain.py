#!/usr/bin/env python3
"""`stagewell ingest` against a plain SQLite insert of the same rows, as whole processes.

    /usr/bin/python3 tests/bench/ingest_vs_plain.py --build-dir build [--rounds 5] [--rows N]
        [--service] [--recompute] [--dir DIR]

Writes an invented year of one-minute readings of four sites (2,102,400 readings, one 70 MB CSV
file, with its configuration: `ingest_bench --write-only`), then in each round runs, on fresh
databases and in alternating order:

  ingest     `stagewell ingest --config bench.yaml full.csv`, start to exit;
  plain      `plain_insert full.csv plain.db` (tests/bench/plain_insert.cpp), start to exit: one
             prepared INSERT into a plain (site, time, stage, discharge, flags) WITHOUT ROWID
             table, WAL, synchronous=NORMAL, 10,000-row transactions; nothing of stagewell.

and prints each round's ratio plain seconds / ingest seconds (1.0: as fast as SQLite alone) and
their median, the ingest's peak resident memory, and the database bytes per stored reading.

--service adds, to each round, the running service fed the same file two ways, each paired with
that round's ingest:
  drop folder  the file renamed into the service's folder: timed by the service's log from the line
               saying it starts reading the file to the line saying it is read to its end (last
               batch committed); the time from the rename, which adds the wait for the folder's
               next look (every 200 ms when idle), is shown beside it;
  send         `stagewell send` to the service's tcp source, start to exit (every line's `ok`).

--recompute adds, after the rounds, `stagewell recompute` of one site-year (raceway-a, 525,600
readings) after its roughness is changed, start to exit: readings per second.

Never run by ctest: the figures go in docs/performance.md.
"""
import argparse
import datetime
import os
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import time

import service_bench  # its Service and port helpers (this folder)

SITE_YEAR = 525_600  # one site's readings in the file


GNU_TIME = "/usr/bin/time"  # Debian's `time` package


def run_timed(command, **kwargs):
    """Runs `command` to its end: (wall seconds, peak RSS in MiB or None). Exits on failure.

    The peak RSS is GNU time's (%M) when it is installed: a child forked from this Python process
    would report this process's size as its own peak (the figure survives exec)."""
    rss_path = None
    if os.access(GNU_TIME, os.X_OK):
        handle, rss_path = tempfile.mkstemp(prefix="stagewell-rss-")
        os.close(handle)
        command = [GNU_TIME, "-f", "%M", "-o", rss_path] + list(command)
    start = time.monotonic()
    result = subprocess.run(command, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, **kwargs)
    elapsed = time.monotonic() - start
    if result.returncode != 0:
        sys.exit(f"{' '.join(command)} failed ({result.returncode}):\n"
                 + result.stdout.decode(errors="replace")[-3000:])
    rss = None
    if rss_path:
        with open(rss_path) as f:
            rss = int(f.read().split()[-1]) / 1024.0
        os.remove(rss_path)
    return elapsed, rss


def remove_database(path):
    for suffix in ("", "-wal", "-shm", ".service-lock"):
        try:
            os.remove(path + suffix)
        except FileNotFoundError:
            pass


def database_bytes(path):
    return sum(os.path.getsize(path + s) for s in ("", "-wal") if os.path.exists(path + s))


def stored_readings(path):
    import sqlite3
    with sqlite3.connect(f"file:{path}?mode=ro", uri=True) as db:
        return db.execute("SELECT count(*) FROM readings").fetchone()[0]


class Service(service_bench.Service):
    """stagewelld on the benchmark's configuration plus a drop folder and a tcp source."""

    def __init__(self, stagewelld, root, base_yaml, database):
        self.incoming = os.path.join(root, "incoming")
        os.makedirs(self.incoming, exist_ok=True)
        self.port = service_bench.free_port()
        text = open(base_yaml).read()
        sources = (f"sources:\n  - type: directory\n    path: {self.incoming}\n"
                   f"  - type: tcp\n    listen: 127.0.0.1:{self.port}\n")
        text = re.sub(r"^database: .*$", f"database: {database}\n{sources}", text, count=1,
                      flags=re.M)
        config = os.path.join(root, "service.yaml")
        with open(config, "w") as f:
            f.write(text)
        try:  # service_bench's log is appended to: each round's must be its own
            os.remove(os.path.join(root, "stagewelld.log"))
        except FileNotFoundError:
            pass
        super().__init__(stagewelld, root, config)
        if not service_bench.wait_port(self.port):
            sys.exit("the service does not listen:\n" + self.log()[-3000:])

    def stop(self):
        super().stop()
        if self.process.returncode != 0:
            sys.exit("stagewelld failed:\n" + self.log()[-3000:])


def drop_folder_round(stagewelld, root, base_yaml, csv):
    database = os.path.join(root, "service.db")
    remove_database(database)
    service = Service(stagewelld, root, base_yaml, database)
    try:
        part = os.path.join(service.incoming, "year.csv.part")
        os.link(csv, part)
        past = time.time() - 60  # old enough to be taken at once
        os.utime(part, (past, past))
        start = time.monotonic()
        os.rename(part, os.path.join(service.incoming, "year.csv"))
        if not service.wait_for("year.csv: read to the end", 900):
            sys.exit("the file was not read to its end:\n" + service.log()[-3000:])
        from_drop = time.monotonic() - start
        # The reading itself, by the service's own log times: from the line saying it starts to
        # read the file to the line saying its last batch is committed. The rest of `from_drop`
        # is the wait for the folder's next look (every 200 ms when idle).
        times = {}
        for line in service.log().splitlines():
            for key, text in (("start", "year.csv: reading ("), ("end", "year.csv: read to the end")):
                if text in line:
                    times[key] = datetime.datetime.fromisoformat(line.split(" ", 1)[0])
        return (times["end"] - times["start"]).total_seconds(), from_drop
    finally:
        service.stop()
        remove_database(database)
        shutil.rmtree(service.incoming, ignore_errors=True)


def send_round(stagewelld, stagewell, root, base_yaml, csv):
    database = os.path.join(root, "service.db")
    remove_database(database)
    service = Service(stagewelld, root, base_yaml, database)
    try:
        seconds, _ = run_timed([stagewell, "send", "--host", "127.0.0.1", "--port",
                                str(service.port), "--quiet", csv])
        return seconds
    finally:
        service.stop()
        remove_database(database)
        shutil.rmtree(service.incoming, ignore_errors=True)


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--build-dir", default="build")
    parser.add_argument("--rounds", type=int, default=5)
    parser.add_argument("--rows", type=int, default=4 * SITE_YEAR)
    parser.add_argument("--service", action="store_true")
    parser.add_argument("--recompute", action="store_true")
    parser.add_argument("--dir", help="work here (default: a temporary directory)")
    args = parser.parse_args()
    build = os.path.abspath(args.build_dir)
    stagewell = os.path.join(build, "daemon", "stagewell")
    stagewelld = os.path.join(build, "daemon", "stagewelld")
    plain = os.path.join(build, "tests", "bench", "plain_insert")
    writer = os.path.join(build, "tests", "bench", "ingest_bench")
    for program in (stagewell, stagewelld, plain, writer):
        if not os.access(program, os.X_OK):
            sys.exit(f"not built: {program}")

    root = os.path.abspath(args.dir) if args.dir else tempfile.mkdtemp(prefix="stagewell-vs-")
    os.makedirs(root, exist_ok=True)
    try:
        subprocess.run([writer, "--write-only", "--dir", root, "--rows", str(args.rows)],
                       check=True, stdout=subprocess.DEVNULL)
        csv, yaml = os.path.join(root, "full.csv"), os.path.join(root, "bench.yaml")
        ingest_db, plain_db = os.path.join(root, "ingest.db"), os.path.join(root, "plain.db")
        rows = sum(1 for _ in open(csv)) - 1
        print(f"{rows:,} readings, {os.path.getsize(csv) / 1e6:.0f} MB of CSV; "
              f"{args.rounds} rounds, order alternating")

        ratios, drop_ratios, drop_total_ratios, send_ratios = [], [], [], []
        ingest_seconds, plain_seconds, rss, per_reading = [], [], [], []
        for round_number in range(1, args.rounds + 1):
            remove_database(ingest_db)
            remove_database(plain_db)
            runs = {}

            def ingest():
                runs["ingest"] = run_timed([stagewell, "ingest", "--quiet", "--config", yaml, csv])

            def plain_insert():
                runs["plain"] = run_timed([plain, csv, plain_db])

            for run in ((ingest, plain_insert) if round_number % 2 else (plain_insert, ingest)):
                run()
            stored = stored_readings(ingest_db)
            if stored != rows:
                sys.exit(f"the ingest stored {stored} readings of {rows}")
            (ingest_s, ingest_rss), (plain_s, _) = runs["ingest"], runs["plain"]
            ingest_seconds.append(ingest_s)
            plain_seconds.append(plain_s)
            if ingest_rss is not None:
                rss.append(ingest_rss)
            per_reading.append(database_bytes(ingest_db) / rows)
            ratios.append(plain_s / ingest_s)
            shown_rss = f"{ingest_rss:.1f} MiB" if ingest_rss is not None else "?"
            line = (f"round {round_number}: ingest {ingest_s:.2f} s ({rows / ingest_s:,.0f}/s, "
                    f"peak RSS {shown_rss}), plain {plain_s:.2f} s: "
                    f"{ratios[-1]:.3f} x plain")
            if args.service:
                drop_s, drop_total_s = drop_folder_round(stagewelld, root, yaml, csv)
                send_s = send_round(stagewelld, stagewell, root, yaml, csv)
                drop_ratios.append(ingest_s / drop_s)
                drop_total_ratios.append(ingest_s / drop_total_s)
                send_ratios.append(ingest_s / send_s)
                line += (f"; drop folder {drop_s:.2f} s reading, {drop_total_s:.2f} s from the "
                         f"drop ({drop_ratios[-1]:.3f} / {drop_total_ratios[-1]:.3f} x ingest), "
                         f"send {send_s:.2f} s ({send_ratios[-1]:.3f} x ingest)")
            print(line, flush=True)

        def show(name, values, target):
            median = statistics.median(values)
            each = ", ".join(f"{v:.3f}" for v in values)
            verdict = "met" if median >= target else "MISSED"
            print(f"{name}: median {median:.3f} ({each}); target >= {target}: {verdict}")

        print()
        print(f"ingest: {statistics.median(ingest_seconds):.2f} s median, "
              f"{rows / min(ingest_seconds):,.0f} readings/s at best; plain: "
              f"{statistics.median(plain_seconds):.2f} s median, "
              f"{rows / min(plain_seconds):,.0f} rows/s at best")
        show("ingest speed / plain insert speed", ratios, 0.8)
        if args.service:
            show("drop folder reading speed / ingest speed", drop_ratios, 0.9)
            median = statistics.median(drop_total_ratios)
            print(f"  the same from the drop, the folder's look included: median {median:.3f} ("
                  + ", ".join(f"{v:.3f}" for v in drop_total_ratios) + ")")
            show("send speed / ingest speed", send_ratios, 0.9)
        if rss:
            print(f"ingest peak RSS: {max(rss):.1f} MiB at most; target <= 64 MiB: "
                  f"{'met' if max(rss) <= 64 else 'MISSED'}")
        else:
            print("ingest peak RSS: not measured (install Debian's `time` package)")
        # 45: the plain table's five values in about 35 bytes, and each reading's uncertainty band
        # and Jones estimate (whole basis points, 1 to 3 bytes each, schema 9); 40 before those.
        print(f"database bytes per stored reading: {statistics.median(per_reading):.1f} "
              f"(plain table: {database_bytes(plain_db) / rows:.1f}); target <= 45: "
              f"{'met' if statistics.median(per_reading) <= 45 else 'MISSED'}")

        if args.recompute:
            text = open(yaml).read()
            changed = text.replace("roughness: 0.014\n", "roughness: 0.015\n", 1)
            if changed == text:
                sys.exit("could not change raceway-a's roughness in bench.yaml")
            edited = os.path.join(root, "recompute.yaml")
            with open(edited, "w") as f:
                f.write(changed)
            seconds, _ = run_timed([stagewell, "recompute", "--quiet", "--config", edited,
                                    "--site", "raceway-a"])
            site_readings = rows // 4
            rate = site_readings / seconds
            print(f"recompute of one site ({site_readings:,} readings): {seconds:.2f} s, "
                  f"{rate:,.0f} readings/s; target >= 250,000: "
                  f"{'met' if rate >= 250_000 else 'MISSED'}")
    finally:
        if not args.dir:
            shutil.rmtree(root, ignore_errors=True)


if __name__ == "__main__":
    main()
