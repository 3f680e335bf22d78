# Shared steps of `npm start` and `npm test` (sourced, not run).

project_root() { cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd; }

# npm dependencies: install when missing or older than the lock file.
ensure_node_modules() {
  local root=$1
  if [ ! -f "$root/node_modules/.package-lock.json" ] || [ "$root/package-lock.json" -nt "$root/node_modules/.package-lock.json" ]; then
    echo "drawerlight: installing npm dependencies ..." >&2
    (cd "$root" && npm ci --no-audit --no-fund --loglevel=error)
  fi
}

# A Debian package the app or its tests use besides PostgreSQL (jemalloc for the image engine,
# Chromium and the outside checkers for the tests), installed when the probed file is missing.
#   ensure_debian_package [--no-install-recommends] <package> <file it provides>
# --no-install-recommends: only what the package depends on (Chromium's recommendations pull in
# some 130 packages, printing and zero-configuration networking daemons among them).
ensure_debian_package() {
  local apt_options=()
  if [ "$1" = "--no-install-recommends" ]; then apt_options+=("$1"); shift; fi
  local pkg=$1 probe=$2
  if [ ! -e "$probe" ]; then
    if [ "$(id -u)" -eq 0 ]; then
      echo "drawerlight: installing $pkg from Debian's packages ..." >&2
      if [ -z "${DRAWERLIGHT_APT_UPDATED:-}" ]; then DEBIAN_FRONTEND=noninteractive apt-get update -qq >&2; export DRAWERLIGHT_APT_UPDATED=1; fi
      DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "${apt_options[@]}" "$pkg" >&2 || echo "drawerlight: could not install $pkg" >&2
    else
      echo "drawerlight: $pkg is missing and this is not root; install it with apt-get." >&2
    fi
  fi
}

# The data directory must be reachable by the postgres OS user: inside the checkout's storage/
# when every parent folder lets it through, otherwise under /var/lib/drawerlight.
cluster_parent() {
  local root=$1
  mkdir -p "$root/storage"
  if id postgres >/dev/null 2>&1 && runuser -u postgres -- test -x "$root/storage" 2>/dev/null; then
    echo "$root/storage/postgres"
  else
    echo "/var/lib/drawerlight/$(echo -n "$root" | sha1sum | cut -c1-10)"
  fi
}

# Three free TCP ports on 127.0.0.1, space-separated.
free_ports() {
  node -e '
    const net = require("net");
    const take = () => new Promise((r) => { const s = net.createServer(); s.listen(0, "127.0.0.1", () => { const p = s.address().port; s.close(() => r(p)); }); });
    Promise.all([take(), take(), take()]).then((p) => console.log(p.join(" ")));'
}

# A throwaway stack for the tests or a benchmark: a run folder under /tmp, free ports, a PostgreSQL
# cluster of its own with fsync off (never the development data), and the environment the app,
# the worker and the scripts read. Sets `run`; `throwaway_cleanup` removes it all again.
#   throwaway_stack <root> <kind>     (kind: test | bench)
throwaway_stack() {
  local root=$1 kind=$2 pg_port app_port smtp_port
  run=$(mktemp -d "/tmp/drawerlight-$kind.XXXXXX")
  chmod 755 "$run"
  read -r pg_port app_port smtp_port <<<"$(free_ports)"
  bash "$root/db/cluster.sh" ensure "$run/pg" "$pg_port" "drawerlight_$kind" throwaway >/dev/null
  export APP_ENV=test
  export DATABASE_URL="postgres://drawerlight@127.0.0.1:$pg_port/drawerlight_$kind"
  export APP_URL="http://127.0.0.1:$app_port"
  export SMTP_PORT="$smtp_port"
  export STORAGE_DIR="$run/storage"
  export DRAWERLIGHT_PG_PORT="$pg_port"
  # Each run builds into its own folder so runs side by side do not overwrite each other.
  export DRAWERLIGHT_OUT_DIR="./dist/$(basename "$run")"
  mkdir -p "$STORAGE_DIR" "$run/logs"
}

# Stops the throwaway cluster and removes the run folder and its build (KEEP_TEST_RUN=1 keeps them).
throwaway_cleanup() {
  local root=$1
  bash "$root/db/cluster.sh" stop "$run/pg" >/dev/null 2>&1 || true
  if [ -z "${KEEP_TEST_RUN:-}" ]; then rm -rf "$run" "$root/dist/$(basename "$run")"; else echo "run kept in $run" >&2; fi
}

# Builds the app into $DRAWERLIGHT_OUT_DIR, showing the log only when the build fails.
build_quietly() {
  npx astro build >"$run/logs/build.log" 2>&1 || { cat "$run/logs/build.log"; exit 1; }
}
