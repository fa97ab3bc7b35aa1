#!/usr/bin/env python3
"""The tcp source's protocol, line by line, against what was sent (loopback, one daemon).

What is expected comes from the protocol (docs/tcp-protocol.md, "Readings over TCP"): lines after
`auth` are numbered 1, 2, ... per connection, every line counts, `ok n` covers lines 1..n once
stored, `error n kind reason` names a rejected line at once. Stored discharges are compared with
Manning's equation computed here (V. T. Chow, Open-Channel Hydraulics, 1959, ch. 5); the service's
rating table is documented to agree within 0.01 %.
"""
import os
import random
import sqlite3
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import tcp_support as t  # noqa: E402


def main():
    args = t.arguments()
    checks = t.Checks()
    with tempfile.TemporaryDirectory() as tmp:
        port = t.free_port()
        config = t.write_config(tmp, f"    listen: 127.0.0.1:{port}\n")
        db = os.path.join(tmp, "var", "readings.db")
        daemon = t.Daemon(args.bin_dir, config, os.path.join(tmp, "daemon.log"))
        if not checks.check("daemon starts", daemon.start(port), daemon.log() if daemon.process else ""):
            return checks.finish()
        try:
            run(checks, port, db, daemon)
        finally:
            code = daemon.stop()
            checks.check("SIGTERM stops the daemon with status 0", code == 0, f"status {code}")
    return checks.finish()


def run(checks, port, db, daemon):
    started_ms = int(time.time() * 1000)
    # --- acks count every line: header, comment, blank, readings, a rejected line -------------
    rows = t.readings(5, start_minute=0)
    lines = ["site,time,stage", "# from gateway 7", ""] + t.csv_lines(rows[:3]) + \
            ["g1,2024-05-01T01:00:00Z,not-a-number"] + t.csv_lines(rows[3:])
    c = t.Client(port)
    c.send_lines(lines)
    last = c.wait_ok(len(lines))
    checks.check("ok covers every line sent (header, comment, blank included)", last == len(lines),
                 f"last ok {last}, sent {len(lines)}; replies {c.replies}")
    errors = c.errors()
    bad_line = lines.index("g1,2024-05-01T01:00:00Z,not-a-number") + 1
    checks.check("a bad stage gets one error line naming its line and kind",
                 len(errors) == 1 and errors[0].startswith(f"error {bad_line} bad_stage "), f"{errors}")
    oks = [int(r.split()[1]) for r in c.replies if r.startswith("ok ")]
    checks.check("ok numbers never go back", oks == sorted(oks), f"{oks}")
    if errors:
        checks.check("the error line comes before the ok that covers it",
                     c.replies.index(errors[0]) < len(c.replies) - 1, f"{c.replies}")
    c.close()
    have = t.stored(db)
    for row in rows:
        key = t.key_of(row)
        q = have.get(key)
        depth = float(row[2])
        want = t.manning_rectangular(depth)
        checks.check(f"{row} stored with Manning's discharge", q is not None and abs(q - want) <= 1e-4 * want,
                     f"got {q}, want {want}")
    reasons = [r for r in t.rejects(db) if "not-a-number" in r[2] or "bad_stage" in r[2]]
    checks.check("the rejected line is kept in rejects with its connection and line",
                 any(r[0].startswith("tcp 127.0.0.1:") and r[1] == f"line {bad_line}" for r in reasons),
                 f"{t.rejects(db)}")

    # The listener's lag for the metrics: its ingest_progress row, written with the lines.
    with sqlite3.connect(f"file:{db}?mode=ro", uri=True, timeout=10) as con:
        rows = list(con.execute("SELECT file_identity, byte_offset, updated_ms FROM ingest_progress "
                                "WHERE source = ?", (f"tcp 127.0.0.1:{port}",)))
    checks.check("the listener's progress row: no offset, written when the lines arrived",
                 len(rows) == 1 and rows[0][:2] == ("tcp", 0) and
                 started_ms - 1000 <= rows[0][2] <= int(time.time() * 1000) + 1000, f"{rows}")

    # --- no header: the source's columns in the default order; CRLF line endings ---------------
    rows = t.readings(4, start_minute=100)
    c = t.Client(port)
    c.send("".join(line + "\r\n" for line in t.csv_lines(rows)))
    last = c.wait_ok(4)
    checks.check("without a header, CRLF lines are read as site,time,stage", last == 4 and not c.errors(),
                 f"{c.replies}")
    c.close()
    have = t.stored(db)
    checks.check("... and stored", all(t.key_of(r) in have for r in rows), "")

    # --- split lines: random chunk sizes, down to single bytes ---------------------------------
    rows = t.readings(300, start_minute=200)
    payload = ("site,time,stage\n" + "".join(line + "\n" for line in t.csv_lines(rows))).encode()
    rng = random.Random(5)
    c = t.Client(port)
    i = 0
    while i < len(payload):
        n = rng.choice([1, 1, 2, 3, 7, 50, 400])
        c.send(payload[i:i + n])
        i += n
        if rng.random() < 0.02:
            time.sleep(0.01)  # let some pieces arrive in separate reads
    last = c.wait_ok(301)
    checks.check("lines split across packets: all acknowledged, none rejected",
                 last == 301 and not c.errors(), f"last {last}, errors {c.errors()[:3]}")
    c.close()
    have = t.stored(db)
    checks.check("... every one stored", all(t.key_of(r) in have for r in rows),
                 f"{sum(t.key_of(r) in have for r in rows)} of 300")

    # --- line length: exactly the limit is read; one byte more is too_long, and reading goes on --
    limit = 4096  # the documented default of max_line_bytes
    row = t.readings(1, start_minute=600)[0]
    exact = f"{row[0]},{row[1]}," + " " * (limit - len(f"{row[0]},{row[1]},{row[2]}")) + row[2]
    too_long = "g1,2024-05-01T10:01:00Z," + "9" * (limit + 1000)
    after = t.readings(1, start_minute=602)[0]
    c = t.Client(port)
    c.send_lines([exact, too_long, t.csv_lines([after])[0]])
    last = c.wait_ok(3)
    errors = c.errors()
    checks.check("a line of exactly max_line_bytes is stored", len(exact) == limit and
                 t.key_of(row) in t.stored(db), f"len {len(exact)}")
    checks.check("a longer line gets `error 2 too_long`", len(errors) == 1 and
                 errors[0].startswith("error 2 too_long"), f"{errors}")
    checks.check("the line after it is read and stored", last == 3 and t.key_of(after) in t.stored(db),
                 f"last ok {last}")
    c.close()

    # --- garbage on one connection while another sends good readings ---------------------------
    rng = random.Random(11)
    garbage = bytes(rng.randrange(256) for _ in range(20000))
    good_rows = t.readings(200, site="g2", start_minute=0)
    bad = t.Client(port)
    good = t.Client(port)
    bad.send(garbage + b"\n")
    good.send_lines(["site,time,stage"] + t.csv_lines(good_rows))
    good_last = good.wait_ok(201)
    checks.check("a clean client is unaffected by another's garbage", good_last == 201 and not good.errors(),
                 f"last {good_last}")
    # The garbage connection is answered (errors, ok) or closed; then it still takes good lines.
    garbage_lines = garbage.count(b"\n") + 1
    row = t.readings(1, site="g2", start_minute=500)[0]
    try:
        bad.send_lines([t.csv_lines([row])[0]])
        last = bad.wait_ok(garbage_lines + 1)
        checks.check("after garbage (errors sent for its lines) a good line on it is stored",
                     last == garbage_lines + 1 and t.key_of(row) in t.stored(db) and bad.errors(),
                     f"last {last}, expected {garbage_lines + 1}, {len(bad.errors())} errors")
        numbers = [int(e.split()[1]) for e in bad.errors()]
        checks.check("error line numbers are within the lines sent and increasing",
                     numbers == sorted(numbers) and all(1 <= n <= garbage_lines for n in numbers), "")
    except OSError as e:
        checks.check("garbage connection answered or closed", True, str(e))
    bad.close()
    good.close()

    # --- repeats: sending stored readings again stores nothing new -----------------------------
    before = len(t.stored(db))
    c = t.Client(port)
    c.send_lines(["site,time,stage"] + t.csv_lines(good_rows))
    last = c.wait_ok(201)
    checks.check("a resend of stored readings is acknowledged", last == 201 and not c.errors(), f"{last}")
    checks.check("... and adds no reading", len(t.stored(db)) == before, f"{before} -> {len(t.stored(db))}")
    c.close()

    # --- a conflict: a stored site and time with another stage is rejected, and the client told --
    row = good_rows[10]
    changed = f"{float(row[2]) + 0.25:.3f}"
    stored_q = t.stored(db)[t.key_of(row)]
    c = t.Client(port)
    c.send_lines(["site,time,stage", f"{row[0]},{row[1]},{changed}"])
    last = c.wait_ok(2)
    errors = c.errors()
    checks.check("a second, different stage for a stored time gets `error 2 conflict`",
                 last == 2 and len(errors) == 1 and errors[0].startswith("error 2 conflict "),
                 f"{c.replies}")
    checks.check("... the stored reading is kept unchanged",
                 t.stored(db)[t.key_of(row)] == stored_q, "")
    checks.check("... and the line is in rejects with its connection and line number",
                 any(r[0].startswith("tcp 127.0.0.1:") and r[1] == "line 2" and r[2].startswith("conflict")
                     for r in t.rejects(db)), f"{t.rejects(db)[-3:]}")
    c.close()

    # --- a client that half-closes gets its final ok, then the service closes ---------------
    rows = t.readings(3, start_minute=700)
    c = t.Client(port)
    c.send("\n".join(t.csv_lines(rows)))  # the last line has no newline
    c.sock.shutdown(1)  # SHUT_WR
    last = c.wait_ok(3)
    tail = c.read_reply(5)
    checks.check("after the client's EOF its last line (no newline) is read and acknowledged",
                 last == 3 and all(t.key_of(r) in t.stored(db) for r in rows), f"{c.replies}")
    checks.check("... and then the service closes the connection", tail is None and c.closed, f"{tail}")
    c.close()
    checks.check("the daemon is still running", daemon.alive(), "")


if __name__ == "__main__":
    sys.exit(main())
