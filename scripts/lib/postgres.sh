#!/usr/bin/env bash
# PostgreSQL for Flyball: Debian's server binaries, a cluster of the project's own inside
# the checkout, listening on 127.0.0.1 only. `-A trust` is acceptable solely because the
# cluster accepts loopback connections and nothing else.
#
#   source scripts/lib/postgres.sh
#   pg_ensure_running <data-dir> <port> [fsync on|off]
#   pg_stop <data-dir>

PG_BIN="${PG_BIN:-}"

pg_find_bin() {
  if [[ -n "$PG_BIN" && -x "$PG_BIN/postgres" ]]; then return 0; fi
  local candidate
  for candidate in /usr/lib/postgresql/*/bin; do
    if [[ -x "$candidate/postgres" && -x "$candidate/initdb" ]]; then PG_BIN="$candidate"; fi
  done
  [[ -n "$PG_BIN" && -x "$PG_BIN/postgres" ]]
}

pg_install() {
  if pg_find_bin; then return 0; fi
  if [[ "$(id -u)" -eq 0 ]] && command -v apt-get >/dev/null; then
    echo "PostgreSQL server not found; installing Debian's postgresql package…"
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq >/dev/null
    apt-get install -y -qq postgresql >/dev/null
    # The package starts a system cluster on 5432; Flyball does not use it.
    (command -v systemctl >/dev/null && systemctl stop postgresql >/dev/null 2>&1) || service postgresql stop >/dev/null 2>&1 || pg_ctlcluster --help >/dev/null 2>&1 || true
    pg_find_bin || { echo "PostgreSQL installed but its binaries were not found." >&2; return 1; }
  else
    echo "PostgreSQL's server is not installed. Install it with:" >&2
    echo "  sudo apt-get install postgresql" >&2
    echo "(or set PG_BIN to the folder that holds initdb and postgres)" >&2
    return 1
  fi
}

# Run a PostgreSQL tool as the cluster's owner: as root that is the postgres OS user.
pg_as_owner() {
  if [[ "$(id -u)" -eq 0 ]]; then
    runuser -u postgres -- "$@"
  else
    "$@"
  fi
}

pg_ensure_running() {
  local dir="$1" port="$2" fsync="${3:-on}"
  pg_install || return 1
  dir="$(mkdir -p "$dir" && cd "$dir" && pwd)"
  local cluster="$dir/cluster" sockets="$dir/sockets"
  mkdir -p "$sockets"
  if [[ "$(id -u)" -eq 0 ]]; then
    chown postgres:postgres "$dir" "$sockets"
    # The postgres user must be able to reach the folder through its parents.
    local parent="$dir"
    while [[ "$parent" != "/" ]]; do parent="$(dirname "$parent")"; chmod o+x "$parent" 2>/dev/null || true; done
  fi
  if [[ ! -f "$cluster/PG_VERSION" ]]; then
    pg_as_owner "$PG_BIN/initdb" -D "$cluster" -U flyball -A trust -E UTF8 --locale=C.UTF-8 >"$dir/initdb.log" 2>&1 \
      || { cat "$dir/initdb.log" >&2; return 1; }
  fi
  if pg_as_owner "$PG_BIN/pg_ctl" -D "$cluster" status >/dev/null 2>&1; then return 0; fi
  pg_as_owner "$PG_BIN/pg_ctl" -D "$cluster" -l "$dir/postgres.log" -w -t 60 \
    -o "-c listen_addresses=127.0.0.1 -p $port -k $sockets -c fsync=$fsync -c max_connections=200" start >/dev/null \
    || { tail -20 "$dir/postgres.log" >&2; return 1; }
  local db
  for db in flyball; do
    "$PG_BIN/psql" -h 127.0.0.1 -p "$port" -U flyball -d postgres -tAc "select 1 from pg_database where datname='$db'" | grep -q 1 \
      || "$PG_BIN/createdb" -h 127.0.0.1 -p "$port" -U flyball "$db"
  done
}

pg_stop() {
  local dir="$1"
  pg_find_bin || return 0
  [[ -f "$dir/cluster/PG_VERSION" ]] || return 0
  pg_as_owner "$PG_BIN/pg_ctl" -D "$(cd "$dir" && pwd)/cluster" -m fast -w stop >/dev/null 2>&1 || true
}
