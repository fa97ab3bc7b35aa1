#!/usr/bin/env bash
# One command from a fresh Debian 12 machine to the running demo: installs what is missing
# (apt-get, needs root or sudo), builds, and runs the service stagewelld on the demo configuration
# (config/demo.yaml) with the demo's invented stage history and a live logger feed.
# Stop it with Ctrl-C. DEMO_SECONDS=N stops it by itself after N seconds.
set -euo pipefail
cd "$(dirname "$0")/.."
deploy/setup.sh
deploy/build.sh

bin=build/daemon
config=config/demo.yaml
demo=var/demo
database=$demo/stagewell.db

# A fresh demo every time: the fortnight of history up to now (deploy/make_demo_data.py) is dropped
# into the incoming folder, and a stand-in logger appends one raceway reading every 5 seconds to
# the file the service follows.
rm -rf "$demo"
mkdir -p "$demo/incoming" "$demo/logger"
python3 deploy/make_demo_data.py history --out "$demo/incoming"
touch -d '-1 minute' "$demo"/incoming/*.csv   # settled: the service leaves files being written alone

"$bin/stagewell" check --config "$config" >/dev/null

feed_logger() {
  local file=$demo/logger/raceway-a.csv
  local level=4520   # tenths of a millimetre: a slow random walk around 0.452 m
  echo "time,stage" > "$file"
  while true; do
    level=$((level + RANDOM % 3 - 1))
    # Local standard time (UTC-07:00, the source's time_zone), no offset written, like the logger.
    printf '%s,0.%04d\n' "$(TZ=Etc/GMT+7 date +%Y-%m-%dT%H:%M:%S)" "$level" >> "$file"
    sleep 5
  done
}
"$bin/stagewelld" --config "$config" &
daemon=$!
feeder=""
trap 'kill $feeder 2>/dev/null || true; kill -TERM $daemon 2>/dev/null || true; wait $daemon 2>/dev/null || true' EXIT
trap 'exit 0' INT TERM

# The live feed starts once the history is in, so that history does not arrive "late".
sleep 3
feed_logger &
feeder=$!
cat <<EOM

== stagewelld is running on $config (pid $daemon); Ctrl-C stops it.
   status page: http://127.0.0.1:8207/   (API: /api/sites, metrics: /metrics)
   database:  $(realpath "$database")
   log:       $(realpath "$demo")/stagewell.log
   drop CSV files (site,time,stage) into $(realpath "$demo/incoming")

   Try, in another terminal (read-only, while the service writes):
     sqlite3 -readonly $database "SELECT site, count(*), round(max(discharge), 3) AS peak_m3_s FROM discharge GROUP BY site;"
     sqlite3 -readonly $database "SELECT time, stage, discharge, flags FROM discharge WHERE site = 'raceway-a' ORDER BY unix_time DESC LIMIT 5;"
     sqlite3 -readonly $database "SELECT position, reason FROM rejects;"
     sqlite3 -readonly $database "SELECT site, kind, raised, cleared, value, threshold FROM alarms;"
     $bin/stagewell flow --config $config --site brindlewick-creek --stage 2.6

   Discharge here is an estimate from Manning's equation: verify it with field measurements.
EOM
if [[ -n "${DEMO_SECONDS:-}" ]]; then
  sleep "$DEMO_SECONDS"
  exit 0
fi
wait $daemon
