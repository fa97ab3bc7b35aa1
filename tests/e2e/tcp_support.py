"""Shared pieces of the tcp source tests (tcp_*_test.py): a daemon on a loopback port, a raw
protocol client, readings to send and the database to compare them with.

Loopback only. Every wait is bounded; a test that waits too long fails instead of hanging.
"""
import argparse
import datetime
import math
import os
import signal
import socket
import sqlite3
import subprocess
import time


class Checks:
    """Counts checks; prints each failure and the closing `N passed, M failed` line."""

    def __init__(self):
        self.passed = 0
        self.failures = []

    def check(self, label, ok, detail=""):
        if ok:
            self.passed += 1
        else:
            self.failures.append(f"{label}: {detail}")
            print("FAIL", label, detail, flush=True)
        return ok

    def finish(self):
        print(f"{self.passed} passed, {len(self.failures)} failed")
        return 1 if self.failures else 0


def arguments():
    parser = argparse.ArgumentParser()
    parser.add_argument("--bin-dir", required=True)
    parser.add_argument("--source-dir", required=True)
    return parser.parse_args()


def free_port():
    """A port nobody listens on right now (the kernel's choice for an ephemeral bind)."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


# The one site of the tests: a rectangular concrete channel, 2 m wide, n = 0.014, S = 0.001.
SITE_YAML = """sites:
  - id: g1
    section: {shape: rectangular, width: 2.0, height: 1.5}
    roughness: 0.014
    slope: 0.001
  - id: g2
    section: {shape: rectangular, width: 2.0, height: 1.5}
    roughness: 0.014
    slope: 0.001
"""
WIDTH_M, ROUGHNESS, SLOPE = 2.0, 0.014, 0.001


def manning_rectangular(depth_m):
    """Q (m^3/s) by Manning's equation in SI units, Q = A R^(2/3) S^(1/2) / n, with A = b y and
    P = b + 2 y for a rectangular section (V. T. Chow, Open-Channel Hydraulics, 1959, ch. 5)."""
    area = WIDTH_M * depth_m
    radius = area / (WIDTH_M + 2 * depth_m)
    return area * radius ** (2 / 3) * math.sqrt(SLOPE) / ROUGHNESS


def write_config(directory, source_yaml):
    """A configuration in `directory` with one tcp source (`source_yaml`: its keys, indented 4)."""
    path = os.path.join(directory, "stagewell.yaml")
    with open(path, "w") as out:
        out.write("units: metric\ndatabase: var/readings.db\nsources:\n  - type: tcp\n")
        out.write(source_yaml)
        out.write(SITE_YAML)
    return path


def readings(count, site="g1", start_minute=0):
    """`count` invented readings of `site`, one a minute: [(site, time text, stage text)]."""
    base = datetime.datetime(2024, 5, 1, tzinfo=datetime.timezone.utc)
    out = []
    for i in range(start_minute, start_minute + count):
        when = base + datetime.timedelta(minutes=i)
        stage = 0.4 + 0.25 * math.sin(i / 97.0)
        out.append((site, when.strftime("%Y-%m-%dT%H:%M:%SZ"), f"{stage:.4f}"))
    return out


def csv_lines(rows):
    return [f"{site},{when},{stage}" for site, when, stage in rows]


def stored(db_path):
    """{(site, unix seconds, stage): discharge} from the analysts' view."""
    if not os.path.exists(db_path):
        return {}
    with sqlite3.connect(f"file:{db_path}?mode=ro", uri=True, timeout=10) as db:
        return {(site, round(t, 3), stage): q for site, t, stage, q in
                db.execute("SELECT site, unix_time, stage, discharge FROM discharge")}


def rejects(db_path):
    if not os.path.exists(db_path):
        return []
    with sqlite3.connect(f"file:{db_path}?mode=ro", uri=True, timeout=10) as db:
        return list(db.execute("SELECT source, position, reason FROM rejects"))


def key_of(row):
    site, when, stage = row
    t = datetime.datetime.strptime(when, "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=datetime.timezone.utc)
    return (site, round(t.timestamp(), 3), float(stage))


class Daemon:
    """stagewelld on a configuration, its log in `log_path`."""

    def __init__(self, bin_dir, config, log_path, env=None):
        self.binary = os.path.join(bin_dir, "stagewelld")
        self.config = config
        self.log_path = log_path
        self.env = env
        self.process = None

    def start(self, port=None, wait=True):
        log = open(self.log_path, "a")
        self.process = subprocess.Popen([self.binary, "--config", self.config], stdout=log,
                                        stderr=subprocess.STDOUT, env=self.env)
        log.close()
        if wait and port is not None:
            deadline = time.time() + 10
            while time.time() < deadline:
                if self.process.poll() is not None:
                    return False
                try:
                    socket.create_connection(("127.0.0.1", port), timeout=1).close()
                    return True
                except OSError:
                    time.sleep(0.05)
            return False
        return True

    def stop(self):
        if self.process and self.process.poll() is None:
            self.process.send_signal(signal.SIGTERM)
            try:
                self.process.wait(timeout=15)
            except subprocess.TimeoutExpired:
                self.process.kill()
                self.process.wait()
        return self.process.returncode if self.process else None

    def kill9(self):
        self.process.send_signal(signal.SIGKILL)
        self.process.wait()

    def alive(self):
        return self.process is not None and self.process.poll() is None

    def log(self):
        with open(self.log_path, errors="replace") as f:
            return f.read()


class Client:
    """A raw protocol client: send bytes, read reply lines."""

    def __init__(self, port, timeout=10.0):
        self.sock = socket.create_connection(("127.0.0.1", port), timeout=timeout)
        self.buffer = b""
        self.replies = []
        self.closed = False

    def send(self, data):
        self.sock.sendall(data if isinstance(data, bytes) else data.encode())

    def send_lines(self, lines):
        self.send("".join(line + "\n" for line in lines))

    def read_reply(self, timeout=10.0):
        """The next reply line, or None when the service closed the connection (or timed out)."""
        deadline = time.time() + timeout
        while b"\n" not in self.buffer:
            remaining = deadline - time.time()
            if remaining <= 0 or self.closed:
                return None
            self.sock.settimeout(remaining)
            try:
                data = self.sock.recv(65536)
            except socket.timeout:
                return None
            except OSError:
                self.closed = True
                return None
            if not data:
                self.closed = True
                if not self.buffer:
                    return None
                break
            self.buffer += data
        line, _, self.buffer = self.buffer.partition(b"\n")
        text = line.decode(errors="replace")
        self.replies.append(text)
        return text

    def wait_ok(self, n, timeout=10.0):
        """Reads replies until `ok m` with m >= n; the last ok number seen (0 if none)."""
        deadline = time.time() + timeout
        last = 0
        while time.time() < deadline:
            line = self.read_reply(deadline - time.time())
            if line is None:
                break
            if line.startswith("ok "):
                last = int(line.split()[1])
                if last >= n:
                    break
        return last

    def errors(self):
        return [r for r in self.replies if r.startswith("error ")]

    def close(self):
        try:
            self.sock.close()
        except OSError:
            pass
