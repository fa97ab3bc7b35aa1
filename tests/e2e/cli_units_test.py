#!/usr/bin/env python3
"""Units on the command line: one spelling per kind of output, any case on input, --flow-units on
every command that prints flow, and tables in round steps.

- JSON, CSV headers: UCUM codes (The Unified Code for Units of Measure: m3/s, L/s, [ft_i],
  [gal_us]...); text for people: symbols (m³/s, ft³/s).
- Conversions checked by closed form from the unit definitions (1 L = 0.001 m^3; 1 US gallon =
  231 in^3 = 0.003785411784 m^3; 1 ft = 0.3048 m, the 1959 international foot), applied here to
  stagewell's own figure in the configuration's unit.
- A number typed with a decimal comma ("0,4") is refused with a hint to write "0.4", like the
  readings' parser does.
- A table in steps of 0.1 lists 0.3, not 0.30000000000000004 (the double nearest 0.3 printed in
  its shortest form, Python's repr: common practice for decimal steps).
"""
import csv
import io
import json
import os
import subprocess
import tempfile

import daily_support as ds

R = ds.Results()
L_M3 = 0.001
GAL_M3 = 231 * 0.0254 ** 3

CONFIG = """\
units: metric
database: db/stagewell.db
timezone: "+00:00"
sites:
  - id: flume
    section: {shape: rectangular, width: 1.2, height: 1.0}
    roughness: 0.015
    slope: 0.002
    stage: {units: cm}
    checks: {min_stage: 0, max_stage: 100, flatline: 0, max_gap: 2h}
"""


def run(cli, *args, expect=0):
    done = subprocess.run([cli, *map(str, args)], capture_output=True, text=True)
    R.check(f"stagewell {' '.join(map(str, args))}: exit {expect}", done.returncode == expect,
            f"exit {done.returncode}; stderr {done.stderr!r}")
    return done


def main():
    args = ds.parse_args()
    cli = os.path.join(os.path.abspath(args.bin_dir), "stagewell")
    with tempfile.TemporaryDirectory() as tmp:
        config = os.path.join(tmp, "stagewell.yaml")
        with open(config, "w") as f:
            f.write(CONFIG)
        base = ["--config", config, "--site", "flume"]

        # flow: the same discharge in L/s, typed in lower case; units as UCUM codes in JSON.
        m3 = json.loads(run(cli, "flow", *base, "--stage", 40, "--json").stdout)
        litres = json.loads(run(cli, "flow", *base, "--stage", 40, "--json",
                                "--flow-units", "l/s").stdout)
        R.close("flow --flow-units l/s: discharge in L/s", litres["discharge"],
                m3["discharge"] / L_M3)
        R.check("flow --json units are UCUM codes",
                m3["units"] == {"stage": "cm", "length": "m", "area": "m2", "velocity": "m/s",
                                "discharge": "m3/s"}, str(m3["units"]))
        R.check("flow --json --flow-units l/s: discharge unit L/s",
                litres["units"]["discharge"] == "L/s", str(litres["units"]))
        text = run(cli, "flow", *base, "--stage", 40, "--flow-units", "GAL/MIN").stdout
        R.check("flow text: US gal/min as a symbol", "US gal/min" in text, text)
        R.check("flow text: the caution", "estimate" in text and "field measurements" in text, text)

        # depth: --flow in L/s answers in L/s and finds the same depths as the same flow in m3/s.
        q = m3["discharge"]
        by_m3 = json.loads(run(cli, "depth", *base, "--flow", repr(q), "--json").stdout)
        by_l = json.loads(run(cli, "depth", *base, "--flow", repr(q / L_M3), "--flow-units",
                              "L/s", "--json").stdout)
        R.close("depth --flow-units L/s: same normal depth", by_l["normal_depth"],
                by_m3["normal_depth"])
        R.close("depth --flow-units L/s: discharge answered in L/s", by_l["discharge"], q / L_M3)
        R.check("depth --flow-units L/s: unit L/s", by_l["units"]["discharge"] == "L/s",
                str(by_l["units"]))
        R.close("depth: the normal depth of the flow at 40 cm is 0.40 m", by_m3["normal_depth"],
                0.40)
        text = run(cli, "depth", *base, "--flow", repr(q / L_M3), "--flow-units", "L/s").stdout
        R.check("depth text: discharge shown in L/s", "L/s" in text and "m³/s" not in text, text)

        # table: round steps, --flow-units, UCUM header.
        table = run(cli, "table", *base, "--from", 0, "--to", 1, "--step", 0.1, "--csv",
                    "--flow-units", "L/s").stdout
        rows = list(csv.reader(io.StringIO(table)))
        R.check("table --csv header: UCUM codes",
                rows[0][:4] == ["stage (cm)", "depth (m)", "discharge (L/s)", "velocity (m/s)"],
                str(rows[0]))
        stages = [r[0] for r in rows[1:]]
        R.check("table --step 0.1: stages 0, 0.1, ... 1 as the doubles nearest those decimals, "
                "printed short", len(stages) == 11 and all(
                    float(t) == i / 10 and len(t) <= 3 for i, t in enumerate(stages)), str(stages))
        for r in rows[1:]:
            if float(r[0]) > 0:
                one = json.loads(run(cli, "flow", *base, "--stage", r[0], "--json").stdout)
                R.close(f"table at {r[0]} cm in L/s", float(r[2]), one["discharge"] / L_M3)
        text = run(cli, "table", *base, "--flow-units", "cfs").stdout
        R.check("table text: ft³/s when asked by its abbreviation", "ft³/s" in text, text)
        bad = run(cli, "table", *base, "--flow-units", "furlongs", expect=2)
        R.check("an unknown unit names the choices", "L/s" in bad.stderr and "gal/min" in
                bad.stderr, bad.stderr)

        # A decimal comma: refused (exit 2) with the fix named, on each number option.
        for command in (["flow", *base, "--stage", "0,4"], ["depth", *base, "--flow", "0,4"],
                        ["table", *base, "--step", "0,5"]):
            done = run(cli, *command, expect=2)
            fixed = command[-1].replace(",", ".")
            R.check(f"{command[0]} {command[-2]} {command[-1]}: the decimal point hint",
                    "decimal" in done.stderr and f"({fixed})" in done.stderr, done.stderr)
        done = run(cli, "flow", *base, "--stage", "high", expect=2)
        R.check("a word for a number: 'not a number'", "not a number" in done.stderr, done.stderr)

        # daily and stats: volumes in litres and US gallons, units as UCUM codes.
        readings = os.path.join(tmp, "flume.csv")
        with open(readings, "w") as f:
            f.write("site,time,stage\n")
            for i in range(0, 2 * 24 * 6 + 1):  # two days every 10 min, a steady 30 cm
                f.write(f"flume,{ds.rfc3339_ms(1_780_272_000_000 + i * 600_000)},30\n")
        run(cli, "ingest", "--config", config, readings)
        steady = json.loads(run(cli, "flow", *base, "--stage", 30, "--json").stdout)["discharge"]
        base += ["--from", "2026-06-01", "--to", "2026-06-01"]  # a whole day of readings
        in_m3 = json.loads(run(cli, "daily", *base, "--json").stdout)
        in_gal = json.loads(run(cli, "daily", *base, "--json", "--volume-units", "Gal",
                                "--flow-units", "gpm").stdout)
        R.check("daily --json: UCUM codes for asked units",
                (in_gal["volume_units"], in_gal["flow_units"]) == ("[gal_us]", "[gal_us]/min"),
                str((in_gal["volume_units"], in_gal["flow_units"])))
        R.check("daily --json: UCUM codes by default",
                (in_m3["volume_units"], in_m3["flow_units"]) == ("m3", "m3/s"))
        day = in_m3["days"][0]
        # Stored readings go through the site's rating table, within 0.05 % of the direct
        # formula `flow` uses (docs/hydraulics.md).
        R.close("daily: a steady day's volume is its flow times 86,400 s", day["volume"],
                steady * 86400, rel_tol=5e-4)
        R.close("daily: the same volume in US gallons", in_gal["days"][0]["volume"],
                day["volume"] / GAL_M3)
        in_l = json.loads(run(cli, "daily", *base, "--json", "--volume-units", "l").stdout)
        R.close("daily: the same volume in litres", in_l["days"][0]["volume"], day["volume"] / L_M3)
        header = run(cli, "daily", *base, "--csv", "--volume-units", "ML").stdout.splitlines()[0]
        R.check("daily --csv header: UCUM codes",
                header.startswith("day,volume (ML),mean_discharge (m3/s),"), header)
        stats = json.loads(run(cli, "stats", *base, "--json", "--flow-units", "mgd",
                               "--volume-units", "acre-ft").stdout)
        R.check("stats --json: UCUM codes",
                (stats["flow_units"], stats["volume_units"]) ==
                ("10*6.[gal_us]/d", "43560.[ft_i]3"),
                str((stats["flow_units"], stats["volume_units"])))
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
