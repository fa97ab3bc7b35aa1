#!/usr/bin/env python3
"""One misbehaving client cannot deny the page to others.

With `max_connections: 32` (the default), a client at 127.0.0.1 opens 32 connections that each
send half a request header and then nothing. Before, that held every slot for the request
timeout and everyone else got 503. Now:

- one address may hold at most `max_connections_per_address` (8 by default): its 9th and later
  connections are answered 429 and closed;
- a header that has begun must arrive whole within `header_timeout` (2 s by default): the half
  headers are closed by the server within it;
- a client at another address (a socket bound to 127.0.0.2) is answered 200 meanwhile;
- when every slot is held by connections that have sent nothing yet (idle: 8 from each of four
  addresses), a new client is still served: the connection idle longest is closed for it.

Status codes: RFC 6585 4 (429 Too Many Requests), RFC 9110 15.6.4 (503).
"""
import os
import select
import socket
import tempfile
import time

import daemon_support as ds
import http_support as hs

R = ds.Results()
HALF_HEADER = b"GET /api/sites HTTP/1.1\r\nHost: a\r\n"  # and never the blank line


def connect(port, source):
    s = socket.socket(socket.AF_INET, socket.SOCK_STREAM)
    s.settimeout(10)
    s.bind((source, 0))
    s.connect(("127.0.0.1", port))
    return s


def get_from(port, source, path="/api/sites"):
    """Status of one GET sent from `source` (an address of 127.0.0.0/8), or None."""
    s = connect(port, source)
    try:
        s.sendall(f"GET {path} HTTP/1.1\r\nHost: a\r\nConnection: close\r\n\r\n".encode())
        data = b""
        while True:
            chunk = s.recv(65536)
            if not chunk:
                break
            data += chunk
        return hs.status_of(data)
    except OSError:
        return None
    finally:
        s.close()


def answered(s):
    """What the server sent on `s` without waiting: None when nothing yet."""
    s.setblocking(False)
    try:
        return s.recv(4096)
    except BlockingIOError:
        return None
    finally:
        s.setblocking(True)


def half_headers(port):
    sockets = []
    try:
        for _ in range(32):
            s = connect(port, "127.0.0.1")
            s.sendall(HALF_HEADER)
            sockets.append(s)
        ds.wait_until(lambda: len(select.select(sockets, [], [], 0)[0]) >= 24, 5)
        replies = [answered(s) for s in sockets]
        held = [s for s, reply in zip(sockets, replies) if reply is None]
        refused = [hs.status_of(reply) for reply in replies if reply]
        R.check("one address holds at most 8 connections", len(held) == 8, len(held))
        R.check("its others are answered 429", refused == [429] * 24, refused)
        started = time.monotonic()
        status = get_from(port, "127.0.0.2")
        R.check("a client at another address is answered meanwhile", status == 200, status)
        R.check("... at once, not after a timeout", time.monotonic() - started < 1.5,
                time.monotonic() - started)
        closed = 0
        for s in held:
            s.settimeout(2 + 5)
            try:
                closed += s.recv(4096) == b""
            except (socket.timeout, ConnectionResetError):
                pass
        R.check("the half headers are closed by the server at header_timeout", closed == 8,
                closed)
        R.check("within header_timeout and some slack", time.monotonic() - started < 2 + 5,
                time.monotonic() - started)
    finally:
        for s in sockets:
            s.close()


def idle_connections(port):
    sockets = []
    try:
        for source in ("127.0.0.3", "127.0.0.4", "127.0.0.5", "127.0.0.6"):
            for _ in range(8):
                sockets.append(connect(port, source))  # connected, nothing sent: idle
        time.sleep(0.3)
        R.check("32 idle connections are all held",
                all(answered(s) is None for s in sockets))
        status = get_from(port, "127.0.0.7")
        R.check("every slot idle: a new client is still answered", status == 200, status)
        shed = sum(1 for s in sockets if answered(s) == b"")
        R.check("one idle connection was closed for it (the one idle longest)", shed == 1, shed)
        R.check("... the first one opened", answered(sockets[0]) == b"")
    finally:
        for s in sockets:
            s.close()


def main():
    args = ds.parse_args()
    stagewelld, _ = ds.programs(args)
    with tempfile.TemporaryDirectory() as tmp:
        port = hs.free_port()
        config = hs.write_config(tmp, port)  # max_connections 32, 8 per address, 2 s headers
        with ds.Daemon(stagewelld, config, os.path.join(tmp, "daemon.log")).start() as daemon:
            R.check("http port opens", hs.wait_for_port(port))
            half_headers(port)
            idle_connections(port)
            R.check("daemon stops cleanly", daemon.stop() == 0, daemon.log()[-2000:])
    ds.exit_with(R)


if __name__ == "__main__":
    main()
