#!/usr/bin/env bash
# Installs, with apt-get, the Debian 12 packages stagewell needs to build, test and run.
# Idempotent: only packages that are missing are installed; a machine that has them all is left alone.
# Run as root (or with sudo). Usage: deploy/setup.sh [--with-tests]
set -euo pipefail

build_packages=(
  g++ cmake ninja-build pkg-config
  libboost-dev            # Debian default Boost 1.74: Asio and Beast, header-only (see DEVELOPERS.md)
  libsqlite3-dev sqlite3  # the store and the analyst's shell
  libspdlog-dev libfmt-dev
  libyaml-cpp-dev
  libcli11-dev            # command-line parsing
  nlohmann-json3-dev      # JSON output
  libcctz-dev             # IANA time zones
  libpq-dev               # PostgreSQL's client library: shipping to the warehouse
  python3                 # the demo's readings (deploy/make_demo_data.py)
)
test_packages=(
  doctest-dev
  libbenchmark-dev
  python3-pandas python3-scipy   # independent references for the statistics tests
  python3-prometheus-client      # an independent reader of the metrics
  chromium chromium-driver       # a real browser for the status page test (headless)
  fonts-dejavu-core              # so that its screenshot shows text
  clang-16 libclang-rt-16-dev    # the checking build: sanitizers and libFuzzer (deploy/test.sh)
  dpkg-dev                       # dpkg-shlibdeps: the Debian package's Depends (package_test)
  groff-base python3-yaml        # package_test: renders the manual pages, reads demo.yaml
  postgresql python3-psycopg2    # a real warehouse server for the warehouse tests, and a client
)
# Node.js and npm install the UCUM reference library that checks the unit codes
# (tests/tools/ucum); Debian's packages unless the machine has them already from elsewhere.
node_packages=(nodejs npm)

wanted=("${build_packages[@]}")
if [[ "${1:-}" == "--with-tests" ]]; then
  wanted+=("${test_packages[@]}")
fi

if [[ "${1:-}" == "--with-tests" ]]; then
  for tool in "${node_packages[@]}"; do
    if ! command -v "$tool" >/dev/null 2>&1 && ! command -v "${tool%js}" >/dev/null 2>&1; then
      wanted+=("$tool")
    fi
  done
fi

missing=()
for pkg in "${wanted[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$pkg" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$pkg")
  fi
done

if ((${#missing[@]} == 0)); then
  echo "setup: all ${#wanted[@]} packages already installed"
else
  SUDO=""
  if [[ $(id -u) -ne 0 ]]; then SUDO="sudo"; fi
  echo "setup: installing ${missing[*]}"
  export DEBIAN_FRONTEND=noninteractive
  $SUDO apt-get update -q
  $SUDO apt-get install -y -q --no-install-recommends "${missing[@]}"
fi

# The UCUM reference library, at the version package-lock.json pins, from the npm registry.
if [[ "${1:-}" == "--with-tests" ]]; then
  ucum_tool="$(dirname "$0")/../tests/tools/ucum"
  if [[ ! -d "$ucum_tool/node_modules/@lhncbc/ucum-lhc" ]]; then
    echo "setup: installing the test tool in tests/tools/ucum (npm ci)"
    npm ci --prefix "$ucum_tool" --no-audit --no-fund --loglevel=error
  fi
fi
