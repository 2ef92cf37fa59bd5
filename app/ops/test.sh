#!/usr/bin/env bash
# npm test: the same set-up as npm start (against fresh test databases), then every test:
# unit, integration (real PostgreSQL) and browser (Debian's Chromium), in one Vitest run.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/common.sh"
cd "$ROOT"

ensure_deps

# System packages the tests use: Chromium for the browser tests, poppler-utils for PDF text,
# nginx-light as the load balancer of the scale-out test (tests/e2e/scale-out.e2e.ts).
missing=()
[[ -x /usr/bin/chromium ]] || missing+=(chromium)
command -v pdftotext >/dev/null 2>&1 || missing+=(poppler-utils)
[[ -x /usr/sbin/nginx ]] || missing+=(nginx-light)
if ((${#missing[@]})); then
  log "installing Debian packages: ${missing[*]}"
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq "${missing[@]}" >/dev/null
fi

bash app/ops/db.sh start

"$BIN/react-router" typegen >/dev/null

# The checks and the build read the same sources and write nothing the others read, so they run
# side by side (each is mostly single-threaded); a failure prints its log and stops the run.
# DIOPTRA_SKIP_LINT=1 and DIOPTRA_SKIP_TYPECHECK=1 skip the first two in quick loops.
# DIOPTRA_TEST_SLOT=N runs beside other test runs: own ports, databases and build folder.
if [[ -n "${DIOPTRA_TEST_SLOT:-}" ]]; then export DIOPTRA_BUILD_DIR="${DIOPTRA_BUILD_DIR:-.tmp/build-$DIOPTRA_TEST_SLOT}"; fi
mkdir -p .tmp
step_log() { printf '%s/test-%s%s.log' "$RUN_DIR" "$1" "${DIOPTRA_TEST_SLOT:-}"; }
declare -A steps=()
if [[ -z "${DIOPTRA_SKIP_LINT:-}" ]]; then
  log "linting (ESLint, then Prettier's check)"
  ( "$BIN/eslint" --config app/ops/eslint.config.js --cache --cache-location .tmp/eslintcache --max-warnings 0 . &&
    "$BIN/prettier" --check --log-level warn . ) >"$(step_log lint)" 2>&1 &
  steps[lint]=$!
fi
if [[ -z "${DIOPTRA_SKIP_TYPECHECK:-}" ]]; then
  log "type-checking"
  "$BIN/tsc" >"$(step_log typecheck)" 2>&1 &
  steps[typecheck]=$!
fi
log "building"
"$BIN/react-router" build >"$(step_log build)" 2>&1 &
steps[build]=$!
failed=0
for name in lint typecheck build; do
  [[ -n "${steps[$name]:-}" ]] || continue
  if ! wait "${steps[$name]}"; then
    log "$name failed:"
    cat "$(step_log "$name")"
    failed=1
  fi
done
((failed == 0)) || exit 1

mkdir -p .tmp
results=".tmp/test-results${DIOPTRA_TEST_SLOT:+-$DIOPTRA_TEST_SLOT}.json"
rm -f "$results"
set +e
"$BIN/vitest" run --reporter=default --reporter=json --outputFile.json="$results" "$@"
status=$?
set -e

# One closing line with the real counts, read from Vitest's own JSON report.
if [[ -f "$results" ]]; then
  node -e '
    const r = require(process.argv[1]);
    const skipped = (r.numPendingTests || 0) + (r.numTodoTests || 0);
    console.log(`tests: ${r.numPassedTests} passed, ${r.numFailedTests} failed` + (skipped ? `, ${skipped} skipped` : ""));
  ' "$ROOT/$results"
fi
exit $status
