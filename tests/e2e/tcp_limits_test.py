#!/usr/bin/env python3
"""A tcp source with a shared secret and small limits: who is refused, who is closed, and that
the others go on (loopback).

Expected behaviour is the protocol's (docs/tcp-protocol.md, "Readings over TCP"): `refused auth` for
a wrong or missing secret, `refused busy` beyond max_clients, `closing` after idle_timeout, and a
client that never reads its replies is stopped and closed while memory stays bounded.
"""
import os
import socket
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import daemon_support as ds  # noqa: E402
import tcp_support as t  # noqa: E402

SECRET = "correct-horse-battery-staple-42"
MAX_CLIENTS = 4
IDLE_S = 2


def main():
    args = t.arguments()
    checks = t.Checks()
    with tempfile.TemporaryDirectory() as tmp:
        port = t.free_port()
        with open(os.path.join(tmp, "secret"), "w") as f:
            f.write(SECRET + "\n")
        os.chmod(os.path.join(tmp, "secret"), 0o600)  # a secret file is the service's alone
        config = t.write_config(tmp, (f"    listen: 127.0.0.1:{port}\n    secret_file: secret\n"
                                      f"    max_clients: {MAX_CLIENTS}\n    idle_timeout: {IDLE_S}s\n"
                                      f"    auth_timeout: 1s\n    max_reply_bytes: 4096\n"))
        db = os.path.join(tmp, "var", "readings.db")
        daemon = t.Daemon(args.bin_dir, config, os.path.join(tmp, "daemon.log"))
        if not checks.check("daemon starts", daemon.start(port), ""):
            return checks.finish()
        try:
            run(checks, port, db, daemon)
        finally:
            checks.check("daemon stops cleanly", daemon.stop() == 0, "")
        log = daemon.log()
        checks.check("the secret never appears in the log", SECRET not in log, "")
    return checks.finish()


def authed(port):
    c = t.Client(port)
    c.send(f"auth {SECRET}\n")
    return c


def run(checks, port, db, daemon):
    # --- the secret ----------------------------------------------------------------------------
    row = t.readings(1, start_minute=0)[0]
    c = authed(port)
    c.send_lines(t.csv_lines([row]))
    checks.check("the right secret: line 1 is the first reading after auth", c.wait_ok(1) == 1, f"{c.replies}")
    c.close()

    for label, first in (("wrong secret", "auth correct-horse-battery-staple-43\n"),
                         ("secret with a different length", f"auth {SECRET}x\n"),
                         ("no auth line", t.csv_lines([row])[0] + "\n")):
        c = t.Client(port)
        c.send(first + t.csv_lines(t.readings(1, start_minute=5))[0] + "\n")
        reply = c.read_reply(5)
        closed = c.read_reply(5) is None and c.closed
        checks.check(f"{label}: refused with a message, then closed",
                     reply is not None and reply.startswith("refused auth") and closed, f"{c.replies}")
        c.close()
    checks.check("refusals are logged with the peer address",
                 daemon.log().count("refused") >= 3 and "127.0.0.1:" in daemon.log(), "")
    checks.check("nothing from refused connections is stored",
                 t.key_of(t.readings(1, start_minute=5)[0]) not in t.stored(db), "")

    c = t.Client(port)  # says nothing: refused after auth_timeout
    reply = c.read_reply(5)
    checks.check("no auth line within auth_timeout: refused", reply is not None and
                 reply.startswith("refused auth"), f"{reply}")
    c.close()

    # --- max_clients ---------------------------------------------------------------------------
    held = [authed(port) for _ in range(MAX_CLIENTS)]
    for c in held:
        c.send_lines(["site,time,stage"])
    for c in held:
        c.wait_ok(1, timeout=5)
    extra = t.Client(port)
    reply = extra.read_reply(5)
    checks.check("one client more than max_clients is refused busy",
                 reply is not None and reply.startswith("refused busy"), f"{reply}")
    extra.close()
    held.pop().close()
    time.sleep(0.3)
    c = authed(port)
    c.send_lines([t.csv_lines(t.readings(1, start_minute=10))[0]])
    checks.check("after one leaves, a new client is taken", c.wait_ok(1, timeout=5) == 1, f"{c.replies}")
    held.append(c)

    # --- idle timeout (also what ends a half-open connection) ----------------------------------
    for c in held:
        c.send(t.csv_lines(t.readings(1, start_minute=20))[0][:10])  # a partial line, then silence
    start = time.time()
    replies = [c.read_reply(IDLE_S + 5) for c in held]
    waited = time.time() - start
    checks.check("idle connections are closed with `closing` after idle_timeout",
                 all(r is not None and r.startswith("closing") for r in replies), f"{replies}")
    checks.check("... not before it", waited >= IDLE_S - 0.5, f"{waited:.2f} s")
    for c in held:
        c.close()

    # --- a client that never reads its replies ------------------------------------------------
    hog = authed(port)
    hog.sock.setsockopt(socket.SOL_SOCKET, socket.SO_RCVBUF, 4096)
    hog.sock.settimeout(0.5)
    bad_lines = b"x\n" * 50_000  # each one an error reply
    pid = daemon.process.pid
    before = ds.rss_kib(pid)
    sent = 0
    deadline = time.time() + 20
    while time.time() < deadline:
        try:
            sent += hog.sock.send(bad_lines)
        except socket.timeout:
            break  # the service stopped reading it
        except OSError:
            break  # or closed it
    # Meanwhile others are served.
    c = authed(port)
    row = t.readings(1, start_minute=30)[0]
    c.send_lines(t.csv_lines([row]))
    checks.check("while one client does not read, another is served", c.wait_ok(1, timeout=5) == 1,
                 f"{c.replies}")
    c.close()
    checks.check("the service stops reading a client that does not read its replies",
                 sent < 40 * 1024 * 1024, f"{sent} bytes taken")
    after = ds.rss_kib(pid)
    checks.check("memory stays bounded (RSS grew less than 32 MiB)",
                 after - before < ds.memory_growth_bound_kib(32 * 1024),
                 f"{before} -> {after} KiB")
    # It is closed within idle_timeout (plus the closing grace), since nothing moves.
    closed = False
    deadline = time.time() + IDLE_S + 10
    hog.sock.settimeout(1)
    while time.time() < deadline and not closed:
        try:
            hog.sock.send(b"x\n" * 1000)
            time.sleep(0.2)
        except socket.timeout:
            time.sleep(0.2)
        except OSError:
            closed = True
    checks.check("... and closes it", closed, "")
    hog.close()

    # --- a flood of connections --------------------------------------------------------------
    flood = []
    for _ in range(200):
        try:
            flood.append(socket.create_connection(("127.0.0.1", port), timeout=2))
        except OSError:
            break
    for s in flood:
        s.close()
    time.sleep(1.5)  # auth_timeout ends the ones that were taken
    c = authed(port)
    row = t.readings(1, start_minute=40)[0]
    c.send_lines(t.csv_lines([row]))
    checks.check("after a flood of connections the service takes a client again",
                 c.wait_ok(1, timeout=10) == 1 and t.key_of(row) in t.stored(db), f"{c.replies}")
    c.close()
    checks.check("the daemon survived all of it", daemon.alive(), "")


if __name__ == "__main__":
    sys.exit(main())
