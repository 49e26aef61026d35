#!/bin/sh
# postgres.sh: lazy tables on real engines, nothing mocked.  Makes an
# SQLite file and a throw-away PostgreSQL 15 cluster (initdb in a temporary
# folder, the server on a Unix socket there, run as an unprivileged user
# since the server refuses root), loads the same tables into both
# (tests/lib/db_load.py, psql), runs tests/lua/db_engines.lua against each,
# checks that a lost connection is an error that says so and that a
# replayed log cannot reach the server (the replay child's seccomp filter
# blocks sockets), and stops the cluster on exit.  Without the server
# packages the PostgreSQL part says "skipped" by name.  Environment: B.
B=${B:-build}
PYTHON=${PYTHON:-python3}
root=$(pwd)
exe=$(cd "$B" && pwd)/sluice
pgbin=/usr/lib/postgresql/15/bin
tmp=$(mktemp -d /tmp/sluice-db.XXXXXX)
started=
. tests/lib/pg_user.sh
trap pg_cleanup EXIT
trap 'exit 1' INT TERM
fail() { echo "FAIL  $1"; [ -f "$tmp/out.txt" ] && sed 's/^/      /' "$tmp/out.txt"; exit 1; }
ok() { echo "ok    $1"; }

# ---- the data, and the SQLite run ----
"$PYTHON" tests/lib/db_load.py tests/data/db_plots.csv "$tmp/plots.db" "$tmp/load.sql" \
  "$tmp/expect.lua" || fail "tests/lib/db_load.py made the test databases"
SLUICE_DB_ENGINE=SQLite SLUICE_DB_TARGET="$tmp/plots.db" SLUICE_DB_CSV=tests/data/db_plots.csv \
  SLUICE_DB_EXPECT="$tmp/expect.lua" "$exe" tests/lua/run.lua tests/lua/db_engines.lua \
  > "$tmp/out.txt" 2>&1 || fail "the lazy-table checks on SQLite"
ok "lazy tables on SQLite ($(tail -n 1 "$tmp/out.txt"))"
"$PYTHON" -c "import sqlite3, sys; c = sqlite3.connect(sys.argv[1]); assert c.execute('SELECT a FROM y').fetchall() == [(7,)]" \
  "$tmp/plots.db" || fail "the SQLite file is unchanged after the checks"
ok "the SQLite file is unchanged"

# ---- PostgreSQL ----
if [ ! -x "$pgbin/initdb" ] || [ ! -x "$pgbin/pg_ctl" ]; then
  echo "skipped: PostgreSQL server not installed (postgresql-15)"
  exit 0
fi
if ! command -v psql >/dev/null 2>&1; then
  echo "skipped: PostgreSQL client not installed (postgresql-client-15)"
  exit 0
fi
# the server's own folder (data and socket); the rest stays ours
pg_folder "$tmp" || fail "a folder for the server"
as_server "$pgbin/initdb" -D "$sock/data" -U sluice --auth=trust -E UTF8 --no-locale \
  > "$tmp/out.txt" 2>&1 || fail "initdb made a cluster"
started=1
as_server "$pgbin/pg_ctl" -D "$sock/data" -l "$sock/server.log" -w -t 60 \
  -o "-k $sock -c listen_addresses= -F" start > "$tmp/out.txt" 2>&1 || {
  cat "$sock/server.log" >> "$tmp/out.txt"; fail "pg_ctl started the server"; }
psql -X -q -v ON_ERROR_STOP=1 -h "$sock" -U sluice -d postgres -c "CREATE DATABASE plots" \
  > "$tmp/out.txt" 2>&1 || fail "psql made the database"
psql -X -q -v ON_ERROR_STOP=1 -h "$sock" -U sluice -d plots -f "$tmp/load.sql" \
  > "$tmp/out.txt" 2>&1 || fail "psql loaded the tables"
ok "a PostgreSQL $("$pgbin/postgres" --version | awk '{print $3}') cluster on a socket in $sock"

# the password is ignored by trust; it must never be shown
uri="postgresql://sluice:s3cret-never-shown@/plots?host=$sock"
SLUICE_DB_ENGINE=PostgreSQL SLUICE_DB_TARGET="$uri" SLUICE_DB_CSV=tests/data/db_plots.csv \
  SLUICE_DB_EXPECT="$tmp/expect.lua" "$exe" tests/lua/run.lua tests/lua/db_engines.lua \
  > "$tmp/out.txt" 2>&1 || fail "the lazy-table checks on PostgreSQL"
ok "lazy tables on PostgreSQL ($(tail -n 1 "$tmp/out.txt"))"
[ "$(psql -X -A -t -h "$sock" -U sluice -d plots -c 'SELECT a FROM y')" = 7 ] \
  || fail "the PostgreSQL table y is unchanged after the checks"
[ "$(psql -X -A -t -h "$sock" -U sluice -d plots -c "SELECT last_value FROM counter")" = 1 ] \
  && [ "$(psql -X -A -t -h "$sock" -U sluice -d plots -c "SELECT is_called FROM counter")" = f ] \
  || fail "the sequence was never advanced"
ok "the PostgreSQL database is unchanged"

# ---- bad targets: each error names connect and what was wrong ----
cat > "$tmp/bad.lua" <<LUA
local function msg(t) local ok, m = pcall(connect, t); assert(not ok, t); print(m) end
msg("postgresql://sluice@/plots?host=$sock&nosuch=1")
msg("postgresql://sluice@/nosuchdb?host=$sock")
msg("postgresql://sluice:s3cret-never-shown@/plots?host=$tmp/nowhere")
msg("$tmp/load.sql")
LUA
"$exe" "$tmp/bad.lua" > "$tmp/out.txt" 2>&1 || fail "bad targets are errors, not crashes"
grep -q 'connect: not a PostgreSQL URI that libpq takes: invalid URI query parameter: "nosuch"' "$tmp/out.txt" \
  || fail "a bad URI is named"
grep -q 'connect: cannot connect to PostgreSQL: FATAL:  database "nosuchdb" does not exist' "$tmp/out.txt" \
  || grep -q 'connect: cannot connect to PostgreSQL: .*database "nosuchdb" does not exist' "$tmp/out.txt" \
  || fail "the server's refusal is relayed"
grep -q "connect: cannot connect to PostgreSQL: .*No such file or directory" "$tmp/out.txt" \
  || fail "a missing socket is said"
grep -q "connect: cannot open '.*load.sql' as an SQLite database: file is not a database" "$tmp/out.txt" \
  || fail "a file that is not a database is said"
grep -q s3cret "$tmp/out.txt" && fail "no error shows the password"
ok "bad URIs, databases, sockets and files are errors naming connect"

# ---- inside a replay the sandbox stops the connection, cleanly ----
mkdir "$tmp/out"
cat > "$tmp/replay.lua" <<LOG
--@ sluice 0.1.0 session log
--@ started 2026-01-01T00:00:00Z
--@ lua 5.4
--@ in 1 show
show((pcall(connect, "postgresql://sluice@/plots?host=$sock")))
--| false
--@ in 2 show
show(1 + 1)
--| 2
LOG
(cd "$tmp" && "$exe" --replay replay.lua --out out) > "$tmp/out.txt" 2>&1
code=$?
[ "$code" = 0 ] || fail "the replay ran to its end and matched (exit $code)"
grep -q "2 commands: 2 matched" "$tmp/out.txt" || fail "connect failed inside the replay, and the replay went on"
(cd "$tmp" && "$exe" --replay replay.lua --trust) > "$tmp/out.txt" 2>&1
grep -q "in 1: differ" "$tmp/out.txt" || grep -q "1 differed" "$tmp/out.txt" \
  || fail "outside the sandbox (--trust) the same connect succeeds"
ok "a replayed log cannot reach the server: connect is an error there"

# ---- a lost connection says so ----
cat > "$tmp/lost.lua" <<LUA
local db = connect("postgresql://sluice@/plots?host=$sock")
local t = db:table("plots")
assert(#t == 40)
os.execute(os.getenv("SLUICE_PG_STOP"))
local ok, m = pcall(function() return #t end)
print(m)
ok, m = pcall(function() return t:fetch() end)
print(m)
LUA
SLUICE_PG_STOP="runuser -u $user -- $pgbin/pg_ctl -D $sock/data -m fast -w stop >/dev/null 2>&1"
[ "$(id -u)" = 0 ] || SLUICE_PG_STOP="$pgbin/pg_ctl -D $sock/data -m fast -w stop >/dev/null 2>&1"
SLUICE_PG_STOP=$SLUICE_PG_STOP "$exe" "$tmp/lost.lua" > "$tmp/out.txt" 2>&1 || fail "a lost connection is an error, not a crash"
started=
grep -q "#t: the connection to the PostgreSQL server was lost" "$tmp/out.txt" || fail "#t says the connection was lost"
grep -q "t:fetch: the connection to the PostgreSQL server was lost" "$tmp/out.txt" || fail "t:fetch says so too"
ok "a lost connection is an error that says so"
