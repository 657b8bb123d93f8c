#!/usr/bin/env bash
# Start a throw-away PostgreSQL cluster on a local socket for the records tests; print its URL.
# The cluster lives in a temporary folder and is stopped and removed by '.ci/postgres.sh stop DIR'.
set -euo pipefail
if [ "${1:-}" = "stop" ]; then
  dir="$2"
  bin="$(ls -d /usr/lib/postgresql/*/bin | sort -V | tail -n 1)"
  runuser -u postgres -- "$bin/pg_ctl" -D "$dir/data" -m fast stop >/dev/null 2>&1 || true
  rm -rf "$dir"
  exit 0
fi
bin="$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1)"
[ -n "$bin" ] || { echo "ci: PostgreSQL server binaries not found" >&2; exit 1; }
dir="$(mktemp -d /tmp/benchnf-pg.XXXXXX)"
chown postgres "$dir"
runuser -u postgres -- "$bin/initdb" -D "$dir/data" -A trust -U postgres >/dev/null
runuser -u postgres -- "$bin/pg_ctl" -D "$dir/data" -l "$dir/log" -w \
  -o "-k $dir -c listen_addresses='' -c max_connections=40" start >/dev/null
runuser -u postgres -- "$bin/createdb" -h "$dir" -U postgres benchnf_test
echo "$dir"
