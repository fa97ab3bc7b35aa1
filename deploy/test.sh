#!/usr/bin/env bash
# One command from a fresh Debian 12 machine to a tested build: installs what is missing
# (apt-get, needs root or sudo), builds, and runs every test through ctest.
set -euo pipefail
cd "$(dirname "$0")/.."
deploy/setup.sh --with-tests
deploy/build.sh
ctest --test-dir build --output-on-failure -j "$(nproc)" "$@"
