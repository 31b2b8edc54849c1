# Sourced by .ci/run (bash): start a throw-away PostgreSQL server for the tests of database
# sources, and stop it and remove its files when the run ends.
#
# The server is Debian's `postgresql` package, run from a fresh data folder on a free port of
# 127.0.0.1 (the machine's own cluster, if any, is left alone). A login role with a random
# password owns a database `leases`; the tests read the URL (without the password) from
# SCORECARD_TEST_POSTGRES_URL and the password from SCORECARD_TEST_POSTGRES_PASSWORD, the way a
# modeller's config names a password variable. Anything that fails here only leaves the two
# variables unset, and the PostgreSQL tests skip with the reason.

_pg_owner=""
_pg_as() { if [ -z "$_pg_owner" ]; then "$@"; else runuser -u "$_pg_owner" -- "$@"; fi; }

_pg_start() {
  local bin port password
  bin=$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1)
  [ -n "$bin" ] && [ -x "$bin/initdb" ] || { echo "postgres: no server binaries"; return 1; }
  _pg_dir=$(mktemp -d)
  # The server refuses to run as root: as root, run it as the package's postgres user.
  if [ "$(id -u)" = 0 ]; then
    _pg_owner=postgres
    chown postgres "$_pg_dir"
  fi
  port=$(python -c 'import socket; s = socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])')
  password=$(python -c 'import secrets; print(secrets.token_hex(16))')
  _pg_as "$bin/initdb" -D "$_pg_dir/data" -U postgres --auth-local=trust \
    --auth-host=scram-sha-256 >"$_pg_dir/initdb.log" 2>&1 || { cat "$_pg_dir/initdb.log"; return 1; }
  _pg_as "$bin/pg_ctl" -D "$_pg_dir/data" -l "$_pg_dir/server.log" -w \
    -o "-c listen_addresses=127.0.0.1 -p $port -c unix_socket_directories=$_pg_dir" start \
    >/dev/null || { cat "$_pg_dir/server.log"; return 1; }
  _pg_stop_cmd=("$bin/pg_ctl" -D "$_pg_dir/data" -m fast -w stop)
  _pg_as "$bin/psql" -q -h "$_pg_dir" -p "$port" -U postgres -v ON_ERROR_STOP=1 \
    -c "CREATE ROLE lease_reader LOGIN PASSWORD '$password'" \
    -c "CREATE DATABASE leases OWNER lease_reader" || return 1
  export SCORECARD_TEST_POSTGRES_URL="postgresql+psycopg://lease_reader@127.0.0.1:$port/leases"
  export SCORECARD_TEST_POSTGRES_PASSWORD="$password"
  echo "postgres: test server on 127.0.0.1:$port"
}

_pg_stop() {
  if [ -n "${_pg_stop_cmd+x}" ]; then _pg_as "${_pg_stop_cmd[@]}" >/dev/null 2>&1 || true; fi
  if [ -n "${_pg_dir:-}" ]; then rm -rf "$_pg_dir"; fi
}

trap _pg_stop EXIT
_pg_start || echo "postgres: no test server; the PostgreSQL tests will skip"
