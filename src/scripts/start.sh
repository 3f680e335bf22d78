#!/usr/bin/env bash
# `npm start`: everything a fresh machine needs, then the app with its demo data.
set -euo pipefail
source "$(dirname "$0")/common.sh"
root=$(project_root)
cd "$root"

ensure_node_modules "$root"
ensure_debian_package libjemalloc2 /usr/lib/x86_64-linux-gnu/libjemalloc.so.2
# PostgreSQL itself is installed by db/cluster.sh when missing.
parent=$(cluster_parent "$root")
# DRAWERLIGHT_PG_DIR, when set, names another cluster folder (a test starts a stack of its own).
export DRAWERLIGHT_PG_DIR="${DRAWERLIGHT_PG_DIR:-$parent/dev}"
export DRAWERLIGHT_PG_PORT="${DRAWERLIGHT_PG_PORT:-5544}"
storage_dir="${STORAGE_DIR:-$root/storage}"
mkdir -p "$storage_dir"
marker="$storage_dir/.dev-cluster"
case "$DRAWERLIGHT_PG_DIR" in
  "$storage_dir/"*) ;;
  *)
    # The cluster lives outside storage/: when storage/ was emptied (git clean -xfd), the old
    # database would point at files that are gone, so it starts afresh as well.
    if [ -f "$DRAWERLIGHT_PG_DIR/PG_VERSION" ] && [ ! -f "$marker" ]; then
      echo "drawerlight: storage/ was emptied since the last start: starting the development database afresh too" >&2
      bash db/cluster.sh stop "$DRAWERLIGHT_PG_DIR"
      rm -rf "$DRAWERLIGHT_PG_DIR"
    fi
    ;;
esac
bash db/cluster.sh ensure "$DRAWERLIGHT_PG_DIR" "$DRAWERLIGHT_PG_PORT" drawerlight >/dev/null
echo "$DRAWERLIGHT_PG_DIR" >"$marker"
export DATABASE_URL="${DATABASE_URL:-postgres://drawerlight@127.0.0.1:$DRAWERLIGHT_PG_PORT/drawerlight}"
# exec here, and `exec bash` in package.json's start script: no shell stays between npm and the
# stack, so the SIGINT or SIGTERM that npm passes on to its child reaches the stack itself.
exec node --import tsx src/scripts/stack.ts
