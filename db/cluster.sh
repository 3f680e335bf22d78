#!/usr/bin/env bash
# Manages one PostgreSQL cluster of Debian's server for Drawerlight: install if missing, create,
# start on 127.0.0.1:<port> with unix sockets off, create the app's role and database; or stop it.
# Every step is guarded so the script can run again at any point (existing data, running server,
# stale pid after a kill).
#   db/cluster.sh ensure <data-dir> <port> <database> [throwaway]
#   db/cluster.sh stop <data-dir>
set -euo pipefail

# From / so the postgres user is never asked to enter a folder it cannot read (a checkout under /root).
as_postgres() { (cd / && runuser -u postgres -- "$@"); }

pg_bin() {
  local bin
  bin=$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1 || true)
  if [ -z "$bin" ] || [ ! -x "$bin/postgres" ]; then
    echo "drawerlight: installing PostgreSQL from Debian's packages (needs root) ..." >&2
    if [ "$(id -u)" -ne 0 ]; then echo "drawerlight: run as root, or install the 'postgresql' package first." >&2; exit 1; fi
    DEBIAN_FRONTEND=noninteractive apt-get update -qq >&2
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq postgresql >&2
    bin=$(ls -d /usr/lib/postgresql/*/bin | sort -V | tail -n 1)
  fi
  echo "$bin"
}

cmd=${1:?usage: cluster.sh ensure|stop <data-dir> ...}
datadir=${2:?data directory}

if [ "$cmd" = stop ]; then
  bin=$(pg_bin)
  if [ -f "$datadir/postmaster.pid" ]; then
    as_postgres "$bin/pg_ctl" -D "$datadir" -m fast -w -t 60 stop >/dev/null 2>&1 || true
  fi
  exit 0
fi

port=${3:?port}
database=${4:?database}
throwaway=${5:-}
bin=$(pg_bin)

mkdir -p "$(dirname "$datadir")"
chown postgres:postgres "$(dirname "$datadir")"
if [ ! -f "$datadir/PG_VERSION" ]; then
  mkdir -p "$datadir"
  chown postgres:postgres "$datadir"
  chmod 700 "$datadir"
  # Trust on the loopback interface only: the cluster listens on 127.0.0.1 and nowhere else.
  as_postgres "$bin/initdb" -D "$datadir" -U postgres -E UTF8 --locale=C.UTF-8 --auth-host=trust --auth-local=trust >/dev/null
fi

opts="-p $port -c listen_addresses=127.0.0.1 -c unix_socket_directories=''"
if [ -n "$throwaway" ]; then opts="$opts -c fsync=off -c synchronous_commit=off -c full_page_writes=off"; fi

if ! as_postgres "$bin/pg_ctl" -D "$datadir" status >/dev/null 2>&1; then
  # A kill -9 leaves postmaster.pid behind; pg_ctl refuses to start only if that pid is alive.
  if [ -f "$datadir/postmaster.pid" ]; then
    pid=$(head -n 1 "$datadir/postmaster.pid")
    if ! kill -0 "$pid" 2>/dev/null; then rm -f "$datadir/postmaster.pid"; fi
  fi
  as_postgres "$bin/pg_ctl" -D "$datadir" -o "$opts" -l "$datadir/../postgres-$port.log" -w -t 60 start >/dev/null
fi

for _ in $(seq 1 60); do
  "$bin/pg_isready" -q -h 127.0.0.1 -p "$port" && break
  sleep 0.5
done

psql_pg() { "$bin/psql" -X -q -h 127.0.0.1 -p "$port" -U postgres -v ON_ERROR_STOP=1 "$@"; }
if [ "$(psql_pg -d postgres -tAc "SELECT 1 FROM pg_roles WHERE rolname = 'drawerlight'")" != 1 ]; then
  psql_pg -d postgres -c "CREATE ROLE drawerlight LOGIN CREATEDB"
fi
if [ "$(psql_pg -d postgres -tAc "SELECT 1 FROM pg_database WHERE datname = '$database'")" != 1 ]; then
  psql_pg -d postgres -c "CREATE DATABASE \"$database\" OWNER drawerlight"
  echo created
fi
