#!/usr/bin/env python3
"""Many clients at once, and clients that drop mid-batch, on one tcp source (loopback).

Expected: every connection's final `ok` equals the number of lines it sent (the protocol's
numbering), and the database holds exactly the readings sent — no more, none missing, none
twice — whatever the interleaving and however often a client resends.
"""
import os
import sys
import tempfile
import threading

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import tcp_support as t  # noqa: E402

CLIENTS = 50
PER_CLIENT = 200


def main():
    args = t.arguments()
    checks = t.Checks()
    with tempfile.TemporaryDirectory() as tmp:
        port = t.free_port()
        config = t.write_config(tmp, f"    listen: 127.0.0.1:{port}\n")
        db = os.path.join(tmp, "var", "readings.db")
        daemon = t.Daemon(args.bin_dir, config, os.path.join(tmp, "daemon.log"))
        if not checks.check("daemon starts", daemon.start(port), ""):
            return checks.finish()
        try:
            run(checks, port, db)
        finally:
            checks.check("daemon stops cleanly", daemon.stop() == 0, "")
    return checks.finish()


def run(checks, port, db):
    # --- 50 clients at once, each its own stretch of readings of two sites ----------------------
    sent = []
    results = [None] * CLIENTS
    barrier = threading.Barrier(CLIENTS)

    def client(k):
        site = "g1" if k % 2 == 0 else "g2"
        rows = t.readings(PER_CLIENT, site=site, start_minute=k * PER_CLIENT)
        sent.extend(rows)
        lines = ["site,time,stage"] + t.csv_lines(rows)
        try:
            c = t.Client(port, timeout=30)
            barrier.wait(timeout=30)
            # In three pieces, so that the connections' lines interleave in the batches.
            third = len(lines) // 3
            for piece in (lines[:third], lines[third:2 * third], lines[2 * third:]):
                c.send_lines(piece)
            results[k] = (c.wait_ok(len(lines), timeout=60), len(lines), c.errors())
            c.close()
        except (OSError, threading.BrokenBarrierError) as e:
            results[k] = (0, len(lines), [str(e)])

    threads = [threading.Thread(target=client, args=(k,)) for k in range(CLIENTS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=120)
    complete = [r for r in results if r and r[0] == r[1] and not r[2]]
    checks.check(f"{CLIENTS} concurrent clients each get `ok` for all their lines",
                 len(complete) == CLIENTS,
                 f"{len(complete)} complete; others: {[r for r in results if r not in complete][:3]}")
    have = t.stored(db)
    want = {t.key_of(r) for r in sent}
    checks.check("the database holds exactly the readings sent",
                 set(have) == want and len(have) == CLIENTS * PER_CLIENT,
                 f"{len(have)} stored, {len(want)} sent, {len(want - set(have))} missing")

    # --- a client drops mid-batch, reconnects and resends everything after its last ok ---------
    rows = t.readings(1000, site="g1", start_minute=50_000)
    lines = ["site,time,stage"] + t.csv_lines(rows)
    c = t.Client(port)
    c.send_lines(lines[:600])
    c.close()  # before any ok can have come: the lines are in the open batch, or not read at all
    # It knows nothing was acknowledged, so it sends everything again, then the rest.
    c = t.Client(port)
    c.send_lines(lines)
    last = c.wait_ok(len(lines), timeout=20)
    checks.check("after a drop mid-batch the resent connection is acknowledged in full",
                 last == len(lines) and not c.errors(), f"last {last} of {len(lines)}; {c.errors()[:3]}")
    c.close()

    # --- a client drops after a partial ok: resending from there stores each reading once ------
    rows2 = t.readings(1000, site="g2", start_minute=60_000)
    lines2 = ["site,time,stage"] + t.csv_lines(rows2)
    c = t.Client(port)
    c.send_lines(lines2[:400])
    acked = c.wait_ok(400, timeout=10)
    c.send_lines(lines2[400:700])
    c.close()  # lines 401..700 may or may not be stored: the client cannot know
    c = t.Client(port)
    resend = [lines2[0]] + lines2[acked:]  # header, then everything after the last ok
    c.send_lines(resend)
    last = c.wait_ok(len(resend), timeout=20)
    checks.check("resuming after the last ok is acknowledged", acked == 400 and last == len(resend),
                 f"acked {acked}, last {last} of {len(resend)}")
    c.close()

    have = t.stored(db)
    want = {t.key_of(r) for r in sent + rows + rows2}
    checks.check("every reading stored exactly once after drops and resends",
                 set(have) == want and len(have) == len(want),
                 f"{len(have)} stored, {len(want)} expected, {len(want - set(have))} missing, "
                 f"{len(set(have) - want)} unexpected")
    checks.check("no resend became a conflict or a reject", not t.rejects(db), f"{t.rejects(db)[:3]}")


if __name__ == "__main__":
    sys.exit(main())
