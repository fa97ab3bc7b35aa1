"""Shared pieces of the HTTP tests (http_*_test.py): a daemon with `http:` on a free loopback
port, a drop folder of invented readings, and plain HTTP over sockets or http.client (no
third-party packages). Not a test itself: ctest runs only files named *_test.py."""
import http.client
import json
import os
import socket
import time

import daemon_support as ds

# The test sites: a rectangular concrete channel (2 m wide, n = 0.014, S = 0.001) and a
# trapezoidal earth canal, metric, daily figures in America/Denver.
SITES_YAML = """sites:
  - id: channel
    name: Test channel
    section: {shape: rectangular, width: 2.0, height: 1.5}
    roughness: 0.014
    slope: 0.001
    checks: {max_gap: 20m, flatline: 0}
  - id: canal
    name: Test canal
    section: {shape: trapezoidal, width: 1.8, side_slope: 1.5, height: 1.3}
    roughness: 0.024
    slope: 0.0004
    stage: {units: cm}
    checks: {max_gap: 20m, flatline: 0}
  - id: silent
    name: A site with no readings
    section: {shape: circular, diameter: 0.9}
    roughness: 0.013
    slope: 0.002
"""


def free_port():
    """A port nobody listens on right now (the kernel's choice for an ephemeral bind)."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def write_config(directory, port, http_extra=""):
    """config.yaml in `directory`: a drop folder `incoming/`, the database `db/stagewell.db`."""
    os.makedirs(os.path.join(directory, "incoming"), exist_ok=True)
    os.makedirs(os.path.join(directory, "db"), exist_ok=True)
    path = os.path.join(directory, "config.yaml")
    ds.write(path, f"""units: metric
database: db/stagewell.db
timezone: America/Denver
sources:
  - type: directory
    path: incoming
http:
  listen: 127.0.0.1:{port}
{http_extra}{SITES_YAML}""")
    return path


def wait_for_port(port, timeout_s=20):
    def up():
        try:
            socket.create_connection(("127.0.0.1", port), timeout=1).close()
            return True
        except OSError:
            return False
    return ds.wait_until(up, timeout_s, 0.05)


def get(port, path, method="GET", headers=None, timeout=10):
    """(status, headers dict with lower-case names, body bytes) of one request."""
    connection = http.client.HTTPConnection("127.0.0.1", port, timeout=timeout)
    try:
        connection.request(method, path, headers=headers or {})
        response = connection.getresponse()
        body = response.read()
        return response.status, {k.lower(): v for k, v in response.getheaders()}, body
    finally:
        connection.close()


def get_json(port, path):
    status, headers, body = get(port, path)
    return status, json.loads(body) if body else None


def raw(port, data, timeout=10):
    """Sends `data` as is and returns everything the server sends until it closes (bytes)."""
    with socket.create_connection(("127.0.0.1", port), timeout=timeout) as s:
        s.sendall(data)
        chunks = []
        while True:
            try:
                chunk = s.recv(65536)
            except ConnectionResetError:
                break
            if not chunk:
                break
            chunks.append(chunk)
        return b"".join(chunks)


def status_of(reply):
    """The status code of a raw HTTP/1.1 reply, or None."""
    try:
        return int(reply.split(b" ", 2)[1])
    except (IndexError, ValueError):
        return None


def minute_series(end_ms, minutes, stage_of):
    """[(ms, stage)] one a minute, the last at end_ms (whole minutes)."""
    end_ms -= end_ms % 60000
    return [(end_ms - (minutes - 1 - i) * 60000, stage_of(i)) for i in range(minutes)]


def csv_text(site, rows):
    return "site,time,stage\n" + "".join(f"{site},{ds.iso(ms)},{stage:.4f}\n" for ms, stage in rows)
