#!/usr/bin/env python3
"""How responsive the service stays whatever one client, one file or one other process does.
Whole processes (the built `stagewelld`, Python clients over loopback); never run by ctest.

    /usr/bin/python3 tests/bench/service_bench.py --bin-dir build-rel/daemon [--rounds 3]
        [--lock-seconds 30] [--quick]

1. Lock: another process holds the database's write lock (BEGIN EXCLUSIVE) for --lock-seconds
   while a client polls /api/sites and / every 100 ms and a tcp client has lines waiting. Reported:
   the slowest and the 99th-percentile answer, whether the tcp connection stayed open, and how
   long a SIGTERM takes to end the service while the lock is still held.
   Targets: every answer within 100 ms; the stop within 2 s.
2. Ingest: an invented year of one-minute readings of four sites (2,102,400 readings, one CSV
   file) dropped into the service's folder, timed from the drop to the log line saying the file
   is read to its end (its last batch committed). Each round runs it three ways on fresh
   databases, in rotating order: alone; with a client asking /api/sites 20 times a second; and
   with that client plus another asking, back to back, for 31 days of one site's readings (the
   API's largest answer, ~2.5 MB). Reported: the median over rounds of the paired ratios of
   ingest rates, and the /api/sites answer times under load.
   Targets: /api/sites p99 <= 50 ms; ingest slower by less than 10 % under 20 requests/s; the
   month-long answers change neither.

The latencies include Python's own time per request (about 0.3 ms here).
"""
import argparse
import http.client
import math
import os
import signal
import socket
import sqlite3
import statistics
import subprocess
import sys
import tempfile
import threading
import time

T0 = 1735689600_000  # 2025-01-01T00:00:00Z, ms
MIN = 60_000
SITES = ("north", "south", "east", "west")


def free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def iso(ms):
    seconds, millis = divmod(ms, 1000)
    return time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime(seconds))


def config(root, tcp_port, http_port):
    text = f"""units: metric
database: db/stagewell.db
sources:
  - type: directory
    path: incoming
  - type: tcp
    listen: 127.0.0.1:{tcp_port}
http:
  listen: 127.0.0.1:{http_port}
  max_connections: 64
sites:
"""
    for i, site in enumerate(SITES):
        text += f"""  - id: {site}
    section: {{shape: rectangular, width: {2.0 + i}, height: 2.0}}
    roughness: 0.014
    slope: 0.001
"""
    path = os.path.join(root, "stagewell.yaml")
    with open(path, "w") as f:
        f.write(text)
    os.makedirs(os.path.join(root, "incoming"), exist_ok=True)
    return path


def year_csv(path, minutes, sites=SITES, first_minute=0):
    """An invented year: a slow seasonal swing, a daily ripple, two storms (stage in m)."""
    with open(path, "w") as f:
        f.write("site,time,stage\n")
        for i, site in enumerate(sites):
            rows = []
            for m in range(first_minute, first_minute + minutes):
                day = m / 1440.0
                stage = (0.6 + 0.25 * math.sin(2 * math.pi * day / 365.0 + i)
                         + 0.03 * math.sin(2 * math.pi * day)
                         + 0.5 * math.exp(-((day - 120 - 30 * i) / 1.5) ** 2))
                rows.append(f"{site},{iso(T0 + m * MIN)},{stage:.4f}\n")
            f.write("".join(rows))


class Service:
    def __init__(self, program, root, config_path):
        self.log_path = os.path.join(root, "stagewelld.log")
        self.log_file = open(self.log_path, "ab")
        self.process = subprocess.Popen([program, "--config", config_path],
                                        stdout=self.log_file, stderr=self.log_file)

    def log(self):
        with open(self.log_path, errors="replace") as f:
            return f.read()

    def wait_for(self, text, timeout_s):
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            if text in self.log():
                return True
            time.sleep(0.01)
        return False

    def stop(self):
        if self.process.poll() is None:
            self.process.send_signal(signal.SIGTERM)
        try:
            self.process.wait(timeout=30)
        except subprocess.TimeoutExpired:
            self.process.kill()
            self.process.wait()
        self.log_file.close()


class Poller(threading.Thread):
    """GETs `paths` in turn every `interval_s` (or back to back with 0), recording answer times."""

    def __init__(self, port, paths, interval_s):
        super().__init__(daemon=True)
        self.port, self.paths, self.interval_s = port, paths, interval_s
        self.times, self.failures = [], 0
        self.stopping = threading.Event()

    def run(self):
        connection = None
        next_at = time.monotonic()
        i = 0
        while not self.stopping.is_set():
            path = self.paths[i % len(self.paths)]
            i += 1
            start = time.monotonic()
            try:
                if connection is None:
                    connection = http.client.HTTPConnection("127.0.0.1", self.port, timeout=30)
                connection.request("GET", path)
                response = connection.getresponse()
                response.read()
                if response.status != 200:
                    self.failures += 1
                self.times.append(time.monotonic() - start)
            except OSError:
                self.failures += 1
                connection = None
            if self.interval_s > 0:
                next_at += self.interval_s
                time.sleep(max(0.0, next_at - time.monotonic()))

    def stop(self):
        self.stopping.set()
        self.join()


def percentile(values, p):
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(math.ceil(p / 100 * len(ordered))) - 1)]


def wait_port(port, timeout_s=30):
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        try:
            socket.create_connection(("127.0.0.1", port), timeout=1).close()
            return True
        except OSError:
            time.sleep(0.02)
    return False


# ---- 1. the lock --------------------------------------------------------------------------------

def lock_round(program, lock_seconds):
    with tempfile.TemporaryDirectory(prefix="stagewell-bench-") as root:
        tcp_port, http_port = free_port(), free_port()
        service = Service(program, root, config(root, tcp_port, http_port))
        try:
            wait_port(http_port)
            db = os.path.join(root, "db", "stagewell.db")
            client = socket.create_connection(("127.0.0.1", tcp_port), timeout=5)
            client.sendall(f"north,{iso(T0)},0.5\n".encode())
            time.sleep(0.5)
            locker = sqlite3.connect(db, timeout=30, isolation_level=None)
            locker.execute("BEGIN EXCLUSIVE")
            client.sendall(f"north,{iso(T0 + MIN)},0.6\n".encode())
            poller = Poller(http_port, ["/api/sites", "/"], 0.1)
            poller.start()
            time.sleep(lock_seconds)
            poller.stop()
            client.setblocking(False)
            try:
                open_ = client.recv(1 << 16) != b""  # b"": closed by the service
            except BlockingIOError:
                open_ = True
            stop_at = time.monotonic()
            service.process.send_signal(signal.SIGTERM)
            service.process.wait(timeout=60)
            stop_s = time.monotonic() - stop_at
            locker.execute("ROLLBACK")
            locker.close()
            return poller, open_, stop_s, service.process.returncode
        finally:
            service.stop()


# ---- 2. ingest under load -----------------------------------------------------------------------

def ingest_round(program, csv_path, load):
    with tempfile.TemporaryDirectory(prefix="stagewell-bench-") as root:
        tcp_port, http_port = free_port(), free_port()
        service = Service(program, root, config(root, tcp_port, http_port))
        pollers = []
        try:
            wait_port(http_port)
            # The month before the year, stored first (in every round, so that each starts alike):
            # what the month-long answers read (20,000 readings, the API's cap: about 2 MB).
            month_csv = os.path.join(root, "month.csv")
            year_csv(month_csv, 31 * 1440, SITES[:1], -31 * 1440)
            os.rename(month_csv, os.path.join(root, "incoming", "month.csv"))
            if not service.wait_for("read to the end", 60):
                sys.exit("the month was not stored: " + service.log()[-2000:])
            if load in ("sites", "sites+month"):
                pollers.append(Poller(http_port, ["/api/sites"], 0.05))
            if load == "sites+month":
                month = f"/api/sites/north/readings?from={iso(T0 - 31 * 86_400_000)}&to={iso(T0)}"
                pollers.append(Poller(http_port, [month], 0))
            for poller in pollers:
                poller.start()
            time.sleep(0.5)
            part = os.path.join(root, "incoming", "year.csv.part")
            os.link(csv_path, part)
            past = time.time() - 60
            os.utime(part, (past, past))
            start = time.monotonic()
            os.rename(part, os.path.join(root, "incoming", "year.csv"))
            if not service.wait_for("year.csv: read to the end", 600):
                sys.exit("the file was not read to its end: " + service.log()[-2000:])
            elapsed = time.monotonic() - start
            for poller in pollers:
                poller.stop()
            return elapsed, pollers
        finally:
            for poller in pollers:
                poller.stopping.set()
            service.stop()


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--bin-dir", required=True)
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--lock-seconds", type=float, default=30)
    parser.add_argument("--quick", action="store_true", help="a tenth of the year, for a try")
    args = parser.parse_args()
    program = os.path.join(os.path.abspath(args.bin_dir), "stagewelld")

    print(f"1. another process holds the write lock for {args.lock_seconds:.0f} s", flush=True)
    poller, open_, stop_s, code = lock_round(program, args.lock_seconds)
    print(f"   /api/sites and /: {len(poller.times)} answers, {poller.failures} failed; "
          f"slowest {max(poller.times) * 1000:.1f} ms, p99 {percentile(poller.times, 99) * 1000:.1f}"
          f" ms, median {statistics.median(poller.times) * 1000:.1f} ms (target: all <= 100 ms)")
    print(f"   tcp connection with unacknowledged lines still open: {open_}")
    print(f"   SIGTERM to exit with the lock held: {stop_s:.2f} s, exit {code} (target <= 2 s)",
          flush=True)

    minutes = 525_600 // (10 if args.quick else 1)
    with tempfile.TemporaryDirectory(prefix="stagewell-bench-data-") as data:
        csv_path = os.path.join(data, "year.csv")
        year_csv(csv_path, minutes)
        readings = minutes * len(SITES)
        print(f"2. ingesting {readings:,} readings ({os.path.getsize(csv_path) / 1e6:.0f} MB) "
              f"from the drop folder, {args.rounds} rounds", flush=True)
        loads = ["none", "sites", "sites+month"]
        ratios = {"sites": [], "sites+month": []}
        latencies = {"sites": [], "sites+month": []}
        for r in range(args.rounds):
            order = loads[r % 3:] + loads[:r % 3]
            took = {}
            for load in order:
                elapsed, pollers = ingest_round(program, csv_path, load)
                took[load] = elapsed
                if pollers:
                    latencies[load] += pollers[0].times
                extra = ""
                if load == "sites+month":
                    month = pollers[1].times
                    extra = (f", {len(month)} month-long answers ({pollers[1].failures} failed), "
                             f"median {statistics.median(month) * 1000:.0f} ms")
                print(f"   round {r + 1}, load {load:11}: {elapsed:6.2f} s, "
                      f"{readings / elapsed:9,.0f} readings/s{extra}", flush=True)
            for load in ratios:
                ratios[load].append(took["none"] / took[load])
        for load in ratios:
            times = latencies[load]
            print(f"   {load}: ingest rate x{statistics.median(ratios[load]):.3f} of alone "
                  f"(median of paired ratios {['%.3f' % x for x in ratios[load]]}); /api/sites "
                  f"p50 {statistics.median(times) * 1000:.1f} ms, p99 "
                  f"{percentile(times, 99) * 1000:.1f} ms, max {max(times) * 1000:.1f} ms over "
                  f"{len(times)} requests (targets: rate >= x0.90, p99 <= 50 ms)", flush=True)


if __name__ == "__main__":
    main()
