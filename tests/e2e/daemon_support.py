"""Shared pieces of the end-to-end tests of `stagewelld` and `stagewell ingest` (not a test itself:
ctest runs only files named *_test.py).

Everything a test creates lives in a tempfile.TemporaryDirectory. Every wait polls (the database,
a file, the process) with a deadline; nothing sleeps a fixed time to "let the daemon catch up".
The daemon is started with its stderr in a file, and always killed in a `finally`.
"""
import argparse
import contextlib
import math
import os
import signal
import sqlite3
import subprocess
import sys
import time

# Standard gravity, m/s^2 (the conventional value adopted by the CGPM in 1901).
G_SI = 9.80665


# ---- results -----------------------------------------------------------------------------------

class Results:
    """Counts checks; prints failures as they happen and `N passed, M failed` at the end."""

    def __init__(self):
        self.passed = 0
        self.failed = 0

    def check(self, label, condition, detail=""):
        if condition:
            self.passed += 1
        else:
            self.failed += 1
            print(f"FAIL {label}" + (f": {detail}" if detail else ""), flush=True)
        return condition

    def close(self, label, got, want, rel_tol, abs_tol=0.0):
        if got is None or want is None:
            return self.check(label, got is None and want is None, f"got {got!r}, want {want!r}")
        ok = math.isclose(got, want, rel_tol=rel_tol, abs_tol=abs_tol)
        err = abs(got - want) / max(abs(want), 1e-300)
        return self.check(label, ok, f"got {got!r}, want {want!r} (rel err {err:.2e})")

    def finish(self):
        print(f"{self.passed} passed, {self.failed} failed", flush=True)
        return 1 if self.failed or self.passed == 0 else 0


def parse_args():
    parser = argparse.ArgumentParser()
    parser.add_argument("--bin-dir", required=True)
    parser.add_argument("--source-dir", required=True)
    return parser.parse_args()


def programs(args):
    """Absolute paths of the two programs, built side by side: (stagewelld, stagewell)."""
    bin_dir = os.path.abspath(args.bin_dir)
    return os.path.join(bin_dir, "stagewelld"), os.path.join(bin_dir, "stagewell")


# ---- waiting -----------------------------------------------------------------------------------

def rss_kib(pid):
    """Resident memory of a process in KiB (/proc/PID/status, VmRSS); None once it is gone."""
    try:
        with open(f"/proc/{pid}/status") as f:
            for line in f:
                if line.startswith("VmRSS:"):
                    return int(line.split()[1])
    except FileNotFoundError:
        pass
    return None


# In the checking build (deploy/test.sh) the programs run under AddressSanitizer: ctest sets
# STAGEWELL_SANITIZED=1 and caps ASan's quarantine of freed blocks with quarantine_size_mb (the
# same figure, tests/CMakeLists.txt).
ASAN_QUARANTINE_MIB = 64


def memory_growth_bound_kib(bound_kib):
    """A bound on how much a program's resident memory may grow, widened in the checking build
    by what AddressSanitizer keeps for itself: its quarantine, and shadow memory of one byte per
    eight bytes of the program's (AddressSanitizer's design)."""
    if os.environ.get("STAGEWELL_SANITIZED") != "1":
        return bound_kib
    return bound_kib * 9 // 8 + ASAN_QUARANTINE_MIB * 1024


def wait_until(predicate, timeout_s, interval_s=0.02):
    """Polls `predicate` until it returns a true value (returned) or `timeout_s` passes (None)."""
    deadline = time.monotonic() + timeout_s
    while True:
        value = predicate()
        if value:
            return value
        if time.monotonic() >= deadline:
            return None
        time.sleep(interval_s)


# ---- the database, read as an analyst would: through the views ----------------------------------

def query(db_path, sql, params=(), text_bytes=False):
    """Runs one query on a fresh read-only connection (so no snapshot is held between polls).
    Returns [] while the database does not exist yet."""
    if not os.path.exists(db_path):
        return []
    con = sqlite3.connect(f"file:{db_path}?mode=ro", uri=True, timeout=10)
    try:
        if text_bytes:
            con.text_factory = bytes
        return con.execute(sql, params).fetchall()
    except sqlite3.OperationalError as e:
        if "no such table" in str(e) or "no such view" in str(e):
            return []  # the daemon has not created its schema yet
        raise
    finally:
        con.close()


def count(db_path, sql, params=()):
    rows = query(db_path, sql, params)
    return rows[0][0] if rows else 0


def readings(db_path, site=None):
    """{(site, unix_time_ms): (stage, depth, discharge, flags set)} from the `discharge` view."""
    sql = "SELECT site, unix_time, stage, depth, discharge, flags FROM discharge"
    params = ()
    if site is not None:
        sql += " WHERE site = ?"
        params = (site,)
    out = {}
    for s, unix_time, stage, depth, discharge, flags in query(db_path, sql, params):
        key = (s, round(unix_time * 1000))
        out[key] = (stage, depth, discharge, set(flags.split(",")) if flags else set())
    return out


def stages(db_path, site=None):
    """{(site, unix_time_ms): stage} from the `discharge` view: the cheap form for many rows."""
    sql = "SELECT site, unix_time, stage FROM discharge"
    params = ()
    if site is not None:
        sql += " WHERE site = ?"
        params = (site,)
    return {(s, round(t * 1000)): v for s, t, v in query(db_path, sql, params)}


def rejects(db_path):
    """[(source, position, raw bytes, reason)] from the `rejects` view, in arrival order."""
    rows = query(db_path, "SELECT source, position, raw, reason FROM rejects", text_bytes=True)
    return [(s.decode(), p.decode(), r, reason.decode()) for s, p, r, reason in rows]


# ---- files -------------------------------------------------------------------------------------

def drop_file(folder, name, content):
    """Puts a file in a drop folder the way a careful writer does: written under a '.part' name
    (ignored by the daemon), dated a minute back so that it counts as settled at once, then
    renamed into place. `content` is str (UTF-8) or bytes."""
    data = content.encode() if isinstance(content, str) else content
    part = os.path.join(folder, name + ".part")
    with open(part, "wb") as f:
        f.write(data)
    past = time.time() - 60
    os.utime(part, (past, past))
    os.rename(part, os.path.join(folder, name))


def append(path, text):
    with open(path, "ab") as f:
        f.write(text.encode() if isinstance(text, str) else text)
        f.flush()


def iso(ms):
    """RFC 3339 UTC text for milliseconds since the epoch."""
    seconds, millis = divmod(ms, 1000)
    text = time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime(seconds))
    return text + (f".{millis:03d}" if millis else "") + "Z"


# ---- the daemon --------------------------------------------------------------------------------

class Daemon:
    """One `stagewelld --config FILE` process with its stderr in `log_path` (appended).
    `env`: variables to add to (or, with value None, remove from) the process's environment."""

    def __init__(self, program, config_path, log_path, env=None):
        self.program = program
        self.config_path = config_path
        self.log_path = log_path
        self.env = env or {}
        self.process = None

    def start(self):
        log = open(self.log_path, "ab")
        env = dict(os.environ)
        for name, value in self.env.items():
            if value is None:
                env.pop(name, None)
            else:
                env[name] = value(log) if callable(value) else value
        try:
            self.process = subprocess.Popen([self.program, "--config", self.config_path],
                                            stdin=subprocess.DEVNULL, stdout=log, stderr=log,
                                            env=env)
        finally:
            log.close()
        return self

    def running(self):
        return self.process is not None and self.process.poll() is None

    def signal(self, number):
        if self.running():
            self.process.send_signal(number)

    def kill9(self):
        if self.running():
            self.process.send_signal(signal.SIGKILL)
        if self.process is not None:
            self.process.wait(timeout=10)

    def stop(self, timeout_s=20):
        """SIGTERM and wait; returns the exit code (None if it had to be killed)."""
        if self.process is None:
            return None
        if self.running():
            self.process.send_signal(signal.SIGTERM)
        try:
            return self.process.wait(timeout=timeout_s)
        except subprocess.TimeoutExpired:
            self.kill9()
            return None

    def log(self):
        try:
            with open(self.log_path, "rb") as f:
                return f.read().decode(errors="replace")
        except FileNotFoundError:
            return ""

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        # Always: a test that failed half-way must not leave a daemon behind.
        if self.running():
            self.process.kill()
        if self.process is not None:
            try:
                self.process.wait(timeout=10)
            except subprocess.TimeoutExpired:
                pass
        return False


def write(path, text):
    os.makedirs(os.path.dirname(path), exist_ok=True)
    with open(path, "w") as f:
        f.write(text)


# ---- the reference: Manning's equation in closed form ---------------------------------------------
# Q = (1/n) A R^(2/3) S^(1/2) with R = A/P (SI units) — Manning's equation, closed form, common
# practice (also V. T. Chow, Open-Channel Hydraulics, 1959, ch. 5). Geometry of the prismatic shapes
# in closed form (common practice); above the top of an open section the walls are taken to rise
# vertically, as the configuration reference says. Circular segment: theta = 2 acos(1 - 2y/D),
# A = D^2 (theta - sin theta) / 8, P = D theta / 2, T = D sin(theta/2) (Chow 1959, from memory).

def rectangular(width, height):
    return trapezoidal(width, 0.0, 0.0, height)


def trapezoidal(width, left_slope, right_slope, height):
    def geometry(y):
        yi = min(y, height)
        area = (width + 0.5 * (left_slope + right_slope) * yi) * yi
        perimeter = width + yi * (math.sqrt(1 + left_slope ** 2) + math.sqrt(1 + right_slope ** 2))
        top = width + (left_slope + right_slope) * yi
        if y > height:
            area += top * (y - height)
            perimeter += 2 * (y - height)
        return area, perimeter, top
    return geometry, height


def circular(diameter):
    def geometry(y):
        if y >= diameter:  # surcharged: the pipe flowing full
            return math.pi * diameter ** 2 / 4, math.pi * diameter, 0.0
        theta = 2 * math.acos(1 - 2 * y / diameter)
        return (diameter ** 2 * (theta - math.sin(theta)) / 8, diameter * theta / 2,
                diameter * math.sin(theta / 2))
    return geometry, diameter


def manning(shape, n, slope, depth):
    """(discharge m^3/s, Froude number) of uniform flow at `depth` m; Fr = V / sqrt(g A / T)
    (common practice), 0 for a full pipe (no free surface)."""
    geometry, _ = shape
    if depth <= 0:
        return 0.0, 0.0
    area, perimeter, top = geometry(depth)
    discharge = area * (area / perimeter) ** (2.0 / 3.0) * math.sqrt(slope) / n
    froude = (discharge / area) / math.sqrt(G_SI * area / top) if top > 0 else 0.0
    return discharge, froude


def worst_discharge_error(db_path, shape, n, slope):
    """The largest relative difference between a stored discharge (the `discharge` view) and
    Manning's equation above at the reading's stage, taken as the depth (no offset, zero flow at
    stage 0). 0.0 when nothing is stored."""
    worst = 0.0
    for stage, discharge in query(db_path, "SELECT stage, discharge FROM discharge"):
        want = manning(shape, n, slope, stage)[0]
        worst = max(worst, abs(discharge - want) / want)
    return worst


def exit_with(results):
    sys.exit(results.finish())


# ---- a file system of its own -----------------------------------------------------------------

SKIPPED = 77  # ctest's SKIP_RETURN_CODE for the script tests (tests/CMakeLists.txt)


@contextlib.contextmanager
def tmpfs(path, options):
    """A tmpfs mounted at `path` (`options` as for mount -o: "size=448k", "ro,size=4m") for the
    block, unmounted after. Where mounting is not permitted (not root, or a container that
    forbids it) the test is skipped: the reason printed, exit status SKIPPED."""
    os.makedirs(path, exist_ok=True)
    mounted = subprocess.run(["mount", "-t", "tmpfs", "-o", options, "tmpfs", path],
                             capture_output=True, text=True)
    if mounted.returncode != 0:
        print("SKIPPED: cannot mount a tmpfs here (needs root, or a container that allows "
              f"mounts): {mounted.stderr.strip()}")
        sys.exit(SKIPPED)
    try:
        yield path
    finally:
        subprocess.run(["umount", path], capture_output=True)
