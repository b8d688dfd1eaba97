#!/usr/bin/env bash
# Start/stop a throwaway PostgreSQL cluster for the tests (loopback only, private socket dir, trust auth).
# Use: eval "$(scripts/pg-ci.sh start)"; trap 'scripts/pg-ci.sh stop' EXIT
set -euo pipefail
PGBIN=$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -1)
[ -n "$PGBIN" ] || { echo "postgresql not installed" >&2; exit 1; }
as_pg() { if [ "$(id -u)" = 0 ]; then runuser -u postgres -- "$@"; else "$@"; fi; }  # initdb refuses root
case "${1:-}" in
start)
  PG_CI_DIR=$(mktemp -d /tmp/pgci.XXXXXX); chmod 0755 "$PG_CI_DIR"
  [ "$(id -u)" = 0 ] && chown postgres: "$PG_CI_DIR"
  PORT=${PG_CI_PORT:-$(python3 -c 'import socket;s=socket.socket();s.bind(("127.0.0.1",0));print(s.getsockname()[1])')}
  as_pg "$PGBIN/initdb" -D "$PG_CI_DIR/data" -U postgres -A trust -E UTF8 --locale=C.UTF-8 --no-sync >"$PG_CI_DIR/initdb.log"
  as_pg "$PGBIN/pg_ctl" -D "$PG_CI_DIR/data" -l "$PG_CI_DIR/server.log" -w -t 60 start -o \
    "-c listen_addresses=127.0.0.1 -p $PORT -k $PG_CI_DIR -c fsync=off -c synchronous_commit=off -c full_page_writes=off" >/dev/null
  as_pg "$PGBIN/createdb" -h 127.0.0.1 -p "$PORT" -U postgres liftmatch_test
  echo "export PG_CI_DIR=$PG_CI_DIR"
  echo "export LIFTMATCH_TEST_PG_URL=postgresql+psycopg://postgres@127.0.0.1:$PORT/liftmatch_test" ;;
stop)
  : "${PG_CI_DIR:?}"; as_pg "$PGBIN/pg_ctl" -D "$PG_CI_DIR/data" -m fast -w stop >/dev/null || true
  rm -rf "$PG_CI_DIR" ;;
*) echo "usage: $0 start|stop" >&2; exit 2 ;;
esac
