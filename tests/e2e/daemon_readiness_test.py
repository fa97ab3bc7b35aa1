#!/usr/bin/env python3
"""`stagewelld` under systemd's conventions, without systemd:

- the readiness protocol (sd_notify(3); systemd.service(5), Type=notify): the test binds the
  datagram socket and names it in NOTIFY_SOCKET. READY=1 comes once the database exists and the
  HTTP listener accepts; a SIGHUP brings RELOADING=1 then READY=1 (also when the new
  configuration is refused, with the reason in STATUS=); SIGTERM brings STOPPING=1; with
  WATCHDOG_USEC set, WATCHDOG=1 comes at least every half of it (sd_watchdog_enabled(3)).
- journald's priorities: with JOURNAL_STREAM naming the process's stderr (systemd.exec(5)),
  each line starts with "<N>", N the syslog severity (RFC 5424: 3 error, 4 warning, 6
  informational), and carries no time stamp of its own; without it, the usual time stamp.
"""
import os
import re
import signal
import socket
import tempfile
import time

import daemon_support as ds
import http_support as hs

R = ds.Results()
WATCHDOG_USEC = 400_000


def config(port, good=True, log_file=None):
    text = f"""units: metric
database: db/stagewell.db
http:
  listen: 127.0.0.1:{port}
sources:
  - type: directory
    path: incoming
sites:
  - id: a
    section: {{shape: rectangular, width: 2.0, height: 1.5}}
    roughness: {0.014 if good else -1}
    slope: 0.001
"""
    if log_file:
        text += f"log:\n  file: {log_file}\n"
    return text


def receive(sock, timeout_s):
    """The next datagram as {key: value}, or None within `timeout_s`."""
    sock.settimeout(timeout_s)
    try:
        data = sock.recv(4096).decode()
    except socket.timeout:
        return None
    return dict(line.split("=", 1) for line in data.split("\n") if "=" in line)


def next_state(sock, timeout_s=10):
    """The next message that is not a watchdog ping; counts the pings on the way."""
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        message = receive(sock, deadline - time.monotonic())
        if message is None:
            return None
        if set(message) != {"WATCHDOG"}:
            return message
    return None


def port_open(port):
    try:
        with socket.create_connection(("127.0.0.1", port), timeout=1):
            return True
    except OSError:
        return False


def journal_stream_of(log_file):
    status = os.fstat(log_file.fileno())
    return f"{status.st_dev}:{status.st_ino}"


def main():
    args = ds.parse_args()
    stagewelld, _ = ds.programs(args)
    with tempfile.TemporaryDirectory() as root:
        port = hs.free_port()
        config_path = os.path.join(root, "config.yaml")
        # The log file's directory is a regular file: opening it fails, a warning (priority 4).
        blocker = os.path.join(root, "not-a-directory")
        ds.write(blocker, "")
        ds.write(config_path, config(port, log_file=os.path.join(blocker, "stagewell.log")))
        notify_path = os.path.join(root, "notify.sock")
        sock = socket.socket(socket.AF_UNIX, socket.SOCK_DGRAM)
        sock.bind(notify_path)
        log_path = os.path.join(root, "journal.log")
        env = {"NOTIFY_SOCKET": notify_path, "WATCHDOG_USEC": str(WATCHDOG_USEC),
               "WATCHDOG_PID": None, "JOURNAL_STREAM": journal_stream_of}
        with ds.Daemon(stagewelld, config_path, log_path, env=env) as daemon:
            daemon.start()
            ready = None
            while ready is None:
                message = next_state(sock)
                if message is None or "READY" in message:
                    ready = message
            R.check("READY=1 after the start", ready is not None and ready.get("READY") == "1",
                    daemon.log())
            if ready is None:
                return R.finish()
            R.check("when ready, the database exists",
                    os.path.exists(os.path.join(root, "db", "stagewell.db")))
            R.check("when ready, the HTTP listener accepts", port_open(port))
            R.check("STATUS= says what runs", "1 site(s)" in ready.get("STATUS", ""),
                    str(ready))

            # The watchdog: pings at least every WATCHDOG_USEC / 2 (with slack for a slow CI).
            pings, started = 0, time.monotonic()
            while time.monotonic() - started < 1.0:
                message = receive(sock, 1.0)
                if message and message.get("WATCHDOG") == "1":
                    pings += 1
            R.check("WATCHDOG=1 at least twice a second with WATCHDOG_USEC=400000", pings >= 2,
                    f"{pings} pings in 1 s")

            # SIGHUP, same configuration: RELOADING=1 then READY=1.
            daemon.signal(signal.SIGHUP)
            first, second = next_state(sock), next_state(sock)
            R.check("SIGHUP: RELOADING=1 first", first is not None and first.get("RELOADING") == "1",
                    str(first))
            R.check("RELOADING=1 carries MONOTONIC_USEC",
                    first is not None and first.get("MONOTONIC_USEC", "").isdigit(), str(first))
            R.check("SIGHUP: then READY=1", second is not None and second.get("READY") == "1",
                    str(second))

            # SIGHUP with an invalid configuration: refused, and ready again with the reason.
            ds.write(config_path, config(port, good=False))
            daemon.signal(signal.SIGHUP)
            first, second = next_state(sock), next_state(sock)
            R.check("refused reload: RELOADING=1", first is not None and "RELOADING" in first,
                    str(first))
            R.check("refused reload: READY=1 with the reason in STATUS=",
                    second is not None and second.get("READY") == "1"
                    and "refused" in second.get("STATUS", ""), str(second))

            daemon.signal(signal.SIGTERM)
            stopping = next_state(sock)
            R.check("SIGTERM: STOPPING=1", stopping is not None and stopping.get("STOPPING") == "1",
                    str(stopping))
            code = daemon.process.wait(timeout=20)  # a second SIGTERM would end it at once
            R.check("exits 0", code == 0, f"exit {code}")
            log = daemon.log()

        lines = [line for line in log.splitlines() if line]
        R.check("every line starts with a priority", lines and all(
            re.match(r"^<[0-7]>", line) for line in lines), "\n".join(lines[:5]))
        R.check("info lines at <6>", any(line.startswith("<6>info ") for line in lines), log)
        R.check("the log file's warning at <4>",
                any(line.startswith("<4>") and "cannot open log file" in line for line in lines),
                log)
        R.check("the refused configuration's errors at <3>",
                any(line.startswith("<3>") and "roughness" in line for line in lines), log)
        R.check("no time stamp of its own in the journal's lines",
                not any(re.search(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d", line[:40])
                        for line in lines), "\n".join(lines[:5]))

        # Without JOURNAL_STREAM (or with one naming another stream): the usual format.
        plain_log = os.path.join(root, "plain.log")
        ds.write(config_path, config(port))
        with ds.Daemon(stagewelld, config_path, plain_log,
                       env={"JOURNAL_STREAM": "1:2", "NOTIFY_SOCKET": None}) as daemon:
            daemon.start()
            R.check("plain: started", ds.wait_until(lambda: "started" in daemon.log(), 20),
                    daemon.log())
            R.check("plain: exits 0", daemon.stop() == 0)
            first_line = daemon.log().splitlines()[0] if daemon.log() else ""
            R.check("JOURNAL_STREAM naming another stream: lines keep their time stamp",
                    re.match(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}[+-]\d\d:\d\d ", first_line),
                    first_line)
        sock.close()
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
