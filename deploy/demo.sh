#!/usr/bin/env bash
# One command from a fresh Debian 12 machine to the running demo: installs what is missing
# (apt-get, needs root or sudo), builds, and runs the service stagewelld on the demo configuration
# (config/demo.yaml) with the demo's invented stage history and a live logger feed.
# Stop it with Ctrl-C. DEMO_SECONDS=N stops it by itself after N seconds (360 sees the storm's
# first alarms open, and the raceway's clear).
set -euo pipefail
cd "$(dirname "$0")/.."
deploy/setup.sh
deploy/build.sh

bin=build/daemon
config=config/demo.yaml
demo=var/demo
database=$demo/stagewell.db

# A fresh demo every time, in the present: its fortnight of history ends now
# (deploy/make_demo_data.py history, dropped into the incoming folder), and from now on stand-in
# loggers append a reading of every site every 10 seconds to the files the service follows
# (make_demo_data.py live), with the storm that arrives in the first minutes.
rm -rf "$demo"
mkdir -p "$demo/incoming" "$demo/logger"
start=$(date -u +%Y-%m-%dT%H:%M:%SZ)
python3 deploy/make_demo_data.py history --now "$start" --out "$demo/incoming" \
  --gaugings "$demo/gaugings.csv"
touch -d '-1 minute' "$demo"/incoming/*.csv   # settled: the service leaves files being written alone

"$bin/stagewell" check --config "$config" >/dev/null

"$bin/stagewelld" --config "$config" &
daemon=$!
feeder=""
trap 'kill $feeder 2>/dev/null || true; kill -TERM $daemon 2>/dev/null || true; wait $daemon 2>/dev/null || true' EXIT
trap 'exit 0' INT TERM

# The live feed starts once the history is in (its files moved to incoming/done/), so that the
# history does not arrive after the live readings and count as late. Readings due meanwhile are
# written at once.
for _ in $(seq 120); do
  compgen -G "$demo/incoming/*.csv" >/dev/null || break
  kill -0 $daemon 2>/dev/null || { echo "stagewelld stopped; see $demo/stagewell.log" >&2; exit 1; }
  sleep 0.5
done
python3 deploy/make_demo_data.py live --logger-dir "$demo/logger" --start "$start" &
feeder=$!
cat <<EOM

== stagewelld is running on $config (pid $daemon); Ctrl-C stops it.
   status page: http://127.0.0.1:8207/   (API: /api/sites, metrics: /metrics)
   database:  $(realpath "$database")
   log:       $(realpath "$demo")/stagewell.log
   drop CSV files (site,time,stage) into $(realpath "$demo/incoming")

   The history ends now ($start); from now on every site reports every 10 s
   and a storm arrives. Roughly how long after the start (README.md, "The demo"):
     0          Brindlewick Creek has been rising for 12 minutes: rain in the hills
     1 min      the roadside ditch runs (the culvert from 1.5 min); raceway A is drawn down
     1-2.5 min  the creek's rising-stage alarm opens (faster than 0.5 m/h across an hour)
     3.5 min    raceway A's low-flow alarm opens (below 0.5 m³/s for 2 minutes)
     4.5 min    the culvert runs full, past its crown, for about 4 minutes
     5 min      raceway A is refilled: its low-flow alarm clears
     28 min     the creek crests at about 2.6 m, over both banks (its alarm clears at ~68 min)

   Try, in another terminal (read-only, while the service writes):
     sqlite3 -readonly $database "SELECT site, count(*), round(max(discharge), 3) AS peak_m3_s FROM discharge GROUP BY site;"
     sqlite3 -readonly $database "SELECT time, stage, discharge, flags FROM discharge WHERE site = 'raceway-a' ORDER BY unix_time DESC LIMIT 5;"
     sqlite3 -readonly $database "SELECT position, reason FROM rejects;"
     sqlite3 -readonly $database "SELECT site, kind, raised, cleared, value, threshold FROM alarms;"
     sqlite3 -readonly $database "SELECT site, flags, count(*) FROM discharge WHERE flags != '' GROUP BY 1, 2;"
     $bin/stagewell flow --config $config --site brindlewick-creek --stage 2.6
     $bin/stagewell gaugings import --config $config $demo/gaugings.csv
     $bin/stagewell calibrate --config $config --site feeder-canal

   Discharge here is an estimate from Manning's equation: verify it with field measurements.
EOM
if [[ -n "${DEMO_SECONDS:-}" ]]; then
  sleep "$DEMO_SECONDS"
  exit 0
fi
wait $daemon
