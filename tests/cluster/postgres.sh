#!/usr/bin/env bash
# The results store's tests against a real PostgreSQL server (run by .ci/run after cargo test):
# installs Debian's `postgresql` when its server programs are missing, starts a throw-away cluster
# of its own in a temporary folder (no TCP listener: a Unix socket in that folder only, trust
# logins, fsync off), then
#   1. runs `cargo test --locked --test main store::` with SPURLINE_TEST_PG naming that server and
#      SPURLINE_REQUIRE_PG set, so every store test runs on SQLite and on PostgreSQL and none may
#      skip the server;
#   2. checks that the tests did reach the server (their databases exist there);
#   3. stops the server and removes the folder, from an EXIT trap, so also when a step fails.
# The server runs as the `postgres` user when this script runs as root (PostgreSQL refuses to run
# as root), else as the calling user. One line per step. Exit status: 0 pass, 1 a test or check
# failed, 3 the server could not be installed or started here; .ci/run counts every non-zero status
# as a failure.
set -uo pipefail

EXIT_CANNOT_RUN=3
t0=$(date +%s.%N)
say() { printf 'postgres: %s [%s s]\n' "$*" "$(awk -v a="$t0" -v b="$(date +%s.%N)" 'BEGIN { printf "%.1f", b - a }')"; }
fail() { echo "postgres: FAIL: $*" >&2; exit 1; }
cannot() { echo "postgres: cannot run here: $*" >&2; exit $EXIT_CANNOT_RUN; }

repo=$(cd "$(dirname "$0")/../.." && pwd)

# The newest installed server's programs (Debian keeps them in /usr/lib/postgresql/VERSION/bin).
server_bin() {
  local d
  d=$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1)
  [ -n "$d" ] && [ -x "$d/initdb" ] && [ -x "$d/pg_ctl" ] && [ -x "$d/postgres" ] && echo "$d"
}

# ── packages ──
bin=$(server_bin)
if [ -z "$bin" ]; then
  [ "$(id -u)" -eq 0 ] || cannot "PostgreSQL's server is not installed and installing it needs root (uid $(id -u))"
  echo "postgres: installing postgresql (Debian packages)"
  export DEBIAN_FRONTEND=noninteractive
  # The packages' scripts try to start a cluster of their own; where policy-rc.d denies it, that
  # is harmless (this script starts its own).
  { apt-get update -qq && apt-get install -y -qq postgresql >/dev/null; } \
    || cannot "the postgresql package could not be installed"
  bin=$(server_bin) || true
  [ -n "$bin" ] || cannot "postgresql was installed but no server programs are under /usr/lib/postgresql"
fi
version=$("$bin/postgres" --version)

# ── who runs the server ──
if [ "$(id -u)" -eq 0 ]; then
  id -u postgres >/dev/null 2>&1 || cannot "running as root and there is no postgres user to run the server as"
  owner=postgres
  as_owner() { (cd / && runuser -u postgres -- "$@"); }
else
  owner=$(id -un)
  as_owner() { (cd / && "$@"); }
fi

work=$(mktemp -d /tmp/spurline-pg.XXXXXX) || fail "mktemp"
chmod 755 "$work" # the server's user must reach its folder inside
P=$work/pg
mkdir -p "$P/sock" || fail "mkdir"
chown -R "$owner" "$P" || fail "chown $P to $owner"
started=""

stop_all() {
  local rc=$?
  trap - EXIT
  if [ -n "$started" ]; then
    as_owner "$bin/pg_ctl" -D "$P/data" -m fast -w stop >/dev/null 2>&1 \
      || as_owner "$bin/pg_ctl" -D "$P/data" -m immediate -w stop >/dev/null 2>&1
  fi
  if [ "$rc" -ne 0 ] && [ -f "$P/server.log" ]; then
    echo "postgres: server log of the failed run:" >&2
    tail -n 30 "$P/server.log" >&2
  fi
  rm -rf "$work"
  say "step 3: server stopped, temporary files removed; exit status $rc"
  exit "$rc"
}
trap stop_all EXIT
trap 'exit 1' INT TERM

# ── the server ──
as_owner "$bin/initdb" -D "$P/data" -U postgres --auth=trust --no-sync -E UTF8 --locale=C.UTF-8 \
  >"$work/initdb.log" 2>&1 || cannot "initdb failed: $(tail -n 5 "$work/initdb.log")"
# Only the socket in our folder: no TCP listener, so nothing else on the machine can reach it and
# the port only names the socket file (no clash with another server's socket folder).
as_owner "$bin/pg_ctl" -D "$P/data" -l "$P/server.log" -w -t 60 \
  -o "-k $P/sock -c listen_addresses='' -c fsync=off -c max_connections=100" start \
  >"$work/pg_ctl.log" 2>&1 || cannot "the server did not start: $(tail -n 5 "$work/pg_ctl.log" "$P/server.log" 2>/dev/null)"
started=1
export SPURLINE_TEST_PG="host=$P/sock user=postgres"
export SPURLINE_REQUIRE_PG=1
ready=$(as_owner "$bin/pg_isready" -h "$P/sock" -U postgres 2>&1) || cannot "the server does not accept connections: $ready"
say "server up: $version, run as $owner, socket in $P/sock"

# ── step 1: the store's tests on SQLite and on this server ──
log=$work/cargo-test.log
(cd "$repo" && cargo test --locked --test main store:: -- --test-threads 2) >"$log" 2>&1
test_rc=$?
passed=$(sed -n 's/^test result: [a-zA-Z]*\. \([0-9]*\) passed.*/\1/p' "$log" | tail -n 1)
if [ "$test_rc" -ne 0 ]; then
  tail -n 60 "$log" >&2
  fail "cargo test --test main store:: exited $test_rc"
fi
[ "${passed:-0}" -gt 0 ] || { tail -n 20 "$log" >&2; fail "cargo test --test main store:: ran no tests"; }
if grep -q '^SKIPPED .*PostgreSQL' "$log"; then
  grep '^SKIPPED' "$log" >&2
  fail "a store test skipped the server"
fi
say "step 1: cargo test --test main store:: passed ($passed tests, each on SQLite and on PostgreSQL)"

# ── step 2: the tests reached the server ──
dbs=$("$bin/psql" -X -At -h "$P/sock" -U postgres -d postgres \
  -c "SELECT count(*) FROM pg_database WHERE datname LIKE 'spurline\\_%'" 2>&1) \
  || fail "psql: $dbs"
[ "$dbs" -ge 5 ] || fail "only $dbs test databases on the server: the tests did not use it"
runs=$("$bin/psql" -X -At -h "$P/sock" -U postgres -d spurline_concurrent -c "SELECT count(*) FROM runs" 2>&1) \
  || fail "psql: $runs"
[ "$runs" -eq 4 ] || fail "the concurrency test's database holds $runs lots, not 4"
say "step 2: the server holds the tests' $dbs databases; the concurrent writers' store holds $runs lots"
