#!/usr/bin/env bash
# Shared steps of `npm start` and `npm test`. Sourced, not run.
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
RUN_DIR="$ROOT/.data/run"
mkdir -p "$RUN_DIR"
BIN="$ROOT/node_modules/.bin"

log() { printf '[dioptra] %s\n' "$*"; }

# Installs npm dependencies when node_modules is missing or older than the lock file.
ensure_deps() {
  local stamp="$ROOT/node_modules/.package-lock.json"
  if [[ ! -f "$stamp" || "$ROOT/package-lock.json" -nt "$stamp" ]]; then
    log "installing npm dependencies (npm ci)"
    (cd "$ROOT" && npm ci --no-audit --no-fund)
  fi
}

port_open() { (exec 3<>"/dev/tcp/127.0.0.1/$1") 2>/dev/null; }

wait_port() {
  local port="$1" name="$2" i
  for i in $(seq 1 100); do
    port_open "$port" && return 0
    sleep 0.1
  done
  log "$name did not open port $port"
  return 1
}

# start_bg NAME PORT CMD...: starts a background service unless its port already answers.
start_bg() {
  local name="$1" port="$2"
  shift 2
  if port_open "$port"; then
    log "$name already running on 127.0.0.1:$port"
    return 0
  fi
  nohup "$@" >"$RUN_DIR/$name.log" 2>&1 &
  echo $! >"$RUN_DIR/$name.pid"
  wait_port "$port" "$name" || { cat "$RUN_DIR/$name.log"; return 1; }
  log "$name started on 127.0.0.1:$port (log: .data/run/$name.log)"
}

stop_bg() {
  local name="$1" pidfile="$RUN_DIR/$1.pid"
  if [[ -f "$pidfile" ]]; then
    local pid
    pid="$(cat "$pidfile")"
    if kill -0 "$pid" 2>/dev/null; then
      kill "$pid" 2>/dev/null || true
      for _ in $(seq 1 30); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
      kill -9 "$pid" 2>/dev/null || true
      log "stopped $name"
    fi
    rm -f "$pidfile"
  fi
}
