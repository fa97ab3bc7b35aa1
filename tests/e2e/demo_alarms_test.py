#!/usr/bin/env python3
"""The demo's history raises alarms and shows its planted faults: `stagewell ingest` of the history
that deploy/make_demo_data.py makes for the present moment (what deploy/demo.sh drops), with
config/demo.yaml (its database moved to a temporary directory), leaves in the `alarms` view the
raceway's low_flow during its cleaning drawdown and the creek's rising during the storm, and keeps
the planted spike, stuck sensor, gap and bad lines as flags and rejects.

The expected raise and clear times are computed here from the generated CSV files with the rules
of docs/checks-and-alarms.md, "Alarms" and Manning's equation in closed form
(daemon_support.manning), with the thresholds read from demo.yaml; the expected flags from the
files with the rules of docs/checks-and-alarms.md, "Exact rules"; none is read from the program.
"""
import datetime
import os
import subprocess
import tempfile

import daemon_support as ds
import demo_support as demo

R = ds.Results()


def main():
    args = ds.parse_args()
    _, stagewell = ds.programs(args)
    source = os.path.abspath(args.source_dir)
    now = datetime.datetime.now(datetime.timezone.utc).replace(microsecond=0)
    with tempfile.TemporaryDirectory(prefix="stagewell-e2e-") as root:
        text, config = demo.demo_config(source)
        path = os.path.join(root, "demo.yaml")
        ds.write(path, demo.relocated_config(text, root))
        history = os.path.join(root, "history")
        made = demo.make_history(source, now.isoformat(), history)
        R.check("make_demo_data.py history ran", made.returncode == 0, made.stderr[-1000:])
        files = {site: os.path.join(history, f"{site}.csv") for site in demo.DEMO_SITES}
        rows = {site: demo.rows_of(files[site]) for site in demo.DEMO_SITES}
        run = subprocess.run([stagewell, "ingest", "--config", path, "-q"] +
                             [files[s] for s in demo.DEMO_SITES], cwd=root, capture_output=True,
                             text=True, timeout=300)
        R.check("ingest ran", run.returncode == 0, run.stdout[-1000:] + run.stderr[-1000:])
        db = os.path.join(root, "stagewell.db")
        got = ds.query(db, "SELECT site, kind, raised, cleared, value, threshold FROM alarms "
                           "ORDER BY site, kind, raised")

        # Raceway A: low_flow as demo.yaml sets it (below 0.5 m^3/s, hysteresis 0.1, a hold) on
        # Manning's discharge of its rectangular section. Its stage range keeps every reading in.
        low = demo.raceway_low_flow(config, demo.parsed(rows["raceway-a"], "raceway-a"))
        R.check("the demo history has a low-flow episode (set-up)", len(low) >= 1, f"{low}")
        got_low = demo.alarm_events(db, "raceway-a", "low_flow")
        R.check("raceway-a low_flow raised and cleared as computed", got_low == low,
                f"got {got_low}, want {low}")

        # Brindlewick Creek: rising faster than 0.5 m/h across 1 h, clears below 0.3 m/h; stage
        # range 0.2 to 4.0 m (readings outside it are left out).
        rising = demo.creek_rising(config, demo.parsed(rows["brindlewick-creek"],
                                                       "brindlewick-creek"))
        R.check("the demo history has a fast rise (set-up)", len(rising) >= 1, f"{rising}")
        got_rising = demo.alarm_events(db, "brindlewick-creek", "rising")
        R.check("brindlewick-creek rising raised and cleared as computed", got_rising == rising,
                f"got {got_rising}, want {rising}")
        R.check("no other alarms (no other site has any configured; stale needs the service)",
                all(s in ("raceway-a", "brindlewick-creek") and k in ("low_flow", "rising")
                    for s, k, *_ in got), f"{got}")
        # The history stops at the start of the demo: the live storm's alarms are not in it yet.
        R.check("every history alarm is closed before the demo starts",
                all(cleared is not None for _, cleared in low + rising), f"{low} {rising}")

        check_planted_faults(config, rows, db)
    ds.exit_with(R)


def check_planted_faults(config, rows, db):
    """The spike, the stuck sensor, the silent logger and the bad lines of the history, found in
    the files by the rules of docs/checks-and-alarms.md and docs/input.md, and in the database."""
    flags = {}
    for site, t, flag_text in ds.query(db, "SELECT site, unix_time, flags FROM discharge"):
        flags[(site, round(t * 1000))] = set(flag_text.split(",")) if flag_text else set()

    # Spike (checks.spike 0.25 m at raceway-a): a reading that jumps at least 0.25 from the one
    # before and is followed by one back within 0.125 of the level before the jump.
    raceway = demo.parsed(rows["raceway-a"], "raceway-a")
    spike = demo.site_of(config, "raceway-a")["checks"]["spike"]
    spikes = [raceway[i][0] for i in range(1, len(raceway) - 1)
              if abs(raceway[i][1] - raceway[i - 1][1]) >= spike and
              abs(raceway[i + 1][1] - raceway[i - 1][1]) <= spike / 2]
    R.check("the history plants one spike at the raceway (set-up)", len(spikes) == 1, spikes)
    flagged = sorted(t for (s, t), f in flags.items() if s == "raceway-a" and "spike" in f)
    R.check("raceway-a: the planted spike is flagged spike", flagged == spikes,
            f"flagged {flagged}, planted {spikes}")

    # Flatline (feeder-canal: checks.flatline unset, so the 6 h default): readings more than 6 h
    # after the start of a run of identical stages.
    canal = demo.parsed(rows["feeder-canal"], "feeder-canal")
    limit_ms = demo.duration_ms(demo.site_of(config, "feeder-canal")["checks"].get("flatline",
                                                                                  "6h"))
    stuck, run_start = [], None
    for i, (t, s) in enumerate(canal):
        run_start = run_start if i > 0 and s == canal[i - 1][1] else t
        if t - run_start > limit_ms:
            stuck.append(t)
    R.check("the history plants a stuck canal sensor (set-up)", len(stuck) >= 6, stuck)
    flagged = sorted(t for (s, t), f in flags.items() if s == "feeder-canal" and "flatline" in f)
    R.check("feeder-canal: the stuck readings are flagged flatline", flagged == stuck,
            f"flagged {flagged}, want {stuck}")

    # Gap (brindlewick-creek: checks.max_gap 1h): a reading more than 1 h after the one before.
    creek = demo.parsed(rows["brindlewick-creek"], "brindlewick-creek")
    max_gap = demo.duration_ms(demo.site_of(config, "brindlewick-creek")["checks"]["max_gap"])
    gaps = [creek[i][0] for i in range(1, len(creek)) if creek[i][0] - creek[i - 1][0] > max_gap]
    R.check("the history plants a silent creek logger (set-up)", len(gaps) == 1, gaps)
    flagged = sorted(t for (s, t), f in flags.items() if s == "brindlewick-creek" and "gap" in f)
    R.check("brindlewick-creek: the reading after the silence is flagged gap", flagged == gaps,
            f"flagged {flagged}, want {gaps}")

    # Bad lines: a site id that is not configured, and a time that does not exist (hour 25).
    ids = {s["id"] for s in config["sites"]}
    bad = []
    for site_rows in rows.values():
        for site, time_text, _ in site_rows:
            if site not in ids:
                bad.append("unknown_site")
            else:
                try:
                    demo.ms_of(time_text)
                except ValueError:
                    bad.append("bad_time")
    R.check("the history plants two bad lines (set-up)",
            sorted(bad) == ["bad_time", "unknown_site"], bad)
    kinds = sorted(k for (k,) in ds.query(db, "SELECT kind FROM rejects"))
    R.check("the bad lines are kept in rejects, by kind", kinds == sorted(bad),
            f"rejects {kinds}, want {sorted(bad)}")


if __name__ == "__main__":
    main()
