#!/usr/bin/env bash
# npm test: the same set-up as npm start (against fresh test databases), then every test:
# unit, integration (real PostgreSQL) and browser (Debian's Chromium), in one Vitest run.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/common.sh"
cd "$ROOT"

ensure_deps

# System packages the tests use: Chromium for the browser tests, poppler-utils for PDF text.
missing=()
[[ -x /usr/bin/chromium ]] || missing+=(chromium)
command -v pdftotext >/dev/null 2>&1 || missing+=(poppler-utils)
if ((${#missing[@]})); then
  log "installing Debian packages: ${missing[*]}"
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq "${missing[@]}" >/dev/null
fi

bash app/ops/db.sh start

log "type-checking"
"$BIN/react-router" typegen >/dev/null
"$BIN/tsc"

log "building"
"$BIN/react-router" build >"$RUN_DIR/test-build.log" 2>&1 || { cat "$RUN_DIR/test-build.log"; exit 1; }

mkdir -p .tmp
set +e
"$BIN/vitest" run --reporter=default --reporter=json --outputFile.json=.tmp/test-results.json "$@"
status=$?
set -e

# One closing line with the real counts, read from Vitest's own JSON report.
if [[ -f .tmp/test-results.json ]]; then
  node -e '
    const r = require(process.argv[1]);
    const skipped = (r.numPendingTests || 0) + (r.numTodoTests || 0);
    console.log(`tests: ${r.numPassedTests} passed, ${r.numFailedTests} failed` + (skipped ? `, ${skipped} skipped` : ""));
  ' "$ROOT/.tmp/test-results.json"
fi
exit $status
