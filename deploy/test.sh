#!/usr/bin/env bash
# One command from a fresh Debian 12 machine to a tested build: installs what is missing
# (apt-get, needs root or sudo), builds, and runs every test through ctest, in two builds:
#
#   build/        the normal build (GCC, RelWithDebInfo): every test.
#   build-check/  the checking build (clang-16, AddressSanitizer + UndefinedBehaviorSanitizer,
#                 any report fatal): the unit and end-to-end tests again, then each libFuzzer
#                 target under tests/fuzz for STAGEWELL_FUZZ_SECONDS (default 60).
#
# Usage: deploy/test.sh [--quick] [ctest options...]   --quick: the normal build only.
# ctest options (-R NAME, -L LABEL...) apply to both builds.
set -euo pipefail
cd "$(dirname "$0")/.."
quick=false
if [[ "${1:-}" == "--quick" ]]; then
  quick=true
  shift
fi
jobs="$(nproc)"

deploy/setup.sh --with-tests
deploy/build.sh
ctest --test-dir build --output-on-failure -j "$jobs" "$@"
if $quick; then exit 0; fi

echo "test: the checking build (sanitizers and fuzzing) in build-check/"
started=$SECONDS
CXX=clang++-16 cmake -S . -B build-check -G Ninja -DCMAKE_BUILD_TYPE=RelWithDebInfo \
  -DSTAGEWELL_SANITIZE=ON -DSTAGEWELL_FUZZ=ON -DSTAGEWELL_BENCH=OFF \
  -DSTAGEWELL_FUZZ_SECONDS="${STAGEWELL_FUZZ_SECONDS:-60}" >/dev/null
cmake --build build-check -j "$jobs"
echo "test: checking build made in $((SECONDS - started)) s"
ctest --test-dir build-check --output-on-failure -j "$jobs" -LE fuzz "$@"
# One fuzz target per core: each is one process that keeps its core busy.
ctest --test-dir build-check --output-on-failure -j "$jobs" -L fuzz "$@"
echo "test: checking build done in $((SECONDS - started)) s"
