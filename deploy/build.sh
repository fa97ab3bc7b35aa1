#!/usr/bin/env bash
# Configures and builds stagewell in ./build (Release with debug info). Used by demo.sh and test.sh.
set -euo pipefail
cd "$(dirname "$0")/.."
build_type="${STAGEWELL_BUILD_TYPE:-RelWithDebInfo}"
cmake -S . -B build -G Ninja -DCMAKE_BUILD_TYPE="$build_type" >/dev/null
cmake --build build -j "$(nproc)"
