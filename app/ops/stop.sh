#!/usr/bin/env bash
# npm run stop: stops the local stand-ins (mail, object storage, Stripe), the worker and the private PostgreSQL cluster.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/common.sh"
cd "$ROOT"
for name in mail s3 stripe worker app; do stop_bg "$name"; done
bash app/ops/db.sh stop
