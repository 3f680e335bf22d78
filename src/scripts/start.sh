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
export DRAWERLIGHT_PG_DIR="$parent/dev"
export DRAWERLIGHT_PG_PORT="${DRAWERLIGHT_PG_PORT:-5544}"
bash db/cluster.sh ensure "$DRAWERLIGHT_PG_DIR" "$DRAWERLIGHT_PG_PORT" drawerlight >/dev/null
export DATABASE_URL="${DATABASE_URL:-postgres://drawerlight@127.0.0.1:$DRAWERLIGHT_PG_PORT/drawerlight}"
exec node --import tsx src/scripts/stack.ts
