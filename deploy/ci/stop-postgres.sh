#!/usr/bin/env bash
# Stop the server started by start-postgres.sh and delete its data folder.
# Usage: deploy/ci/stop-postgres.sh [DATA]   (DATA defaults to $FLATPACT_TEST_POSTGRES_DATA)
set -euo pipefail

DATA=${1:-${FLATPACT_TEST_POSTGRES_DATA:-}}
if [[ -z "$DATA" || ! -d "$DATA/cluster" ]]; then
    echo "stop-postgres: no cluster folder given or found; nothing to stop" >&2
    exit 0
fi
BIN=$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1)
RUN=()
if [[ $(id -u) -eq 0 ]]; then
    RUN=(runuser -u "$(stat -c %U "$DATA/cluster")" --)
fi
"${RUN[@]}" "$BIN/pg_ctl" -D "$DATA/cluster" -m fast -w stop >&2 || true
rm -rf "$DATA"
