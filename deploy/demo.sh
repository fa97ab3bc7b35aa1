#!/usr/bin/env bash
# One command from a fresh Debian 12 machine to the demo: installs what is missing (apt-get, needs
# root or sudo), builds, and runs stagewell on the demo configuration (config/demo.yaml).
set -euo pipefail
cd "$(dirname "$0")/.."
deploy/setup.sh
deploy/build.sh
bin=build/daemon
config=config/demo.yaml

echo
echo "== stagewell check --config $config"
"$bin/stagewell" check --config "$config"
echo
echo "== stagewell flow --config $config --site raceway-a --stage 0.45"
"$bin/stagewell" flow --config "$config" --site raceway-a --stage 0.45
echo
echo "== stagewell depth --config $config --site feeder-canal --flow 1.5"
"$bin/stagewell" depth --config "$config" --site feeder-canal --flow 1.5
echo
echo "== stagewell table --config $config --site storm-culvert"
"$bin/stagewell" table --config "$config" --site storm-culvert
