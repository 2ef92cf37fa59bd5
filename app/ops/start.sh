#!/usr/bin/env bash
# npm start: everything from a fresh machine to the app on http://127.0.0.1:3000.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/common.sh"
cd "$ROOT"

ensure_deps
bash app/ops/db.sh start
"$BIN/tsx" app/ops/migrate.ts
"$BIN/tsx" seeds/seed.ts

export SMTP_PORT="${SMTP_PORT:-2525}" MAILBOX_API_PORT="${MAILBOX_API_PORT:-2526}"
export MAILBOX_API_URL="http://127.0.0.1:$MAILBOX_API_PORT"
start_bg mail "$SMTP_PORT" env MAILBOX_DIR="$ROOT/.data/mail" "$BIN/tsx" app/standins/mail-server.ts
# The local object-storage stand-in (S3 API), unless real object storage is configured (S3_BUCKET set).
if [[ -z "${S3_BUCKET:-}" ]]; then
  export S3_STANDIN_PORT="${S3_STANDIN_PORT:-4569}"
  export S3_ENDPOINT="http://127.0.0.1:$S3_STANDIN_PORT"
  start_bg s3 "$S3_STANDIN_PORT" env S3_STANDIN_DIR="$ROOT/.data/s3" "$BIN/tsx" app/standins/s3-server.ts
fi
# The demo's attached results (field printouts, fundus photographs) go into the object store, so
# they are added once it is up; a second run adds nothing.
"$BIN/tsx" seeds/documents.ts

# The local Stripe stand-in, unless real Stripe keys are configured (STRIPE_SECRET_KEY set).
if [[ -z "${STRIPE_SECRET_KEY:-}" ]]; then
  export STRIPE_API_HOST=127.0.0.1 STRIPE_API_PORT="${STRIPE_API_PORT:-12111}" STRIPE_API_PROTOCOL=http
  start_bg stripe "$STRIPE_API_PORT" env STRIPE_STANDIN_PORT="$STRIPE_API_PORT" APP_URL="${APP_URL:-http://127.0.0.1:${PORT:-3000}}" "$BIN/tsx" app/standins/stripe-server.ts
fi

# The job worker: sends the queued e-mails (reminders, recalls and others); jobs wait in PostgreSQL while it is down.
export WORKER_PORT="${WORKER_PORT:-2527}"
start_bg worker "$WORKER_PORT" env APP_URL="${APP_URL:-http://127.0.0.1:${PORT:-3000}}" "$BIN/tsx" app/ops/worker.ts

log "building"
"$BIN/react-router" build >"$RUN_DIR/build.log" 2>&1 || { cat "$RUN_DIR/build.log"; exit 1; }

export NODE_ENV=production DIOPTRA_DEMO="${DIOPTRA_DEMO:-1}" HOST=127.0.0.1 PORT="${PORT:-3000}"
export APP_URL="${APP_URL:-http://127.0.0.1:$PORT}"
# The server's heap is capped: its live data is about 50 MiB, and without a cap V8 lets garbage
# pile up to several hundred MiB under load before collecting it (README, "Growing past one machine").
export NODE_OPTIONS="--max-old-space-size=256 ${NODE_OPTIONS:-}"
log "Dioptra on $APP_URL  (demo sign-ins in README.md; mailbox at $APP_URL/dev/mailbox; Ctrl-C stops the app, npm run stop stops the services)"
exec "$BIN/react-router-serve" build/server/index.js
