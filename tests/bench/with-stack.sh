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

run=$(mktemp -d /tmp/drawerlight-bench.XXXXXX)
chmod 755 "$run"
read -r pg_port app_port smtp_port <<<"$(node -e '
  const net = require("net");
  const take = () => new Promise((r) => { const s = net.createServer(); s.listen(0, "127.0.0.1", () => { const p = s.address().port; s.close(() => r(p)); }); });
  Promise.all([take(), take(), take()]).then((p) => console.log(p.join(" ")));')"

pids=()
cleanup() {
  for pid in "${pids[@]}"; do kill "$pid" 2>/dev/null || true; done
  for pid in "${pids[@]}"; do
    for _ in $(seq 1 100); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
    kill -9 "$pid" 2>/dev/null || true
  done
  bash "$root/db/cluster.sh" stop "$run/pg" >/dev/null 2>&1 || true
  if [ -z "${KEEP_BENCH_RUN:-}" ]; then rm -rf "$run" "$root/dist/$(basename "$run")"; else echo "bench run kept in $run" >&2; fi
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

bash db/cluster.sh ensure "$run/pg" "$pg_port" drawerlight_bench throwaway >/dev/null
export APP_ENV=test
export DATABASE_URL="postgres://drawerlight@127.0.0.1:$pg_port/drawerlight_bench"
export APP_URL="http://127.0.0.1:$app_port"
export SMTP_PORT="$smtp_port"
export STORAGE_DIR="$run/storage"
export DRAWERLIGHT_BENCH_RUN="$run"
export DRAWERLIGHT_OUT_DIR="./dist/$(basename "$run")"
mkdir -p "$STORAGE_DIR" "$run/logs"

echo "with-stack: building the app ..." >&2
npx astro build >"$run/logs/build.log" 2>&1 || { cat "$run/logs/build.log"; exit 1; }
node --import tsx src/scripts/migrate.ts >"$run/logs/migrate.log" 2>&1 || { cat "$run/logs/migrate.log"; exit 1; }

node --import tsx src/scripts/mail-fake.ts >"$run/logs/mail-fake.log" 2>&1 &
pids+=($!)
HOST=127.0.0.1 PORT="$app_port" node "$DRAWERLIGHT_OUT_DIR/server/entry.mjs" >"$run/logs/server.log" 2>&1 &
server_pid=$!
pids+=($server_pid)
jemalloc=/usr/lib/x86_64-linux-gnu/libjemalloc.so.2
if [ -e "$jemalloc" ]; then
  LD_PRELOAD="$jemalloc" node --import tsx jobs/worker.ts >"$run/logs/worker.log" 2>&1 &
else
  node --import tsx jobs/worker.ts >"$run/logs/worker.log" 2>&1 &
fi
worker_pid=$!
pids+=($worker_pid)
wait_port "$smtp_port" 'the mail fake'
wait_port "$app_port" 'the web server'

export DRAWERLIGHT_SERVER_PID=$server_pid
export DRAWERLIGHT_WORKER_PID=$worker_pid
echo "with-stack: server pid $server_pid, worker pid $worker_pid; running $script" >&2
node --import tsx "$script" "$@"
