#!/usr/bin/env bash
# `npm run bench:<name>`: runs one benchmark script against a stack of its own, the way
# tests/run.sh does for the tests: a throwaway PostgreSQL cluster on free ports, the app built into
# its own dist folder, the web server, one job worker (with jemalloc, as `npm start` runs it) and
# the mail fake. The script gets the environment plus the pids of the server and the worker
# (DRAWERLIGHT_SERVER_PID, DRAWERLIGHT_WORKER_PID) for memory figures; everything is torn down after.
#   bash tests/bench/with-stack.sh tests/bench/<name>.ts [args...]
set -euo pipefail
root=$(cd "$(dirname "$0")/../.." && pwd)
source "$root/src/scripts/common.sh"
cd "$root"
script=${1:?usage: with-stack.sh <script.ts> [args...]}
shift

ensure_node_modules "$root"
ensure_debian_package libjemalloc2 /usr/lib/x86_64-linux-gnu/libjemalloc.so.2

throwaway_stack "$root" bench
export DRAWERLIGHT_BENCH_RUN="$run"

pids=()
cleanup() {
  for pid in "${pids[@]}"; do kill "$pid" 2>/dev/null || true; done
  for pid in "${pids[@]}"; do
    for _ in $(seq 1 100); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
    kill -9 "$pid" 2>/dev/null || true
  done
  KEEP_TEST_RUN="${KEEP_BENCH_RUN:-}" throwaway_cleanup "$root"
}
trap cleanup EXIT

wait_port() {
  local port=$1 what=$2
  for _ in $(seq 1 300); do
    if (exec 3<>"/dev/tcp/127.0.0.1/$port") 2>/dev/null; then return 0; fi
    sleep 0.2
  done
  echo "with-stack: $what did not come up on port $port (logs in $run/logs)" >&2
  exit 1
}

echo "with-stack: building the app ..." >&2
build_quietly
node --import tsx src/scripts/migrate.ts >"$run/logs/migrate.log" 2>&1 || { cat "$run/logs/migrate.log"; exit 1; }

node --import tsx src/scripts/mail-fake.ts >"$run/logs/mail-fake.log" 2>&1 &
pids+=($!)
NODE_ENV=production HOST=127.0.0.1 PORT="${APP_URL##*:}" node "$DRAWERLIGHT_OUT_DIR/server/entry.mjs" >"$run/logs/server.log" 2>&1 &
server_pid=$!
pids+=($server_pid)
# as `npm run worker` runs it, below the web server's priority (exec and nice both exec: the pid is the worker's own)
sh src/scripts/engine-env.sh nice -n 10 node --import tsx jobs/worker.ts >"$run/logs/worker.log" 2>&1 &
worker_pid=$!
pids+=($worker_pid)
wait_port "$SMTP_PORT" 'the mail fake'
wait_port "${APP_URL##*:}" 'the web server'

export DRAWERLIGHT_SERVER_PID=$server_pid
export DRAWERLIGHT_WORKER_PID=$worker_pid
echo "with-stack: server pid $server_pid, worker pid $worker_pid; running $script" >&2
node --import tsx "$script" "$@"
