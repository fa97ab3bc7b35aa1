"""Shared pieces of the warehouse tests (warehouse_*_test.py): a throwaway PostgreSQL 15 cluster,
the warehouse's rows read back with psycopg2 (an independent client: Debian's python3-psycopg2),
and the comparison of each plant's rows there with its local SQLite views. Not a test itself:
ctest runs only files named *_test.py.

The cluster lives in a temporary directory of its own, owned by the `postgres` user (PostgreSQL
refuses to run as root), listens on a Unix socket only (listen_addresses=''), on a free port
number (it names the socket file). Password authentication (scram-sha-256) for every role,
including the superuser, so the writer role's password file is really used: nothing gets in
without its password. `cluster()` always stops it and removes it, also after a failure.

Where PostgreSQL 15 or psycopg2 is not installed, or the server will not start here, the test is
skipped: the reason printed, exit status 77 (daemon_support.SKIPPED).
"""
import contextlib
import datetime
import json
import os
import pwd
import secrets
import shutil
import socket
import subprocess
import sys
import tempfile

import daemon_support as ds

PG_BIN = "/usr/lib/postgresql/15/bin"
SUPERUSER = "postgres"
WRITER = "plant_writer"        # the role stagewell ships as (invented name)
DATABASE = "flows_warehouse"   # the warehouse database (invented name)
SCHEMA = "stagewell"           # the default schema (the warehouse interface)


def skip(reason):
    print(f"SKIPPED: {reason}", flush=True)
    sys.exit(ds.SKIPPED)


try:
    import psycopg2
    import psycopg2.extensions
except ImportError:  # a skip, not a failure: the machine lacks the reader (deploy/setup.sh)
    psycopg2 = None


def free_port():
    """A port number nobody uses now; the server listens on no TCP port (listen_addresses=''),
    the number only names its socket file, but a free one keeps clear of any other server."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Cluster:
    """One PostgreSQL cluster in a temporary directory: `data/`, `socket/`, `server.log`.

    `start()` the first time runs initdb, starts the server, and creates the writer role (with
    `writer_password`) owning the database DATABASE; later calls only start the server again.
    `stop()` is a fast shutdown (open sessions are ended, what is committed stays).
    `durable=False` (the tests) runs the server with fsync=off: a test's cluster never outlives a
    crash of the machine, and syncing would only slow it; a benchmark passes True."""

    def __init__(self, durable=False):
        self.durable = durable
        if psycopg2 is None:
            skip("python3-psycopg2 is not installed (deploy/setup.sh --with-tests installs it)")
        for tool in ("initdb", "pg_ctl", "postgres"):
            if not os.access(os.path.join(PG_BIN, tool), os.X_OK):
                skip(f"{PG_BIN}/{tool} not found: PostgreSQL 15 is not installed "
                     "(deploy/setup.sh --with-tests installs it)")
        # As root the server must run as another user (PostgreSQL refuses root): `postgres`.
        self.as_root = os.geteuid() == 0
        if self.as_root:
            try:
                self.owner = pwd.getpwnam(SUPERUSER)
            except KeyError:
                skip("running as root, and there is no `postgres` user to run the server as")
        self.root = tempfile.mkdtemp(prefix="stagewell-pg-")
        self.data = os.path.join(self.root, "data")
        self.socket_dir = os.path.join(self.root, "socket")
        self.log_path = os.path.join(self.root, "server.log")
        self.port = free_port()
        self.superuser_password = secrets.token_hex(16)
        self.writer_password = "wr-" + secrets.token_hex(12)
        self.initialised = False
        os.makedirs(self.socket_dir)
        if self.as_root:
            os.chmod(self.root, 0o755)
            for path in (self.root, self.socket_dir):
                os.chown(path, self.owner.pw_uid, self.owner.pw_gid)

    # ---- running the server's tools as its owner ---------------------------------------------

    def _run(self, *command, timeout=120):
        prefix = ["runuser", "-u", SUPERUSER, "--"] if self.as_root else []
        return subprocess.run(prefix + [os.path.join(PG_BIN, command[0]), *command[1:]],
                              capture_output=True, text=True, timeout=timeout)

    def _initdb(self):
        pwfile = os.path.join(self.root, "superuser.password")
        with open(pwfile, "w") as f:
            f.write(self.superuser_password + "\n")
        if self.as_root:
            os.chown(pwfile, self.owner.pw_uid, self.owner.pw_gid)
        os.chmod(pwfile, 0o600)
        done = self._run("initdb", "-D", self.data, "-U", SUPERUSER, "--auth=scram-sha-256",
                         f"--pwfile={pwfile}", "--encoding=UTF8", "--locale=C.UTF-8",
                         "--no-sync")
        os.unlink(pwfile)
        if done.returncode != 0:
            skip(f"initdb failed here: {done.stderr.strip()[-800:]}")

    def start(self, timeout_s=60):
        if not self.initialised:
            self._initdb()
        options = (f"-k {self.socket_dir} -p {self.port} -c listen_addresses='' "
                   "-c max_connections=40")
        if not self.durable:
            options += " -c fsync=off"
        done = self._run("pg_ctl", "start", "-D", self.data, "-l", self.log_path, "-w",
                         "-t", str(timeout_s), "-o", options, timeout=timeout_s + 30)
        if done.returncode != 0:
            reason = f"the PostgreSQL server will not start here: {done.stdout.strip()[-400:]} " \
                     f"{done.stderr.strip()[-400:]} {self.server_log()[-800:]}"
            if self.initialised:  # it ran before: a restart that fails is the test's failure
                raise RuntimeError(reason)
            self.remove()
            skip(reason)
        if not ds.wait_until(self._accepts, timeout_s, 0.1):
            raise RuntimeError(f"PostgreSQL started but refuses connections for {timeout_s} s: "
                               f"{self.server_log()[-800:]}")
        if not self.initialised:
            # Not `with con`: psycopg2 2.9 opens a transaction there even in autocommit, and
            # CREATE DATABASE refuses to run inside one.
            with contextlib.closing(self.connect()) as con, con.cursor() as cur:
                cur.execute(f"CREATE ROLE {WRITER} LOGIN PASSWORD %s", (self.writer_password,))
                cur.execute(f"CREATE DATABASE {DATABASE} OWNER {WRITER}")
            self.initialised = True
        return self

    def stop(self, mode="fast", timeout_s=60):
        """Stops the server (`fast`: sessions ended, committed work kept; `immediate`: as a
        crash). Returns True once it is down."""
        if not os.path.exists(os.path.join(self.data, "postmaster.pid")):
            return True
        done = self._run("pg_ctl", "stop", "-D", self.data, "-m", mode, "-w",
                         "-t", str(timeout_s), timeout=timeout_s + 30)
        return done.returncode == 0

    def running(self):
        return self._run("pg_ctl", "status", "-D", self.data).returncode == 0

    def remove(self):
        shutil.rmtree(self.root, ignore_errors=True)

    def server_log(self):
        try:
            with open(self.log_path, errors="replace") as f:
                return f.read()
        except OSError:
            return ""

    # ---- connections --------------------------------------------------------------------------

    def connect(self, user=SUPERUSER, password=None, dbname=None, autocommit=True):
        """A psycopg2 connection over the socket; the superuser's or the writer's password by
        default, `password=""` to try without one."""
        if password is None:
            password = self.superuser_password if user == SUPERUSER else self.writer_password
        con = psycopg2.connect(host=self.socket_dir, port=self.port, user=user,
                               password=password, dbname=dbname or
                               ("postgres" if user == SUPERUSER else DATABASE),
                               connect_timeout=10)
        con.autocommit = autocommit
        return con

    def _accepts(self):
        try:
            self.connect().close()
            return True
        except psycopg2.OperationalError:
            return False

    def conninfo(self, user=WRITER, dbname=DATABASE):
        """The libpq connection string for stagewell's configuration: no password in it."""
        return f"host={self.socket_dir} port={self.port} dbname={dbname} user={user}"

    def write_password_file(self, path, password=None):
        """The writer's password, alone on the first line, mode 0600 (the service user's)."""
        ds.write(path, (self.writer_password if password is None else password) + "\n")
        os.chmod(path, 0o600)
        return path

    def rows(self, sql, params=(), user=SUPERUSER):
        with contextlib.closing(self.connect(user=user, dbname=DATABASE)) as con:
            with con.cursor() as cur:
                cur.execute(sql, params)
                return cur.fetchall()


@contextlib.contextmanager
def cluster():
    """A started Cluster for the block; stopped (fast, then immediate) and removed after, also
    when the block fails."""
    c = Cluster()
    try:
        c.start()
        yield c
    finally:
        if not c.stop("fast"):
            c.stop("immediate")
        c.remove()


# ---- the stagewell side --------------------------------------------------------------------------

def warehouse_yaml(c, plant, password_file="warehouse.password", schema=None):
    """The `warehouse:` block of a configuration shipping to cluster `c` as `plant`."""
    text = f"""warehouse:
  postgresql: "{c.conninfo()}"
  password_file: {password_file}
  plant: {plant}
"""
    if schema:
        text += f"  schema: {schema}\n"
    return text


def clean_env():
    """The environment for the programs with libpq's own password sources removed, so that only
    the configuration's password_file can supply the writer's password."""
    env = dict(os.environ)
    for name in ("PGPASSWORD", "PGPASSFILE", "PGSERVICE", "PGSERVICEFILE", "PGHOST", "PGPORT",
                 "PGUSER", "PGDATABASE"):
        env.pop(name, None)
    env["PGPASSFILE"] = "/nonexistent/stagewell-test-pgpass"
    return env


def daemon_env():
    """`env` for ds.Daemon: the same removals as clean_env()."""
    out = {name: None for name in ("PGPASSWORD", "PGSERVICE", "PGSERVICEFILE", "PGHOST",
                                   "PGPORT", "PGUSER", "PGDATABASE")}
    out["PGPASSFILE"] = "/nonexistent/stagewell-test-pgpass"
    return out


def stagewell(program, *arguments, timeout=600):
    return subprocess.run([program, *arguments], capture_output=True, text=True,
                          timeout=timeout, env=clean_env())


def check_json(program, config):
    """(exit code, the object `stagewell warehouse check --json` printed or None, stderr)."""
    done = stagewell(program, "warehouse", "check", "--config", config, "--json", timeout=120)
    try:
        report = json.loads(done.stdout)
    except ValueError:
        report = None
    return done.returncode, report, done.stderr + done.stdout


def wait_for_lag_zero(program, config, timeout_s, interval_s=0.5):
    """Polls `warehouse check --json` until it reports connected with lag_readings and lag_rows
    both 0. Returns (True, last report) or (False, last report and output) at the deadline."""
    last = {}

    def caught_up():
        code, report, text = check_json(program, config)
        last["report"], last["text"] = report, text
        return (code == 0 and report is not None and report.get("connected") is True
                and report.get("lag_readings") == 0 and report.get("lag_rows") == 0)
    ok = ds.wait_until(caught_up, timeout_s, interval_s)
    return bool(ok), last.get("report") if ok else f"{last.get('report')} {last.get('text')}"


# ---- comparing a plant's warehouse rows with its local views ------------------------------------

# Each view's key (unique in the view), by column name; the columns themselves come from the
# local view in its own order (the warehouse's views have the same, after `plant`).
VIEW_KEYS = {
    "discharge": ("site", "time_ms"),
    "daily": ("site", "day"),
    "alarms": ("site", "kind", "time_ms"),
    "rejects": None,  # no key: compared as a multiset of whole rows
    "site_details": ("site",),
}


def _plain(value):
    """One value as Python compares it across the two clients: text as bytes (SQLite may hold
    bytes that are not UTF-8 in a TEXT column), a PostgreSQL date or timestamp as its ISO text."""
    if isinstance(value, memoryview):
        return bytes(value)
    if isinstance(value, str):
        return value.encode()
    if isinstance(value, (datetime.date, datetime.datetime)):
        return value.isoformat().encode()
    return value


def as_warehouse_text(raw):
    """A rejected line's raw bytes as the warehouse keeps them: PostgreSQL text holds only UTF-8
    without NUL, so each byte sequence that is not UTF-8, and each NUL, becomes U+FFFD there
    (schema/warehouse/001_initial.sql, rejected_lines.raw; Python's "replace" error handler
    substitutes one U+FFFD per maximal invalid subpart, as Unicode 15 section 3.9 recommends)."""
    return raw.decode("utf-8", errors="replace").replace("\x00", "\ufffd").encode()


def local_view(db_path, view):
    """(column names, rows as tuples of plain values) of one local SQLite view. The rejects'
    raw lines are taken as the warehouse keeps them (as_warehouse_text)."""
    import sqlite3
    con = sqlite3.connect(f"file:{db_path}?mode=ro", uri=True, timeout=30)
    try:
        con.text_factory = bytes
        cur = con.execute(f"SELECT * FROM {view}")
        names = [d[0] for d in cur.description]
        rows = [tuple(_plain(v) for v in row) for row in cur.fetchall()]
        if view == "rejects":
            raw = names.index("raw")
            rows = [row[:raw] + (as_warehouse_text(row[raw]),) + row[raw + 1:] for row in rows]
        return names, rows
    finally:
        con.close()


def warehouse_view(c, view, plant, schema=SCHEMA):
    """(column names after `plant`, rows) of one warehouse view for one plant."""
    with contextlib.closing(c.connect(dbname=DATABASE)) as con, con.cursor() as cur:
        cur.execute(f'SELECT * FROM "{schema}"."{view}" WHERE plant = %s', (plant,))
        names = [d[0] for d in cur.description]
        rows = cur.fetchall()
    if not names or names[0] != "plant":
        return names, [tuple(_plain(v) for v in row) for row in rows]
    return names[1:], [tuple(_plain(v) for v in row[1:]) for row in rows]


def compare_view(r, label, db_path, c, view, plant, schema=SCHEMA):
    """Checks that the warehouse's `view` rows for `plant` equal the local view's: the same
    columns in the same order, the same number of rows, no key twice, and every value equal
    (floats compared with ==: they are shipped bit for bit, IEEE 754 binary64 both sides).
    Returns the local rows keyed, for further checks."""
    local_names, local_rows = local_view(db_path, view)
    wh_names, wh_rows = warehouse_view(c, view, plant, schema)
    r.check(f"{label}: {view}: the same columns in the same order", wh_names == local_names,
            f"warehouse {wh_names} vs local {local_names}")
    r.check(f"{label}: {view}: the same number of rows", len(wh_rows) == len(local_rows),
            f"warehouse {len(wh_rows)} vs local {len(local_rows)}")
    key_names = VIEW_KEYS[view]
    if key_names is None or wh_names != local_names:
        r.check(f"{label}: {view}: the same rows", sorted(map(repr, wh_rows)) ==
                sorted(map(repr, local_rows)), _first_difference(wh_rows, local_rows))
        return None
    index = [local_names.index(k) for k in key_names]

    def keyed(rows):
        out, twice = {}, []
        for row in rows:
            key = tuple(row[i] for i in index)
            if key in out:
                twice.append(key)
            out[key] = row
        return out, twice
    local, _ = keyed(local_rows)
    warehouse, twice = keyed(wh_rows)
    r.check(f"{label}: {view}: no row twice in the warehouse", not twice, f"{twice[:5]}")
    missing = [k for k in local if k not in warehouse]
    extra = [k for k in warehouse if k not in local]
    r.check(f"{label}: {view}: nothing missing in the warehouse", not missing,
            f"{len(missing)} missing, e.g. {missing[:3]}")
    r.check(f"{label}: {view}: nothing in the warehouse that is not local", not extra,
            f"{len(extra)} extra, e.g. {extra[:3]}")
    differ = [(k, local[k], warehouse[k]) for k in local if k in warehouse
              and local[k] != warehouse[k]]
    r.check(f"{label}: {view}: every value equal (floats bit for bit)", not differ,
            f"{len(differ)} rows differ, e.g. local {differ[0][1]} warehouse {differ[0][2]}"
            if differ else "")
    return local


def _first_difference(a_rows, b_rows):
    a, b = set(map(repr, a_rows)), set(map(repr, b_rows))
    only_a, only_b = sorted(a - b)[:2], sorted(b - a)[:2]
    return f"only in the warehouse: {only_a}; only local: {only_b}"


def compare_plant(r, label, db_path, c, plant, views=("discharge", "daily", "alarms", "rejects",
                                                       "site_details"), schema=SCHEMA):
    """compare_view for every shipped view of one plant."""
    for view in views:
        compare_view(r, label, db_path, c, view, plant, schema)


def discharge_close(r, label, db_path, c, plant, rel_tol=1e-12, schema=SCHEMA):
    """Every reading's discharge in the warehouse within rel_tol of the local one (the brief's
    bound; compare_view checks them equal outright). NULL (out of range) must stay NULL."""
    local = {(s, t): q for s, t, q in ds.query(
        db_path, "SELECT site, time_ms, discharge FROM discharge")}
    remote = {(s, t): q for s, t, q in c.rows(
        f'SELECT site, time_ms, discharge FROM "{schema}".discharge WHERE plant = %s', (plant,))}
    worst, odd = 0.0, []
    for key, q in local.items():
        w = remote.get(key, "missing")
        if q is None or w is None or w == "missing":
            if w != q:
                odd.append((key, q, w))
            continue
        worst = max(worst, abs(w - q) / max(abs(q), 1e-300))
    r.check(f"{label}: every reading's discharge within {rel_tol:g} relative", worst <= rel_tol
            and not odd, f"worst relative difference {worst:.3e}; missing or NULL: {odd[:3]}")
    return len(local)


def reading_keys_once(r, label, c, plant, schema=SCHEMA):
    """The readings table's primary key makes a reading twice impossible; checked through the
    view anyway, by (site, time_ms) groups."""
    twice = c.rows(f'SELECT site, time_ms, count(*) FROM "{schema}".discharge WHERE plant = %s '
                   "GROUP BY site, time_ms HAVING count(*) > 1 LIMIT 5", (plant,))
    r.check(f"{label}: no reading twice in the warehouse", not twice, str(twice))
