#!/usr/bin/env bash
# `npm test`: the same bootstrap as `npm start`, on a throwaway PostgreSQL cluster on other ports
# (never the development data), then every unit, integration and browser test, then one
# `N passed, N failed` line.
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
source "$root/src/scripts/common.sh"
cd "$root"

ensure_node_modules "$root"
ensure_debian_package chromium /usr/bin/chromium
ensure_debian_package libjemalloc2 /usr/lib/x86_64-linux-gnu/libjemalloc.so.2

run=$(mktemp -d /tmp/drawerlight-test.XXXXXX)
chmod 755 "$run"
free_ports=$(node -e '
  const net = require("net");
  const take = () => new Promise((r) => { const s = net.createServer(); s.listen(0, "127.0.0.1", () => { const p = s.address().port; s.close(() => r(p)); }); });
  Promise.all([take(), take(), take()]).then((p) => console.log(p.join(" ")));')
read -r pg_port app_port smtp_port <<<"$free_ports"

cleanup() {
  bash "$root/db/cluster.sh" stop "$run/pg" || true
  if [ -z "${KEEP_TEST_RUN:-}" ]; then rm -rf "$run" "$root/dist/$(basename "$run")"; else echo "test run kept in $run" >&2; fi
}
trap cleanup EXIT

bash db/cluster.sh ensure "$run/pg" "$pg_port" drawerlight_test throwaway >/dev/null
export APP_ENV=test
export DATABASE_URL="postgres://drawerlight@127.0.0.1:$pg_port/drawerlight_test"
export APP_URL="http://127.0.0.1:$app_port"
export SMTP_PORT="$smtp_port"
export STORAGE_DIR="$run/storage"
export DRAWERLIGHT_TEST_RUN="$run"
export DRAWERLIGHT_PG_PORT="$pg_port"
# Each run builds into its own folder so runs side by side do not overwrite each other.
export DRAWERLIGHT_OUT_DIR="./dist/$(basename "$run")"
mkdir -p "$STORAGE_DIR" "$run/logs"

echo "drawerlight: building the app for the tests ..."
npx astro build >"$run/logs/build.log" 2>&1 || { cat "$run/logs/build.log"; exit 1; }

status=0
npx vitest run --config tests/vitest.config.ts --reporter=default --reporter=json --outputFile="$run/results.json" "$@" || status=$?
node tests/support/summary.mjs "$run/results.json" || status=1
exit $status
