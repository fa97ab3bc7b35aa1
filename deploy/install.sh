#!/usr/bin/env bash
# Installs the built stagewell programs and the systemd unit of the service.
#
#   deploy/build.sh && sudo deploy/install.sh [--build-dir DIR] [--prefix DIR] [--dry-run]
#
# What it does, each step printed as it is done:
#   - copies build/daemon/stagewell and build/daemon/stagewelld to <prefix>/bin (/usr/local/bin);
#   - creates the system user and group `stagewell` (no login, home /var/lib/stagewell);
#   - creates /etc/stagewell and puts there reference.yaml (every key, documented) and
#     stagewell.yaml.example (a start with this layout's paths);
#   - installs deploy/stagewelld.service as /etc/systemd/system/stagewelld.service and tells
#     systemd (daemon-reload).
# It does not write /etc/stagewell/stagewell.yaml, and does not enable or start the service: the
# last lines it prints say how.
#
# Idempotent: a file already up to date is left alone ("unchanged"), an existing user is kept, and
# running it again after a rebuild updates only the programs. With DESTDIR=/some/dir everything is
# installed under that directory instead (for packaging or a look), and no user is created.
set -euo pipefail

here="$(cd "$(dirname "$0")" && pwd)"
source_dir="$(dirname "$here")"
build_dir="$source_dir/build"
prefix="/usr/local"
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
destdir="${DESTDIR:-}"
bin_dir="$prefix/bin"
unit_path="/etc/systemd/system/stagewelld.service"

say() { printf '%s\n' "$*"; }
run() {  # prints a command, and runs it unless --dry-run
  say "  \$ $(printf '%q ' "$@")"
  if [[ $dry_run -eq 0 ]]; then "$@"; fi
}

# Installs $1 as $2 with mode $3, unless the installed file is already identical.
install_file() {
  local from="$1" to="$destdir$2" mode="$3"
  if [[ -f "$to" ]] && cmp -s "$from" "$to"; then
    say "unchanged: $2"
    return 1
  fi
  say "installing $2"
  run install -D -m "$mode" "$from" "$to"
  return 0
}

for program in stagewell stagewelld; do
  if [[ ! -x "$build_dir/daemon/$program" ]]; then
    echo "install.sh: $build_dir/daemon/$program is not built; run deploy/build.sh first" >&2
    exit 1
  fi
done
if [[ $dry_run -eq 0 && -z "$destdir" && $(id -u) -ne 0 ]]; then
  echo "install.sh: run as root (or with --dry-run, or DESTDIR=...)" >&2
  exit 1
fi
[[ $dry_run -eq 1 ]] && say "dry run: nothing is changed"

# 1. The programs.
for program in stagewell stagewelld; do
  install_file "$build_dir/daemon/$program" "$bin_dir/$program" 0755 || true
done
# They link Debian's shared libraries (deploy/setup.sh installs them); say if one is missing.
if missing=$(ldd "$build_dir/daemon/stagewelld" | grep 'not found'); then
  say "warning: libraries not found (run deploy/setup.sh):"
  say "$missing"
fi

# 2. The service user.
if [[ -n "$destdir" ]]; then
  say "DESTDIR set: no user created (the unit runs as user stagewell)"
elif id -u stagewell >/dev/null 2>&1; then
  say "unchanged: user stagewell exists"
else
  say "creating system user and group stagewell"
  run useradd --system --user-group --home-dir /var/lib/stagewell --no-create-home \
    --shell /usr/sbin/nologin --comment "stagewell service" stagewell
fi

# 3. The configuration directory: the reference and an example; the real file is the operator's.
if [[ ! -d "$destdir/etc/stagewell" ]]; then
  say "creating /etc/stagewell"
  run install -d -m 0755 "$destdir/etc/stagewell"
else
  say "unchanged: /etc/stagewell exists"
fi
install_file "$source_dir/config/reference.yaml" /etc/stagewell/reference.yaml 0644 || true
example="$(mktemp)"
trap 'rm -f "$example"' EXIT
cat >"$example" <<'EOF'
# A start for /etc/stagewell/stagewell.yaml with the paths the systemd unit allows the service to
# write (/var/lib/stagewell and /var/log/stagewell). Every key: /etc/stagewell/reference.yaml.
# Check it with: stagewell check --config /etc/stagewell/stagewell.yaml
units: metric
database: /var/lib/stagewell/stagewell.db
timezone: UTC
log:
  file: /var/log/stagewell/stagewelld.log
  level: info
sources:
  - type: directory            # drop CSV files here; each is read once, then moved to done/
    path: /var/lib/stagewell/incoming
sites:
  # An example only: describe your own sections.
  - id: example-channel
    section: {shape: rectangular, width: 2.0, height: 1.0}
    roughness: 0.014
    slope: 0.001
EOF
install_file "$example" /etc/stagewell/stagewell.yaml.example 0644 || true

# 4. The unit, with the programs' real location.
unit="$(mktemp)"
trap 'rm -f "$example" "$unit"' EXIT
sed "s|/usr/local/bin/|$bin_dir/|g" "$here/stagewelld.service" >"$unit"
if install_file "$unit" "$unit_path" 0644; then
  if [[ -z "$destdir" && -d /run/systemd/system ]]; then
    run systemctl daemon-reload
  else
    say "systemd is not running here: no daemon-reload"
  fi
fi

say ""
say "Next:"
if [[ ! -f "$destdir/etc/stagewell/stagewell.yaml" ]]; then
  say "  write /etc/stagewell/stagewell.yaml (start from stagewell.yaml.example) and check it:"
  say "    $bin_dir/stagewell check --config /etc/stagewell/stagewell.yaml"
fi
say "  systemctl enable --now stagewelld      # start now and at boot"
say "  systemctl reload stagewelld            # after editing the configuration"
say "  journalctl -u stagewelld -f            # the log"
say "  usermod -aG stagewell <analyst>        # to read the database: sqlite3 -readonly ..."
