#!/usr/bin/env bash
# A private Redis for Cellwright's job queues: never the system service, always bound to loopback.
#   scripts/redis.sh ensure   install Debian's redis-server when it is missing
#   scripts/redis.sh start    start the instance in REDIS_DIR and wait until it answers PING
#   scripts/redis.sh stop     stop the instance started from REDIS_DIR (SIGTERM, wait)
#   scripts/redis.sh status   exit 0 when the instance (or REDIS_URL's server) answers
# Environment (defaults in brackets): REDIS_DIR [data/redis], REDIS_PORT [6407]. When REDIS_URL is set the studio
# uses that server and this script starts and stops nothing.
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
REDIS_DIR="${REDIS_DIR:-$here/data/redis}"
REDIS_PORT="${REDIS_PORT:-6407}"
REDIS_URL="${REDIS_URL:-}"
pidfile="$REDIS_DIR/redis.pid"
logfile="$REDIS_DIR/redis.log"

say() { echo "[redis] $*" >&2; }

ensure() {
  if command -v redis-server >/dev/null 2>&1 && command -v redis-cli >/dev/null 2>&1; then return 0; fi
  say "installing Debian's Redis server (redis-server, which brings redis-cli)"
  export DEBIAN_FRONTEND=noninteractive
  local sudo=""
  if [ "$(id -u)" != 0 ]; then sudo="sudo"; fi
  $sudo apt-get update -qq >/dev/null || true
  $sudo apt-get install -y -qq --no-install-recommends redis-server >/dev/null
}

ping() { [ "$(redis-cli -h 127.0.0.1 -p "$REDIS_PORT" ping 2>/dev/null)" = PONG ]; }

running() {
  [ -f "$pidfile" ] && kill -0 "$(cat "$pidfile")" 2>/dev/null && ping
}

start() {
  if [ -n "$REDIS_URL" ]; then say "REDIS_URL is set: using that server, starting none"; return 0; fi
  # 6379 is the port of a system Redis; sharing it would mix the studio's queues with whatever else uses it.
  if [ "$REDIS_PORT" = 6379 ]; then say "REDIS_PORT=6379 is the system Redis's port; choose another"; exit 1; fi
  ensure
  # The queues' data (job ids, workers' partial results) is the owner's only, like the rest of DATA_DIR's secrets.
  mkdir -p -m 700 "$REDIS_DIR"
  if running; then say "already running on 127.0.0.1:$REDIS_PORT"; return 0; fi
  rm -f "$pidfile"
  # Append-only persistence and noeviction are what BullMQ's "Going to production" guide asks for: the queues'
  # keys must survive a restart and must never be evicted to make room.
  setsid redis-server --port "$REDIS_PORT" --bind 127.0.0.1 --dir "$REDIS_DIR" \
    --appendonly yes --maxmemory-policy noeviction --daemonize no \
    --pidfile "$pidfile" --logfile "$logfile" \
    </dev/null >/dev/null 2>&1 &
  local i
  for i in $(seq 1 300); do
    if [ -f "$pidfile" ] && ping; then break; fi
    sleep 0.1
  done
  if ! { [ -f "$pidfile" ] && ping; }; then say "Redis did not start; log follows"; tail -n 30 "$logfile" >&2 || true; exit 1; fi
  say "running on 127.0.0.1:$REDIS_PORT (pid $(cat "$pidfile"))"
}

stop() {
  if [ -n "$REDIS_URL" ]; then say "REDIS_URL is set: nothing of ours to stop"; return 0; fi
  if [ ! -f "$pidfile" ]; then say "not running"; return 0; fi
  local pid; pid="$(cat "$pidfile")"
  if kill -0 "$pid" 2>/dev/null; then
    # SIGTERM makes Redis flush the append-only file and exit on its own.
    kill -TERM "$pid"
    local i
    for i in $(seq 1 300); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
    if kill -0 "$pid" 2>/dev/null; then say "still running after 30 s; killing"; kill -KILL "$pid" || true; fi
  fi
  rm -f "$pidfile"
  say "stopped"
}

status() {
  if [ -n "$REDIS_URL" ]; then [ "$(redis-cli -u "$REDIS_URL" ping 2>/dev/null)" = PONG ]; return; fi
  running
}

case "${1:-}" in
  ensure) ensure ;;
  start) start ;;
  stop) stop ;;
  status) status ;;
  *) echo "usage: scripts/redis.sh ensure|start|stop|status" >&2; exit 2 ;;
esac
