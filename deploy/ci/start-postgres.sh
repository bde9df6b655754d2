#!/usr/bin/env bash
# Start a throw-away PostgreSQL server for the test suite, on 127.0.0.1 only.
#
# Usage:  eval "$(deploy/ci/start-postgres.sh)"      # then run the tests
#         deploy/ci/stop-postgres.sh                 # stops it and deletes its data
#
# Prints two `export` lines on stdout (FLATPACT_TEST_POSTGRES_DSN and
# FLATPACT_TEST_POSTGRES_DATA); everything else goes to stderr, so `eval` sees only those.
# Installs Debian's `postgresql` package when no server binaries are present. The cluster
# lives in a fresh temporary folder, belongs to a non-root user (initdb refuses root), trusts
# connections from 127.0.0.1 only, and is deleted by the stop script.
set -euo pipefail

say() { echo "start-postgres: $*" >&2; }

find_bin() {
    local dir
    dir=$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1 || true)
    if [[ -n "$dir" && -x "$dir/initdb" ]]; then
        echo "$dir"
    fi
}

BIN=$(find_bin)
if [[ -z "$BIN" ]]; then
    if [[ $(id -u) -ne 0 ]]; then
        say "PostgreSQL is not installed and we are not root: install Debian's 'postgresql' package"
        exit 1
    fi
    say "installing Debian's postgresql package"
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq >&2
    apt-get install -y -qq --no-install-recommends postgresql >&2
    BIN=$(find_bin)
    [[ -n "$BIN" ]] || { say "postgresql installed but no initdb found under /usr/lib/postgresql"; exit 1; }
fi

# initdb and postgres refuse to run as root, so root runs them as an unprivileged user.
RUN=()
if [[ $(id -u) -eq 0 ]]; then
    PG_USER=postgres
    if ! id "$PG_USER" >/dev/null 2>&1; then
        PG_USER=flatpact-pg
        id "$PG_USER" >/dev/null 2>&1 || useradd --system --no-create-home "$PG_USER"
    fi
    RUN=(runuser -u "$PG_USER" --)
fi

DATA=$(mktemp -d "${TMPDIR:-/tmp}/flatpact-pg.XXXXXX")
chmod 700 "$DATA"
if [[ $(id -u) -eq 0 ]]; then
    chown "$PG_USER" "$DATA"
fi

# A free port: bind port 0 on loopback and let the kernel choose (it is released at once;
# the tiny race with other programs is acceptable for a CI helper).
PORT=$(python3 -c 'import socket; s = socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])')
DB_USER=flatpact
DB_NAME=flatpact_test

say "initialising $DATA with $BIN/initdb"
"${RUN[@]}" "$BIN/initdb" -D "$DATA/cluster" -U "$DB_USER" --auth=trust -E UTF8 \
    --no-locale >"$DATA/initdb.log" 2>&1 || { cat "$DATA/initdb.log" >&2; exit 1; }

# listen_addresses=127.0.0.1: never reachable from outside; the Unix socket lives in $DATA.
OPTIONS="-c listen_addresses=127.0.0.1 -p $PORT -k $DATA"
say "starting the server on 127.0.0.1:$PORT"
if ! "${RUN[@]}" "$BIN/pg_ctl" -D "$DATA/cluster" -o "$OPTIONS" -l "$DATA/server.log" \
    -w -t 60 start >&2; then
    cat "$DATA/server.log" >&2 || true
    exit 1
fi

for _ in $(seq 1 60); do
    if "$BIN/pg_isready" -h 127.0.0.1 -p "$PORT" -q; then
        break
    fi
    sleep 0.5
done
if ! "$BIN/createdb" -h 127.0.0.1 -p "$PORT" -U "$DB_USER" "$DB_NAME" >&2; then
    say "could not create the database; stopping the server again"
    "${RUN[@]}" "$BIN/pg_ctl" -D "$DATA/cluster" -m fast -w stop >&2 || true
    rm -rf "$DATA"
    exit 1
fi

echo "export FLATPACT_TEST_POSTGRES_DSN=postgresql://$DB_USER@127.0.0.1:$PORT/$DB_NAME"
echo "export FLATPACT_TEST_POSTGRES_DATA=$DATA"
say "ready: postgresql://$DB_USER@127.0.0.1:$PORT/$DB_NAME"
