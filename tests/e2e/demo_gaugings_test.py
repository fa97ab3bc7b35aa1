#!/usr/bin/env python3
"""The demo's invented gaugings (`make_demo_data.py history --gaugings`, which deploy/demo.sh
writes and prints the commands for) import and calibrate as README.md says.

The demo's history for the present moment is ingested with config/demo.yaml (its database moved to
a temporary directory), its gaugings file imported, and `stagewell calibrate --json` run on the
feeder canal. The generator makes each measured discharge Manning's equation with n = 0.027 times
a seeded log-normal scatter; the configured n is 0.030. So, independently of the program: every
gauging is used, the implied roughness of each is 0.030 * computed / measured, and the fit is
their geometric mean (the closed form of the least-squares fit in log space; standard statistics)
with its interval from scipy.stats.t. The canal carries more than configured: the fit is below
0.030 and the RMS difference falls.
"""
import datetime
import json
import math
import os
import subprocess
import sys
import tempfile

from scipy import stats

import daemon_support as ds
import demo_support as demo

R = ds.Results()


def main():
    args = ds.parse_args()
    _, stagewell = ds.programs(args)
    source = os.path.abspath(args.source_dir)
    now = datetime.datetime.now(datetime.timezone.utc).replace(microsecond=0)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        text, _ = demo.demo_config(source)
        path = os.path.join(root, "demo.yaml")
        ds.write(path, demo.relocated_config(text, root))
        history = os.path.join(root, "history")
        gaugings = os.path.join(root, "gaugings.csv")
        made = subprocess.run([sys.executable, demo.generator(source), "history", "--now",
                               now.isoformat(), "--out", history, "--gaugings", gaugings],
                              capture_output=True, text=True, timeout=60)
        R.check("make_demo_data.py history --gaugings ran", made.returncode == 0, made.stderr)
        run = subprocess.run([stagewell, "ingest", "--config", path, "-q",
                              os.path.join(history, "feeder-canal.csv")],
                             cwd=root, capture_output=True, text=True, timeout=300)
        R.check("ingest ran", run.returncode == 0, run.stdout[-1000:] + run.stderr[-1000:])
        run = subprocess.run([stagewell, "gaugings", "import", "--config", path, gaugings],
                             capture_output=True, text=True, timeout=60)
        R.check("gaugings import ran", run.returncode == 0, run.stdout + run.stderr)
        db = os.path.join(root, "stagewell.db")
        rows = ds.query(db, "SELECT measured, computed, implied_roughness FROM gaugings "
                            "WHERE site = 'feeder-canal' ORDER BY time_ms")
        R.check("six gaugings stored", len(rows) == 6, f"{rows}")
        for measured, computed, implied in rows:
            R.close("implied roughness = 0.030 computed / measured", implied,
                    0.030 * computed / measured, 1e-12)
        run = subprocess.run([stagewell, "calibrate", "--config", path, "--site", "feeder-canal",
                              "--json"], capture_output=True, text=True, timeout=60)
        R.check("calibrate ran", run.returncode == 0, run.stdout + run.stderr)
        if run.returncode == 0 and rows:
            out = json.loads(run.stdout)
            logs = [math.log(c / m) for m, c, _ in rows]
            n = len(logs)
            mean = sum(logs) / n
            sd = math.sqrt(sum((x - mean) ** 2 for x in logs) / (n - 1))
            half = stats.t.ppf(0.975, n - 1) * sd / math.sqrt(n)
            R.check("every gauging used", out["count"] == 6, f"{out['count']}")
            R.close("fitted n: the geometric mean", out["roughness_fit"], 0.030 * math.exp(mean),
                    1e-9)
            R.close("interval low (Student's t)", out["roughness_low"],
                    0.030 * math.exp(mean - half), 1e-9)
            R.close("interval high (Student's t)", out["roughness_high"],
                    0.030 * math.exp(mean + half), 1e-9)
            R.check("the canal carries more than its configured n gives", out["roughness_fit"] < 0.030,
                    f"{out['roughness_fit']}")
            R.check("fitting helps", out["rms_difference_percent_after"] <
                    out["rms_difference_percent_before"], f"{out}")
    ds.exit_with(R)


if __name__ == "__main__":
    main()
