#!/usr/bin/env bash
# Installs the built stagewell with `cmake --install`, then does what a package's postinst would:
# creates the service user and tells systemd about the unit. The files and where they go:
# docs/install.md (deploy/install.cmake has the rules).
#
#   deploy/build.sh && sudo deploy/install.sh [--build-dir DIR] [--prefix DIR] [--dry-run]
#
#   --build-dir DIR  the build directory (default: build/ beside deploy/)
#   --prefix DIR     the installation prefix (default: the build's CMAKE_INSTALL_PREFIX,
#                    /usr/local unless configured otherwise)
#   --dry-run        installs into a temporary directory, lists what would be installed, prints
#                    the other steps, and changes nothing on this machine
#
# With DESTDIR=/some/dir everything is installed under that directory (for packaging or a look)
# and neither a user nor systemd is touched. The configuration <sysconfdir>/stagewell/
# stagewell.yaml is installed only where there is none. It does not enable or start the service:
# the last lines it prints say how.
set -euo pipefail

here="$(cd "$(dirname "$0")" && pwd)"
build_dir="$(dirname "$here")/build"
prefix=""
dry_run=0
while [[ $# -gt 0 ]]; do
  case "$1" in
    --build-dir) build_dir="$(cd "$2" && pwd)"; shift 2 ;;
    --prefix) prefix="$2"; shift 2 ;;
    --dry-run) dry_run=1; shift ;;
    -h|--help) sed -n '2,20p' "$0"; exit 0 ;;
    *) echo "install.sh: unknown argument '$1' (see --help)" >&2; exit 2 ;;
  esac
done

for program in stagewell stagewelld; do
  if [[ ! -x "$build_dir/daemon/$program" ]]; then
    echo "install.sh: $build_dir/daemon/$program is not built; run deploy/build.sh first" >&2
    exit 1
  fi
done
cache_value() {  # the value of a variable in the build's CMakeCache.txt
  sed -n "s/^$1:[A-Z]*=//p" "$build_dir/CMakeCache.txt"
}
[[ -n "$prefix" ]] || prefix="$(cache_value CMAKE_INSTALL_PREFIX)"
sysusers_dir="$(cache_value STAGEWELL_SYSUSERS_DIR)"
[[ "$sysusers_dir" == /* ]] || sysusers_dir="$prefix/$sysusers_dir"
# Where the configuration goes: the rule of deploy/install.cmake.
sysconf_dir="$(cache_value CMAKE_INSTALL_SYSCONFDIR)"
if [[ "$prefix" == / || "$prefix" == /usr ]]; then
  config="/etc/stagewell/stagewell.yaml"
elif [[ "$prefix" == /opt/* ]]; then
  config="/etc${prefix%/}/stagewell/stagewell.yaml"
elif [[ "$sysconf_dir" == /* ]]; then
  config="$sysconf_dir/stagewell/stagewell.yaml"
else
  config="$prefix/$sysconf_dir/stagewell/stagewell.yaml"
fi
destdir="${DESTDIR:-}"

if [[ $dry_run -eq 1 ]]; then
  scratch="$(mktemp -d)"
  trap 'rm -rf "$scratch"' EXIT
  echo "dry run: nothing is changed. Would install:"
  DESTDIR="$scratch" cmake --install "$build_dir" --prefix "$prefix" >/dev/null
  (cd "$scratch" && find . -type f | sed 's|^\.|  |' | sort)
  if [[ -e "$destdir$config" ]]; then
    echo "except $config: it exists, and is kept"
  fi
  echo "then: systemd-sysusers $sysusers_dir/stagewell.conf   (creates user and group stagewell)"
  echo "then: systemctl daemon-reload                        (if systemd runs)"
  exit 0
fi
if [[ -z "$destdir" && $(id -u) -ne 0 ]]; then
  echo "install.sh: run as root (or with --dry-run, or DESTDIR=...)" >&2
  exit 1
fi

cmake --install "$build_dir" --prefix "$prefix"

if [[ -n "$destdir" ]]; then
  echo "DESTDIR set: no user created, systemd not told"
  exit 0
fi
if command -v systemd-sysusers >/dev/null; then
  echo "creating the user and group stagewell if missing: systemd-sysusers"
  systemd-sysusers "$sysusers_dir/stagewell.conf"
else
  echo "warning: no systemd-sysusers; create the system user stagewell by hand" >&2
fi
if [[ -d /run/systemd/system ]]; then
  systemctl daemon-reload
else
  echo "systemd is not running here: no daemon-reload"
fi

cat <<EOT

Next:
  edit the configuration (its example site is not a channel of yours) and check it:
    $prefix/bin/stagewell check --config $config
  systemctl enable --now stagewelld      # start now and at boot
  systemctl reload stagewelld            # after editing the configuration
  journalctl -u stagewelld -f            # the log
  usermod -aG stagewell <analyst>        # to read the database: sqlite3 -readonly ...
EOT
