#!/usr/bin/env bash
# npm run stop: stops the local stand-ins and the private PostgreSQL cluster.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/common.sh"
cd "$ROOT"
for name in mail stripe worker app; do stop_bg "$name"; done
bash app/ops/db.sh stop
