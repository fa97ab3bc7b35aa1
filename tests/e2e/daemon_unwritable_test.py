#!/usr/bin/env python3
"""A database the service cannot write says why, not only "unable to open database file".

The database directory is a tmpfs mounted read-only (the test is skipped, exit 77, where mounting
is not permitted): even root cannot create files there (access(2) says EROFS), as a service user
cannot in a directory it lacks write permission on.

- No database yet: `stagewell ingest` fails (exit 1) naming the directory, that it is not
  writable, and that the database, its -wal and -shm files must be created there; the service
  does not start either, and says why (its lock file cannot be created).
- A database made while the directory was writable, then the directory read-only: ingest fails
  naming the database file and why.
"""
import os
import subprocess
import tempfile

import daemon_support as ds

R = ds.Results()


def start_and_wait(daemon_program, config_path, log_path):
    daemon = ds.Daemon(daemon_program, config_path, log_path).start()
    ended = ds.wait_until(lambda: not daemon.running(), 20)
    code = daemon.process.wait(timeout=5) if ended else daemon.stop()
    return code, daemon.log()


def main():
    args = ds.parse_args()
    daemon_program, cli = ds.programs(args)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        with ds.tmpfs(os.path.join(root, "db"), "ro,size=4m") as dbdir:
            config_path = os.path.join(root, "stagewell.yaml")
            ds.write(config_path, """\
units: metric
database: db/stagewell.db
sites:
  - id: a
    section: {shape: rectangular, width: 2.0, height: 1.5}
    roughness: 0.014
    slope: 0.001
""")
            csv_path = os.path.join(root, "a.csv")
            ds.write(csv_path, "site,time,stage\na,2024-05-01T00:00:00Z,0.4\n")

            def ingest():
                done = subprocess.run([cli, "ingest", "--quiet", "--config", config_path,
                                       csv_path], capture_output=True, text=True, timeout=60)
                return done.returncode, done.stdout + done.stderr

            code, out = ingest()
            R.check("no database, read-only directory: ingest fails (exit 1)", code == 1,
                    f"{code}\n{out}")
            R.check("it names the directory and that it is not writable",
                    f"the directory {dbdir} is not writable (Read-only file system)" in out, out)
            R.check("... and what must be created there", "-wal and -shm" in out, out)
            code, log = start_and_wait(daemon_program, config_path, os.path.join(root, "1.log"))
            R.check("the service does not start there either (exit 1), and says why",
                    code == 1 and "Read-only file system" in log, f"{code}\n{log}")

            # The database made while writable, then the directory read-only again.
            subprocess.run(["mount", "-o", "remount,rw", dbdir], check=True)
            code, out = ingest()
            R.check("a database is made while the directory is writable", code == 0, out)
            subprocess.run(["mount", "-o", "remount,ro", dbdir], check=True)
            code, out = ingest()
            R.check("existing database, read-only directory: ingest fails (exit 1)", code == 1,
                    f"{code}\n{out}")
            R.check("it names the database and why",
                    f"cannot write the database {os.path.join(dbdir, 'stagewell.db')}: "
                    "Read-only file system" in out, out)
    ds.exit_with(R)


if __name__ == "__main__":
    main()
