#!/usr/bin/env bash
# Private PostgreSQL cluster for Dioptra on 127.0.0.1.
#   db.sh start            install the server if missing, initialise, start, create role + app database
#   db.sh stop             stop the cluster
#   db.sh status           say whether it runs
#   db.sh recreate NAME    drop and create database NAME (used for fresh test databases)
# DATABASE_URL set by the user overrides all of this: start/stop then do nothing.
set -euo pipefail

ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
PORT="${DIOPTRA_PG_PORT:-54329}"
DB_NAME="${DIOPTRA_DB_NAME:-dioptra}"
PG_USER=postgres

log() { printf '[db] %s\n' "$*"; }

find_bin() {
  local dir
  for dir in /usr/lib/postgresql/*/bin; do
    [[ -x "$dir/postgres" && -x "$dir/initdb" && -x "$dir/pg_ctl" ]] && { echo "$dir"; return 0; }
  done
  return 1
}

ensure_server() {
  if ! BIN="$(find_bin)"; then
    log "PostgreSQL server not found; installing Debian's postgresql package"
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq
    apt-get install -y -qq postgresql >/dev/null
    BIN="$(find_bin)" || { log "postgresql installed but its binaries were not found"; exit 1; }
  fi
  id "$PG_USER" >/dev/null 2>&1 || { log "the postgres OS user is missing"; exit 1; }
}

# The data folder lives in the ignored .data/ folder of the checkout when the
# postgres user can reach it; otherwise (a checkout under a private home) in a
# per-checkout folder under /var/tmp.
data_dir() {
  local want="$ROOT/.data/pg"
  mkdir -p "$ROOT/.data"
  if runuser -u "$PG_USER" -- test -x "$ROOT/.data" 2>/dev/null; then
    echo "$want"
  else
    local sum
    sum="$(printf '%s' "$ROOT" | sha1sum | cut -c1-12)"
    mkdir -p "/var/tmp/dioptra-pg-$sum"
    chmod 755 "/var/tmp/dioptra-pg-$sum"
    echo "/var/tmp/dioptra-pg-$sum/pg"
  fi
}

as_pg() { runuser -u "$PG_USER" -- "$@"; }

psql_admin() { as_pg "$BIN/psql" -h 127.0.0.1 -p "$PORT" -U "$PG_USER" -d postgres -v ON_ERROR_STOP=1 -qAt "$@"; }

is_running() { as_pg "$BIN/pg_ctl" -D "$DATA" status >/dev/null 2>&1; }

start() {
  ensure_server
  DATA="$(data_dir)"
  if [[ ! -s "$DATA/PG_VERSION" ]]; then
    log "initialising cluster in $DATA"
    mkdir -p "$DATA"
    chown "$PG_USER" "$DATA" "$(dirname "$DATA")"
    chmod 700 "$DATA"
    as_pg "$BIN/initdb" -D "$DATA" -U "$PG_USER" --auth-local=trust --auth-host=trust -E UTF8 --locale=C.UTF-8 >/dev/null
  fi
  if is_running; then
    log "already running on 127.0.0.1:$PORT"
  else
    # A pid file left by a crash or a killed machine would stop pg_ctl; the
    # status check above said no server owns it, so it is stale.
    if [[ -f "$DATA/postmaster.pid" ]]; then
      log "removing stale postmaster.pid"
      rm -f "$DATA/postmaster.pid"
    fi
    as_pg "$BIN/pg_ctl" -D "$DATA" -l "$DATA/server.log" -w -t 60 \
      -o "-c listen_addresses=127.0.0.1 -p $PORT -k $DATA -c max_connections=200 -c shared_buffers=256MB -c fsync=on" start >/dev/null
    log "started on 127.0.0.1:$PORT"
  fi
  psql_admin -c "DO \$\$BEGIN IF NOT EXISTS (SELECT 1 FROM pg_roles WHERE rolname='dioptra') THEN CREATE ROLE dioptra LOGIN PASSWORD 'dioptra' CREATEDB; END IF; END\$\$;"
  create_db "$DB_NAME"
}

create_db() {
  local name="$1"
  if [[ "$(psql_admin -c "SELECT 1 FROM pg_database WHERE datname='$name'")" != "1" ]]; then
    psql_admin -c "CREATE DATABASE \"$name\" OWNER dioptra"
    log "created database $name"
  fi
  PGOPTIONS="--client-min-messages=warning" as_pg "$BIN/psql" -h 127.0.0.1 -p "$PORT" -U "$PG_USER" -d "$name" -qAt -v ON_ERROR_STOP=1 \
    -c "CREATE EXTENSION IF NOT EXISTS pg_trgm; CREATE EXTENSION IF NOT EXISTS btree_gist; CREATE EXTENSION IF NOT EXISTS citext;"
}

recreate() {
  local name="$1"
  [[ "$name" =~ ^[a-z0-9_]+$ ]] || { log "bad database name $name"; exit 1; }
  ensure_server
  DATA="$(data_dir)"
  psql_admin -c "DROP DATABASE IF EXISTS \"$name\" WITH (FORCE)"
  create_db "$name"
}

stop() {
  ensure_server
  DATA="$(data_dir)"
  if [[ -s "$DATA/PG_VERSION" ]] && is_running; then
    as_pg "$BIN/pg_ctl" -D "$DATA" -m fast -w stop >/dev/null
    log "stopped"
  else
    log "not running"
  fi
}

cmd="${1:-start}"
if [[ -n "${DATABASE_URL:-}" ]]; then
  log "DATABASE_URL is set: using that server, nothing to $cmd here"
  exit 0
fi
case "$cmd" in
  start) start ;;
  stop) stop ;;
  status) ensure_server; DATA="$(data_dir)"; if is_running; then echo running; else echo stopped; fi ;;
  recreate) recreate "${2:?database name}" ;;
  *) echo "usage: db.sh start|stop|status|recreate NAME" >&2; exit 2 ;;
esac
