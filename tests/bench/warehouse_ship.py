#!/usr/bin/env python3
"""Shipping to the PostgreSQL warehouse against storing locally, as whole processes.

    /usr/bin/python3 tests/bench/warehouse_ship.py --build-dir build [--rounds 5] [--rows N]
        [--dir DIR]

Writes invented one-minute readings of four sites (2,102,400 by default, one CSV file with its
configuration: `ingest_bench --write-only`), starts a throwaway PostgreSQL 15 cluster on a Unix
socket (tests/e2e/warehouse_support.py; fsync on, as a real warehouse), stores the file once into
a store kept aside, then in each round runs, in an order that turns each round:

  ingest  `stagewell ingest --config bench.yaml full.csv` into a fresh local database, start to
          exit: the local ingest rate the shipment is compared with;
  ship    `stagewell warehouse ship --config ship.yaml` of a fresh copy of the stored file (made
          before the clock starts) into a fresh warehouse database, start to exit: every reading,
          day, version and site detail shipped and committed;
  copy    (the yardstick) psql's `\\copy` of the same CSV file into a plain table
          (site text, time timestamptz, stage double precision, PRIMARY KEY (site, time)) of a
          fresh database of the same server: a separate program that shares nothing with
          stagewell.

and prints each round's ratios — ship speed / ingest speed and ship speed / copy speed (the same
readings each time, so a ratio of times) — and their medians. A round's runs share its load on
the machine, so the ratio of a round is steadier than any absolute time.

Never run by ctest: the figures go in docs/performance.md.
"""
import argparse
import contextlib
import os
import re
import shutil
import sqlite3
import statistics
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "e2e"))
import warehouse_support as ws  # noqa: E402

SITE_YEAR = 525_600


def run_timed(command, env):
    """Runs `command` to its end: wall seconds. Exits on failure, with its output."""
    start = time.monotonic()
    result = subprocess.run(command, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, env=env)
    elapsed = time.monotonic() - start
    if result.returncode != 0:
        sys.exit(f"{' '.join(command)} failed ({result.returncode}):\n"
                 + result.stdout.decode(errors="replace")[-3000:])
    return elapsed


def remove_database(path):
    for suffix in ("", "-wal", "-shm", ".service-lock"):
        with contextlib.suppress(FileNotFoundError):
            os.remove(path + suffix)


def stored_readings(path):
    with contextlib.closing(sqlite3.connect(f"file:{path}?mode=ro", uri=True)) as db:
        return db.execute("SELECT count(*) FROM readings").fetchone()[0]


def copy_store(source, dest):
    """A consistent copy of a closed store (SQLite's online backup), as one file."""
    remove_database(dest)
    with contextlib.closing(sqlite3.connect(source)) as src, \
            contextlib.closing(sqlite3.connect(dest)) as dst:
        src.backup(dst)


def superuser(pg, sql):
    with contextlib.closing(pg.connect()) as con, con.cursor() as cur:
        cur.execute(sql)


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--build-dir", default="build")
    parser.add_argument("--rounds", type=int, default=5)
    parser.add_argument("--rows", type=int, default=4 * SITE_YEAR)
    parser.add_argument("--dir", help="work here (default: a temporary directory)")
    args = parser.parse_args()
    build = os.path.abspath(args.build_dir)
    stagewell = os.path.join(build, "daemon", "stagewell")
    writer = os.path.join(build, "tests", "bench", "ingest_bench")
    psql = shutil.which("psql") or "/usr/bin/psql"
    for program in (stagewell, writer, psql):
        if not os.access(program, os.X_OK):
            sys.exit(f"not found or not built: {program}")

    root = os.path.abspath(args.dir) if args.dir else tempfile.mkdtemp(prefix="stagewell-wh-")
    os.makedirs(root, exist_ok=True)
    pg = ws.Cluster(durable=True)
    try:
        pg.start()
        subprocess.run([writer, "--write-only", "--dir", root, "--rows", str(args.rows)],
                       check=True, stdout=subprocess.DEVNULL)
        csv, yaml = os.path.join(root, "full.csv"), os.path.join(root, "bench.yaml")
        ingest_db = os.path.join(root, "ingest.db")
        kept_db, ship_db = os.path.join(root, "kept.db"), os.path.join(root, "ship.db")
        rows = sum(1 for _ in open(csv)) - 1
        base = open(yaml).read()
        password_file = pg.write_password_file(os.path.join(root, "warehouse.password"))
        env = ws.clean_env()

        # The store to ship, made once and copied fresh for each round.
        kept_yaml = os.path.join(root, "kept.yaml")
        with open(kept_yaml, "w") as f:
            f.write(re.sub(r"^database: .*$", f"database: {kept_db}", base, count=1, flags=re.M))
        remove_database(kept_db)
        run_timed([stagewell, "ingest", "--quiet", "--config", kept_yaml, csv], env)
        if stored_readings(kept_db) != rows:
            sys.exit(f"the store to ship holds {stored_readings(kept_db)} readings of {rows}")
        print(f"{rows:,} readings, {os.path.getsize(csv) / 1e6:.0f} MB of CSV; PostgreSQL "
              f"{pg.rows('SHOW server_version')[0][0]} (fsync on); {args.rounds} rounds, "
              "order turning", flush=True)

        ship_ratios, copy_ratios = [], []
        times = {"ingest": [], "ship": [], "copy": []}
        for round_number in range(1, args.rounds + 1):
            database = f"bench_round_{round_number}"
            superuser(pg, f"DROP DATABASE IF EXISTS {database}")
            superuser(pg, f"CREATE DATABASE {database} OWNER {ws.WRITER}")
            ship_yaml = os.path.join(root, "ship.yaml")
            with open(ship_yaml, "w") as f:
                f.write(re.sub(r"^database: .*$", f"database: {ship_db}", base, count=1,
                               flags=re.M))
                f.write(f'warehouse:\n  postgresql: "{pg.conninfo(dbname=database)}"\n'
                        f"  password_file: {password_file}\n  plant: bench-plant\n")
            copy_database = f"bench_copy_{round_number}"
            superuser(pg, f"DROP DATABASE IF EXISTS {copy_database}")
            superuser(pg, f"CREATE DATABASE {copy_database} OWNER {ws.WRITER}")
            remove_database(ingest_db)
            copy_store(kept_db, ship_db)
            copy_env = dict(env, PGPASSWORD=pg.writer_password)
            runs = {}

            def ingest():
                runs["ingest"] = run_timed(
                    [stagewell, "ingest", "--quiet", "--config", yaml, csv], env)

            def ship():
                runs["ship"] = run_timed([stagewell, "warehouse", "ship", "--config", ship_yaml],
                                         env)

            def copy():
                runs["copy"] = run_timed(
                    [psql, "-X", "-q", "-v", "ON_ERROR_STOP=1",
                     pg.conninfo(dbname=copy_database),
                     "-c", "CREATE TABLE plain (site text, time timestamptz, "
                           "stage double precision, PRIMARY KEY (site, time))",
                     "-c", f"\\copy plain FROM '{csv}' WITH (FORMAT csv, HEADER true)"],
                    copy_env)

            order = [ingest, ship, copy]
            shift = (round_number - 1) % 3
            for run in order[shift:] + order[:shift]:
                run()
            if stored_readings(ingest_db) != rows:
                sys.exit(f"the ingest stored {stored_readings(ingest_db)} readings of {rows}")
            shipped = _count(pg, database)
            if shipped != rows:
                sys.exit(f"the warehouse holds {shipped} readings of {rows}")
            for name in times:
                times[name].append(runs[name])
            ship_ratios.append(runs["ingest"] / runs["ship"])
            copy_ratios.append(runs["copy"] / runs["ship"])
            print(f"round {round_number}: ingest {runs['ingest']:.2f} s "
                  f"({rows / runs['ingest']:,.0f}/s), ship {runs['ship']:.2f} s "
                  f"({rows / runs['ship']:,.0f}/s), copy {runs['copy']:.2f} s "
                  f"({rows / runs['copy']:,.0f}/s): ship {ship_ratios[-1]:.3f} x ingest, "
                  f"{copy_ratios[-1]:.3f} x copy", flush=True)
            superuser(pg, f"DROP DATABASE {database}")
            superuser(pg, f"DROP DATABASE {copy_database}")

        def show(name, values):
            each = ", ".join(f"{v:.3f}" for v in values)
            print(f"{name}: median {statistics.median(values):.3f} ({each})")

        print()
        for name, values in times.items():
            print(f"{name}: {statistics.median(values):.2f} s median, "
                  f"{rows / min(values):,.0f} readings/s at best")
        show("ship speed / ingest speed", ship_ratios)
        show("ship speed / psql \\copy speed (the yardstick)", copy_ratios)
    finally:
        if not pg.stop("fast"):
            pg.stop("immediate")
        pg.remove()
        if not args.dir:
            shutil.rmtree(root, ignore_errors=True)


def _count(pg, database):
    """Readings in one warehouse database, through its `discharge` view."""
    with contextlib.closing(pg.connect(dbname=database)) as con, con.cursor() as cur:
        cur.execute(f'SELECT count(*) FROM "{ws.SCHEMA}".discharge')
        return cur.fetchone()[0]


if __name__ == "__main__":
    main()
