#!/usr/bin/env bash
# Start a throwaway PostgreSQL cluster on loopback for the backend-parametrised tests.
# Usage: source .ci/start_postgres.sh   (exports RAILWRIGHT_TEST_PG_URL, registers cleanup)
set -euo pipefail

if ! ls /usr/lib/postgresql/*/bin/initdb >/dev/null 2>&1; then
    echo "== installing PostgreSQL from Debian packages"
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq
    apt-get install -y -qq postgresql >/dev/null
fi
PG_BIN="$(dirname "$(ls -d /usr/lib/postgresql/*/bin/initdb | sort -V | tail -n 1)")"
PG_DIR="$(mktemp -d)"
PG_PORT="${RAILWRIGHT_TEST_PG_PORT:-55432}"
RUN_AS=()
if [ "$(id -u)" = "0" ]; then
    id postgres >/dev/null 2>&1 || useradd --system --no-create-home postgres
    chown postgres "$PG_DIR"
    RUN_AS=(su postgres -s /bin/sh -c)
else
    RUN_AS=(sh -c)
fi
"${RUN_AS[@]}" "'$PG_BIN/initdb' -D '$PG_DIR/data' -A trust -U railwright --no-sync >'$PG_DIR/initdb.log' 2>&1"
"${RUN_AS[@]}" "'$PG_BIN/pg_ctl' -D '$PG_DIR/data' -l '$PG_DIR/server.log' -w -o \"-c listen_addresses=127.0.0.1 -p $PG_PORT -k '$PG_DIR' -c fsync=off\" start >/dev/null"
"$PG_BIN/createdb" -h 127.0.0.1 -p "$PG_PORT" -U railwright railwright_test
export RAILWRIGHT_TEST_PG_URL="postgresql+psycopg://railwright@127.0.0.1:$PG_PORT/railwright_test"
echo "== PostgreSQL $("$PG_BIN/postgres" --version | awk '{print $3}') on 127.0.0.1:$PG_PORT (throwaway cluster)"
stop_postgres() { "${RUN_AS[@]}" "'$PG_BIN/pg_ctl' -D '$PG_DIR/data' -m immediate stop >/dev/null 2>&1" || true; rm -rf "$PG_DIR"; }
trap stop_postgres EXIT
