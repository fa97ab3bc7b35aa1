#!/usr/bin/env python3
"""Configuration of tcp sources: what is refused (with the line named), what is accepted, and that
the daemon will not start a listener others can reach without a secret.

The rules checked are those of config/reference.yaml's tcp source block; the block itself, with
its keys uncommented, must be a valid configuration. No listener here binds to anything but
loopback: the non-loopback cases are refused before any socket is opened.
"""
import os
import re
import socket
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import tcp_support as t  # noqa: E402


def run_check(bin_dir, path, env=None):
    return subprocess.run([os.path.join(bin_dir, "stagewell"), "check", "--config", path],
                          capture_output=True, text=True, timeout=30, env=env)


def config_text(source_lines):
    return ("units: metric\n"                # 1
            "database: var/readings.db\n"    # 2
            "sources:\n"                     # 3
            "  - type: tcp\n"                # 4
            + "".join(f"    {line}\n" for line in source_lines)  # 5, 6, ...
            + t.SITE_YAML)


def main():
    args = t.arguments()
    checks = t.Checks()
    with tempfile.TemporaryDirectory() as tmp:
        def write(name, source_lines):
            path = os.path.join(tmp, name)
            with open(path, "w") as f:
                f.write(config_text(source_lines))
            return path

        with open(os.path.join(tmp, "good-secret"), "w") as f:
            f.write("  a-long-enough-shared-secret-0123  \n")
        with open(os.path.join(tmp, "short-secret"), "w") as f:
            f.write("short\n")
        with open(os.path.join(tmp, "open-secret"), "w") as f:
            f.write("a-long-enough-shared-secret-0123\n")
        for name in ("good-secret", "short-secret"):
            os.chmod(os.path.join(tmp, name), 0o600)  # a secret file is the service's alone
        os.chmod(os.path.join(tmp, "open-secret"), 0o644)

        # (file, source keys, line of the error, fragment of the message)
        bad = [
            ("open.yaml", ["listen: 0.0.0.0:7207"], 5, "needs a shared secret"),
            ("open6.yaml", ["listen: \"[::]:7207\""], 5, "needs a shared secret"),
            ("lan.yaml", ["site: g1", "listen: 192.0.2.10:7300"], 6, "needs a shared secret"),
            ("port.yaml", ["listen: 127.0.0.1:70000"], 5, "ADDRESS:PORT"),
            ("name.yaml", ["listen: localhost:7207"], 5, "ADDRESS:PORT"),
            ("path.yaml", ["path: incoming"], 5, "not used by this type of source"),
            ("missing.yaml", ["listen: 0.0.0.0:7207", "secret_file: no-such-file"], 6,
             "cannot read the secret file"),
            ("short.yaml", ["secret_file: short-secret"], 5, "not a usable secret"),
            ("readable.yaml", ["secret_file: open-secret"], 5,
             "can be read or written by every user of this machine (mode 0644)"),
            ("inline.yaml", ["secret: tiny"], 5, "16 to 1024 characters"),
            ("twice.yaml", ["secret_file: good-secret", "secret_env: STAGEWELL_TEST_SECRET"], 6,
             "one way only"),
            ("env.yaml", ["secret_env: STAGEWELL_TEST_UNSET_VARIABLE"], 5, "not set"),
            ("limits.yaml", ["max_clients: 0"], 5, "max_clients"),
            ("idle.yaml", ["idle_timeout: 0s"], 5, "idle_timeout"),
        ]
        env = {k: v for k, v in os.environ.items() if k != "STAGEWELL_TEST_UNSET_VARIABLE"}
        env["STAGEWELL_TEST_SECRET"] = "an-environment-secret-456789"
        for name, lines, line, fragment in bad:
            path = write(name, lines)
            proc = run_check(args.bin_dir, path, env)
            located = re.search(rf"{re.escape(name)}:{line}:\d+: .*{re.escape(fragment)}", proc.stderr)
            checks.check(f"{name}: refused, naming line {line}", proc.returncode == 1 and located,
                         f"exit {proc.returncode}: {proc.stderr.strip()}")
        proc = run_check(args.bin_dir, write("inline2.yaml", ["secret: tiny"]), env)
        checks.check("an inline secret is never quoted in a message", "tiny" not in proc.stderr,
                     proc.stderr)

        # Two tcp sources on one port.
        path = os.path.join(tmp, "same-port.yaml")
        with open(path, "w") as f:
            f.write("units: metric\ndatabase: var/r.db\nsources:\n"
                    "  - type: tcp\n    listen: 127.0.0.1:7400\n"
                    "  - type: tcp\n    listen: 0.0.0.0:7400\n    secret_file: good-secret\n"
                    + t.SITE_YAML)
        proc = run_check(args.bin_dir, path, env)
        checks.check("two tcp sources on one port are refused", proc.returncode == 1 and
                     re.search(r"same-port.yaml:7:\d+: .*listens on this port", proc.stderr),
                     proc.stderr.strip())

        good = [
            ("default.yaml", []),
            ("lan-file.yaml", ["listen: 0.0.0.0:7207", "secret_file: good-secret"]),
            ("lan-env.yaml", ["listen: \"[::]:7207\"", "secret_env: STAGEWELL_TEST_SECRET"]),
            ("v6-loopback.yaml", ["listen: \"[::1]:7207\"", "max_line_bytes: 100",
                                  "max_reply_bytes: 2048", "auth_timeout: 2s", "idle_timeout: 1h"]),
        ]
        for name, lines in good:
            proc = run_check(args.bin_dir, write(name, lines), env)
            checks.check(f"{name}: accepted", proc.returncode == 0, proc.stderr.strip())

        # The daemon refuses to start on a non-loopback address without a secret: it exits with
        # status 1 and names the line, and never listens.
        port = t.free_port()
        path = write("daemon-open.yaml", [f"listen: 0.0.0.0:{port}"])
        try:
            proc = subprocess.run([os.path.join(args.bin_dir, "stagewelld"), "--config", path],
                                  capture_output=True, text=True, timeout=20)
            checks.check("stagewelld will not start a listener on 0.0.0.0 without a secret",
                         proc.returncode == 1 and "daemon-open.yaml:5:" in proc.stderr and
                         "needs a shared secret" in proc.stderr, f"{proc.returncode} {proc.stderr}")
        except subprocess.TimeoutExpired:
            checks.check("stagewelld will not start a listener on 0.0.0.0 without a secret", False,
                         "it kept running")
        checks.check("... and created no database", not os.path.exists(os.path.join(tmp, "var")), "")

        # A port another program holds: the daemon will not start, and says why.
        with socket.socket() as holder:
            holder.bind(("127.0.0.1", 0))
            holder.listen()
            taken = holder.getsockname()[1]
            path = write("daemon-taken.yaml", [f"listen: 127.0.0.1:{taken}"])
            try:
                proc = subprocess.run([os.path.join(args.bin_dir, "stagewelld"), "--config", path],
                                      capture_output=True, text=True, timeout=20)
                checks.check("stagewelld will not start when its port is taken",
                             proc.returncode == 1 and "cannot listen" in proc.stderr,
                             f"{proc.returncode} {proc.stderr}")
            except subprocess.TimeoutExpired:
                checks.check("stagewelld will not start when its port is taken", False, "it kept running")

        # The reference's commented tcp block, uncommented, is a valid source.
        reference = os.path.join(args.source_dir, "config", "reference.yaml")
        with open(reference) as f:
            text = f.read().splitlines()
        start = text.index("  # ---- tcp source ----")
        end = text.index("  # ---- end of tcp source ----")
        block = [line for line in text[start + 1:end] if line.startswith("  # - ") or
                 line.startswith("  #   ")]
        uncommented = [line[:2] + line[4:] for line in block]
        checks.check("the reference documents every tcp key",
                     all(any(line.strip().startswith(key + ":") for line in uncommented)
                         for key in ("listen", "secret_file", "max_line_bytes", "max_clients",
                                     "idle_timeout", "auth_timeout", "max_reply_bytes")) and
                     all(key in "\n".join(block) for key in ("secret_env", "secret:")), "")
        os.makedirs(os.path.join(tmp, "ref", "cfg"))
        os.makedirs(os.path.join(tmp, "ref", "var"))
        with open(os.path.join(tmp, "ref", "var", "tcp-secret"), "w") as f:
            f.write("reference-example-secret-0001\n")
        os.chmod(os.path.join(tmp, "ref", "var", "tcp-secret"), 0o600)  # as the reference says
        path = os.path.join(tmp, "ref", "cfg", "reference-tcp.yaml")
        with open(path, "w") as f:
            f.write("units: metric\ndatabase: ../var/r.db\nsources:\n" + "\n".join(uncommented) +
                    "\n" + t.SITE_YAML)
        proc = run_check(args.bin_dir, path, env)
        checks.check("the reference's tcp block, uncommented, is valid", proc.returncode == 0,
                     proc.stderr.strip() + "\n" + "\n".join(uncommented))
    return checks.finish()


if __name__ == "__main__":
    sys.exit(main())
