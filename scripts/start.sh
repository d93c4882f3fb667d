#!/usr/bin/env bash
# `npm start`: install what is missing, start MariaDB and Redis (and, inside the server, the fake SMTP server)
# on loopback, migrate, seed, build and serve the studio. Ctrl-C or SIGTERM stops everything it started.
# With REDIS_URL set, that Redis is used and none is started.
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$root"
dev=0
[ "${1:-}" = "--dev" ] && dev=1

bash scripts/ensure-deps.sh
export DATA_DIR="${DATA_DIR:-$root/data}"
export DB_DIR="${DB_DIR:-$DATA_DIR/mariadb}"
export REDIS_DIR="${REDIS_DIR:-$DATA_DIR/redis}"
mkdir -p "$DATA_DIR"

started_db=0
started_redis=0
server_pid=""
vite_pid=""
cleanup() {
  trap - EXIT INT TERM
  [ -n "$vite_pid" ] && kill -TERM "$vite_pid" 2>/dev/null || true
  if [ -n "$server_pid" ] && kill -0 "$server_pid" 2>/dev/null; then
    kill -TERM "$server_pid" 2>/dev/null || true
    wait "$server_pid" 2>/dev/null || true
  fi
  if [ "$started_redis" = 1 ]; then bash scripts/redis.sh stop || true; fi
  if [ "$started_db" = 1 ]; then bash scripts/db.sh stop || true; fi
}
trap cleanup EXIT
trap 'exit 130' INT
trap 'exit 143' TERM

if ! bash scripts/db.sh status 2>/dev/null; then started_db=1; fi
bash scripts/db.sh start
if [ -z "${REDIS_URL:-}" ] && ! bash scripts/redis.sh status 2>/dev/null; then started_redis=1; fi
bash scripts/redis.sh start
# The compute workers' token ($DATA_DIR/secrets/worker-token, made once) and how to start a worker.
node --import tsx scripts/worker-token.ts

if [ "$dev" = 1 ]; then
  export NODE_ENV=development SERVE_CLIENT=false
  # The browser talks to Vite (vite.config.ts: 127.0.0.1:5173), which proxies /api: that page's origin must be allowed.
  export ALLOWED_ORIGINS="${ALLOWED_ORIGINS:-http://127.0.0.1:5173}"
  node --import tsx server/index.ts &
  server_pid=$!
  npx vite &
  vite_pid=$!
else
  echo "[start] building the client" >&2
  npx vite build --logLevel warn
  export NODE_ENV=production
  node --import tsx server/index.ts &
  server_pid=$!
fi
wait "$server_pid"
