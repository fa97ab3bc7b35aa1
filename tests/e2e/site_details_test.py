#!/usr/bin/env python3
"""The database states its own units and takes time ranges on its key, read by outside tools:
pandas (Debian's python3-pandas, read_sql over Python's sqlite3) and the sqlite3 shell.

- site_details: one row per configured site, kept current from the configuration (a site removed
  from it disappears, a renamed one shows its new name); units as UCUM codes (The Unified Code
  for Units of Measure: m, cm, [ft_i], m3/s, [ft_i]3/s, m3, [ft_i]3); location and datum as
  configured, NULL where not.
- discharge.time_ms: the reading's instant in integer ms, equal to unix_time * 1000; a range on it
  selects the same rows as the same range on unix_time.
- rejects.kind: one group per kind of problem, where grouping by reason gives one per line.
"""
import os
import sqlite3
import subprocess
import tempfile

import pandas

import daemon_support as ds

R = ds.Results()
T0 = 1_777_593_600_000  # 2026-05-01T00:00:00Z in ms (Python datetime)
MIN = 60_000


def config(units, sites):
    return f"units: {units}\ndatabase: db/stagewell.db\ntimezone: \"-07:00\"\nsites:\n" + sites


METRIC_SITES = """\
  - id: race-1
    name: Raceway one
    location: {latitude: 45.25, longitude: -111.5}
    datum: sill of the outlet, survey of 2025
    section: {shape: rectangular, width: 2.0, height: 1.5}
    roughness: 0.014
    slope: 0.001
    stage: {units: cm}
  - id: ditch-2
    section: {shape: triangular, side_slope: 2, height: 1.0}
    roughness: 0.03
    slope: 0.004
"""


def ingest(stagewell, config_path, csv_path):
    return subprocess.run([stagewell, "ingest", "--config", config_path, "--quiet", csv_path],
                          capture_output=True, text=True, timeout=120)


def main():
    args = ds.parse_args()
    _, stagewell = ds.programs(args)
    with tempfile.TemporaryDirectory() as root:
        config_path = os.path.join(root, "config.yaml")
        ds.write(config_path, config("metric", METRIC_SITES))
        csv_path = os.path.join(root, "in.csv")
        lines = ["site,time,stage"]
        for i in range(120):
            lines.append(f"race-1,{ds.iso(T0 + i * MIN)},{40 + (i % 7)}")
            lines.append(f"ditch-2,{ds.iso(T0 + i * MIN)},{0.2 + 0.001 * i}")
        lines += ["race-1,not-a-time,40", "race-1,yesterday,41", "race-1,2026-05-01T05:00:00Z,x",
                  "nowhere,2026-05-01T05:00:00Z,1"]
        ds.write(csv_path, "\n".join(lines) + "\n")
        run = ingest(stagewell, config_path, csv_path)
        R.check("ingest runs", run.returncode in (0, 1), run.stdout + run.stderr)
        db = os.path.join(root, "db", "stagewell.db")

        con = sqlite3.connect(db)
        details = pandas.read_sql("SELECT * FROM site_details ORDER BY site", con)
        R.check("one row per configured site", list(details["site"]) == ["ditch-2", "race-1"],
                details.to_string())
        race = details[details["site"] == "race-1"].iloc[0]
        ditch = details[details["site"] == "ditch-2"].iloc[0]
        R.check("stage unit as configured, UCUM", race["stage_unit"] == "cm"
                and ditch["stage_unit"] == "m", details.to_string())
        R.check("metric units, UCUM", (race["length_unit"], race["discharge_unit"],
                                      race["volume_unit"]) == ("m", "m3/s", "m3"),
                details.to_string())
        R.check("name, time zone", race["name"] == "Raceway one" and ditch["name"] == "ditch-2"
                and race["time_zone"] == "-07:00", details.to_string())
        R.check("location and datum as configured", race["latitude"] == 45.25
                and race["longitude"] == -111.5
                and race["datum"] == "sill of the outlet, survey of 2025", details.to_string())
        R.check("NULL where not configured", pandas.isna(ditch["latitude"])
                and pandas.isna(ditch["longitude"]) and ditch["datum"] is None,
                details.to_string())

        frame = pandas.read_sql("SELECT unix_time, time_ms FROM discharge", con)
        R.check("time_ms is an integer column", str(frame["time_ms"].dtype) == "int64",
                str(frame.dtypes))
        R.check("time_ms = unix_time * 1000", ((frame["unix_time"] * 1000).round().astype("int64")
                                               == frame["time_ms"]).all())
        lo, hi = T0 + 10 * MIN, T0 + 19 * MIN
        by_ms = con.execute("SELECT count(*) FROM discharge WHERE site = 'race-1' AND time_ms "
                            "BETWEEN ? AND ?", (lo, hi)).fetchone()[0]
        by_s = con.execute("SELECT count(*) FROM discharge WHERE site = 'race-1' AND unix_time "
                           "BETWEEN ? AND ?", (lo / 1000, hi / 1000)).fetchone()[0]
        R.check("a range on time_ms selects what the same range on unix_time does",
                by_ms == by_s == 10, f"{by_ms} vs {by_s}")
        kinds = dict(con.execute("SELECT kind, count(*) FROM rejects GROUP BY kind").fetchall())
        R.check("rejects grouped by kind", kinds == {"bad_time": 2, "bad_stage": 1,
                                                     "unknown_site": 1}, str(kinds))
        reasons = con.execute("SELECT count(DISTINCT reason) FROM rejects").fetchone()[0]
        R.check("... where reasons are one per line", reasons == 4, str(reasons))
        con.close()

        shell = subprocess.run(["sqlite3", "-csv", db, "SELECT site, discharge_unit, latitude "
                                "FROM site_details ORDER BY site"], capture_output=True,
                               text=True, timeout=30)
        R.check("the sqlite3 shell reads site_details", shell.returncode == 0
                and shell.stdout.splitlines() == ["ditch-2,m3/s,", "race-1,m3/s,45.25"],
                shell.stdout + shell.stderr)

        # Kept current: ditch-2 removed, race-1 renamed; the next run that opens the database.
        ds.write(config_path, config("metric", METRIC_SITES.split("  - id: ditch-2")[0].replace(
            "Raceway one", "Raceway one (rebuilt)")))
        ds.write(csv_path, "site,time,stage\n")
        run = ingest(stagewell, config_path, csv_path)
        rows = ds.query(db, "SELECT site, name FROM site_details")
        R.check("kept current from the configuration", rows == [("race-1", "Raceway one (rebuilt)")],
                str(rows) + run.stderr)

        # US customary units: feet, cubic feet (UCUM's international foot).
        us_root = os.path.join(root, "us")
        os.makedirs(us_root)
        us_config = os.path.join(us_root, "config.yaml")
        ds.write(us_config, config("us", """\
  - id: canal-3
    section: {shape: rectangular, width: 6.0, height: 4.0}
    roughness: 0.014
    slope: 0.001
    stage: {units: in}
"""))
        ds.write(csv_path, f"site,time,stage\ncanal-3,{ds.iso(T0)},12\n")
        ingest(stagewell, us_config, csv_path)
        rows = ds.query(os.path.join(us_root, "db", "stagewell.db"),
                        "SELECT stage_unit, length_unit, discharge_unit, volume_unit "
                        "FROM site_details")
        R.check("US customary units, UCUM", rows == [("[in_i]", "[ft_i]", "[ft_i]3/s",
                                                      "[ft_i]3")], str(rows))
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
