#!/usr/bin/env bash
# A private MariaDB for Cellwright: never the system service, always bound to loopback.
#   scripts/db.sh ensure   install Debian's MariaDB server when mariadbd is missing
#   scripts/db.sh start    initialise (first time), start, wait, create database and app user
#   scripts/db.sh stop     stop the instance started from DB_DIR (SIGTERM, wait)
#   scripts/db.sh status   exit 0 when the instance answers
# Environment (defaults in brackets): DB_DIR [data/mariadb], DB_PORT [3407], DB_HOST [127.0.0.1],
# DB_NAME [cellwright], DB_USER [cellwright], DB_PASSWORD [cellwright-dev].
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
DB_DIR="${DB_DIR:-$here/data/mariadb}"
DB_PORT="${DB_PORT:-3407}"
DB_HOST="${DB_HOST:-127.0.0.1}"
DB_NAME="${DB_NAME:-cellwright}"
DB_USER="${DB_USER:-cellwright}"
DB_PASSWORD="${DB_PASSWORD:-cellwright-dev}"
datadir="$DB_DIR/data"
pidfile="$DB_DIR/mariadbd.pid"
logfile="$DB_DIR/mariadbd.log"
# Unix socket paths are limited to about 100 characters; fall back to /tmp when the folder is deep.
sock="$DB_DIR/mariadbd.sock"
if [ "${#sock}" -gt 96 ]; then sock="/tmp/cellwright-db-$DB_PORT.sock"; fi

say() { echo "[db] $*" >&2; }

ensure() {
  # mariadb-dump (for backups) comes with mariadb-client, not with the -core packages.
  if { command -v mariadbd >/dev/null 2>&1 || [ -x /usr/sbin/mariadbd ]; } && command -v mariadb-dump >/dev/null 2>&1; then return 0; fi
  say "installing Debian's MariaDB server (mariadb-server-core, mariadb-client-core, mariadb-client)"
  export DEBIAN_FRONTEND=noninteractive
  local sudo=""
  if [ "$(id -u)" != 0 ]; then sudo="sudo"; fi
  $sudo apt-get update -qq >/dev/null || true
  $sudo apt-get install -y -qq --no-install-recommends mariadb-server-core mariadb-client-core mariadb-client >/dev/null
}

mariadbd_bin() { command -v mariadbd 2>/dev/null || echo /usr/sbin/mariadbd; }

client() { mariadb --no-defaults --protocol=socket --socket="$sock" -uroot "$@"; }

running() {
  [ -f "$pidfile" ] && kill -0 "$(cat "$pidfile")" 2>/dev/null && client -e 'SELECT 1' >/dev/null 2>&1
}

start() {
  ensure
  mkdir -p "$DB_DIR"
  if running; then say "already running on $DB_HOST:$DB_PORT"; provision; return 0; fi
  if [ ! -d "$datadir/mysql" ]; then
    say "initialising $datadir"
    mkdir -p "$datadir"
    mariadb-install-db --no-defaults --datadir="$datadir" --auth-root-authentication-method=normal \
      --skip-test-db --user="$(id -un)" >"$DB_DIR/install.log" 2>&1 || { cat "$DB_DIR/install.log" >&2; exit 1; }
  fi
  rm -f "$sock"
  setsid "$(mariadbd_bin)" --no-defaults --datadir="$datadir" --socket="$sock" --port="$DB_PORT" \
    --bind-address="$DB_HOST" --user="$(id -un)" --pid-file="$pidfile" --log-error="$logfile" \
    --skip-name-resolve --character-set-server=utf8mb4 --collation-server=utf8mb4_unicode_ci \
    --max-connections=300 --innodb-buffer-pool-size=256M --max-allowed-packet=256M \
    </dev/null >/dev/null 2>&1 &
  local i
  for i in $(seq 1 300); do
    if [ -f "$pidfile" ] && client -e 'SELECT 1' >/dev/null 2>&1; then break; fi
    sleep 0.1
  done
  if ! client -e 'SELECT 1' >/dev/null 2>&1; then say "MariaDB did not start; log follows"; tail -n 30 "$logfile" >&2 || true; exit 1; fi
  say "running on $DB_HOST:$DB_PORT (pid $(cat "$pidfile"))"
  provision
}

# The app user may create and drop databases named after the app, which the tests use for fresh state.
provision() {
  local prefix="${DB_NAME%%_*}"
  client <<SQL
CREATE DATABASE IF NOT EXISTS \`$DB_NAME\` CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci;
CREATE USER IF NOT EXISTS '$DB_USER'@'127.0.0.1' IDENTIFIED BY '$DB_PASSWORD';
CREATE USER IF NOT EXISTS '$DB_USER'@'localhost' IDENTIFIED BY '$DB_PASSWORD';
ALTER USER '$DB_USER'@'127.0.0.1' IDENTIFIED BY '$DB_PASSWORD';
ALTER USER '$DB_USER'@'localhost' IDENTIFIED BY '$DB_PASSWORD';
GRANT ALL PRIVILEGES ON \`$DB_NAME\`.* TO '$DB_USER'@'127.0.0.1', '$DB_USER'@'localhost';
GRANT ALL PRIVILEGES ON \`${prefix}\\_%\`.* TO '$DB_USER'@'127.0.0.1', '$DB_USER'@'localhost';
FLUSH PRIVILEGES;
SQL
}

stop() {
  if [ ! -f "$pidfile" ]; then say "not running"; return 0; fi
  local pid; pid="$(cat "$pidfile")"
  if kill -0 "$pid" 2>/dev/null; then
    kill -TERM "$pid"
    local i
    for i in $(seq 1 300); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
    if kill -0 "$pid" 2>/dev/null; then say "still running after 30 s; killing"; kill -KILL "$pid" || true; fi
  fi
  rm -f "$pidfile"
  say "stopped"
}

case "${1:-}" in
  ensure) ensure ;;
  start) start ;;
  stop) stop ;;
  status) running ;;
  *) echo "usage: scripts/db.sh ensure|start|stop|status" >&2; exit 2 ;;
esac
