#!/usr/bin/env python3
"""`stagewell send` streaming from stdin while the daemon is killed with SIGKILL and restarted,
twice: the client reconnects, resends what was not acknowledged, and in the end every reading
sent is stored exactly once (loopback).

The reference is the input itself: the set of (site, time, stage) written to the client's stdin
must equal the set in the database, with as many rows as readings, and no resend may turn into a
conflict or reject. Also checked: `stagewell send` with a secret file, and its exit status when
the service refuses it.
"""
import os
import subprocess
import sys
import tempfile
import threading
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import tcp_support as t  # noqa: E402

READINGS = 40_000
CHUNK = 1_000
PAUSE_S = 0.1  # between chunks: the stream lasts about four seconds, so the kills land mid-stream


def main():
    args = t.arguments()
    checks = t.Checks()
    with tempfile.TemporaryDirectory() as tmp:
        port = t.free_port()
        secret = "crash-test-shared-secret-7731"
        with open(os.path.join(tmp, "token"), "w") as f:
            f.write(secret + "\n")
        os.chmod(os.path.join(tmp, "token"), 0o600)  # a secret file is the service's alone
        config = t.write_config(tmp, f"    listen: 127.0.0.1:{port}\n    secret_file: token\n")
        db = os.path.join(tmp, "var", "readings.db")
        daemon = t.Daemon(args.bin_dir, config, os.path.join(tmp, "daemon.log"))
        if not checks.check("daemon starts", daemon.start(port), ""):
            return checks.finish()
        try:
            run(checks, args, tmp, port, db, daemon)
        finally:
            daemon.stop()
    return checks.finish()


def run(checks, args, tmp, port, db, daemon):
    rows = t.readings(READINGS // 2, site="g1") + t.readings(READINGS // 2, site="g2")
    lines = ["site,time,stage"] + t.csv_lines(rows)
    send = subprocess.Popen(
        [os.path.join(args.bin_dir, "stagewell"), "send", "--port", str(port), "--token-file",
         os.path.join(tmp, "token"), "--tries", "12", "-"],
        stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)

    def feed():
        try:
            for i in range(0, len(lines), CHUNK):
                send.stdin.write("".join(line + "\n" for line in lines[i:i + CHUNK]))
                send.stdin.flush()
                time.sleep(PAUSE_S)
            send.stdin.close()
        except (BrokenPipeError, OSError):
            pass

    feeder = threading.Thread(target=feed)
    feeder.start()
    kills = 0
    for _ in range(2):
        # Kill once some readings are stored and the stream is still going.
        deadline = time.time() + 20
        before = len(t.stored(db))
        while time.time() < deadline and len(t.stored(db)) <= before:
            time.sleep(0.1)
        if send.poll() is not None or not feeder.is_alive():
            break
        daemon.kill9()
        kills += 1
        time.sleep(0.5)
        checks.check("daemon restarts after SIGKILL", daemon.start(port), daemon.log()[-2000:])
    feeder.join(timeout=60)
    send.stdin = None  # closed by the feeder: communicate() must not touch it
    try:
        out, err = send.communicate(timeout=120)
    except subprocess.TimeoutExpired:
        send.kill()
        out, err = send.communicate()
    checks.check("the daemon was killed mid-stream twice", kills == 2, f"{kills} kills")
    checks.check("stagewell send lost its connection and reconnected",
                 err.count("trying again") >= kills, err[-2000:])
    checks.check("stagewell send exits 0 (every line acknowledged)", send.returncode == 0,
                 f"exit {send.returncode}\n{out}\n{err[-2000:]}")
    checks.check("its summary counts every reading and line",
                 f"{len(lines)} lines read, {len(lines)} acknowledged" in out and
                 f"readings stored (new or already there)  {READINGS}" in out, out)
    have = t.stored(db)
    want = {t.key_of(r) for r in rows}
    checks.check("every reading stored exactly once",
                 set(have) == want and len(have) == READINGS,
                 f"{len(have)} stored, {len(want)} sent, {len(want - set(have))} missing")
    checks.check("no resend became a conflict or reject", not t.rejects(db), f"{t.rejects(db)[:3]}")

    # A wrong secret: refused, no retry, exit status 1.
    with open(os.path.join(tmp, "wrong"), "w") as f:
        f.write("not-the-right-secret-0000\n")
    proc = subprocess.run(
        [os.path.join(args.bin_dir, "stagewell"), "send", "--port", str(port), "--token-file",
         os.path.join(tmp, "wrong"), "-"],
        input="\n".join(t.csv_lines(t.readings(3, start_minute=90_000))) + "\n",
        capture_output=True, text=True, timeout=60)
    checks.check("stagewell send with a wrong secret: exit 1, refused",
                 proc.returncode == 1 and "refused" in proc.stderr, f"{proc.returncode} {proc.stderr}")
    # Rejected lines are reported but still acknowledged: exit 0.
    proc = subprocess.run(
        [os.path.join(args.bin_dir, "stagewell"), "send", "--port", str(port), "--token-file",
         os.path.join(tmp, "token"), "-"],
        input="site,time,stage\ng1,2024-06-01T00:00:00Z,0.5\ng9,2024-06-01T00:00:00Z,0.5\n",
        capture_output=True, text=True, timeout=60)
    checks.check("rejected lines are listed in the summary; exit 0",
                 proc.returncode == 0 and "unknown_site" in proc.stdout and
                 "readings stored (new or already there)  1" in proc.stdout, proc.stdout + proc.stderr)
    # Nothing listening: bounded tries, exit 1.
    proc = subprocess.run(
        [os.path.join(args.bin_dir, "stagewell"), "send", "--port", str(t.free_port()), "--tries",
         "2", "-"], input="g1,2024-06-01T00:00:00Z,0.5\n", capture_output=True, text=True,
        timeout=60)
    checks.check("nothing listening: gives up after --tries, exit 1",
                 proc.returncode == 1 and "giving up" in proc.stderr, proc.stderr)


if __name__ == "__main__":
    sys.exit(main())
