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

# Debian packages the app uses besides PostgreSQL: jemalloc for the image worker (optional).
ensure_debian_package() {
  local pkg=$1 probe=$2
  if [ ! -e "$probe" ]; then
    if [ "$(id -u)" -eq 0 ]; then
      echo "drawerlight: installing $pkg from Debian's packages ..." >&2
      if [ -z "${DRAWERLIGHT_APT_UPDATED:-}" ]; then DEBIAN_FRONTEND=noninteractive apt-get update -qq >&2; export DRAWERLIGHT_APT_UPDATED=1; fi
      DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "$pkg" >&2 || echo "drawerlight: could not install $pkg" >&2
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
