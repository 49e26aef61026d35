#!/bin/sh
# bench/bench_db.sh: estimation inside the database (section db of
# bench/run.sh; SECTION=db sh bench/run.sh, or alone).
#
# For each N in DB_ROWS (default "1000000 10000000"), bench/db_gen.c writes
# an invented farm trial of N rows x 8 columns (seed 1) into a fresh SQLite
# file and into a throw-away PostgreSQL 15 cluster (initdb in a temporary
# folder, pg_ctl on a Unix socket, an unprivileged server user when run as
# root; COPY FROM STDIN through psql); the load times are printed, not
# counted.  Then, per engine, one sluice process estimates the effect of
# irrigated on yield_t given the five covariates with the lazy table as
# data (the rows stay in the database), and one fetches the rows into a
# frame first (t:fetch) and estimates in memory: the baseline.  Each
# process is timed from outside (wall clock) and its peak RSS taken from
# getrusage(RUSAGE_CHILDREN) of a small Python parent.  Printed: time and
# peak memory in the database beside the baseline as ratios, and the peak
# memory at the largest N beside the smallest (about 1: memory must not
# grow with rows).  The exit status is non-zero only when a run crashes or
# the two estimates differ by more than 1e-8 relative; timings never fail.
#
# DB_WHAT: aipw (estimate{method = "aipw"}), ols (ols{} of yield_t on
# irrigated and the covariates, the coefficient of irrigated), or auto
# (default): aipw when estimate{} takes a lazy table, else ols.
# DB_ENGINES: "sqlite postgresql" (default) or either.  B: the build.
set -u
cd "$(dirname "$0")/.." || exit 1
B=${B:-build}
PYTHON=${PYTHON:-python3}
DB_ROWS=${DB_ROWS:-"1000000 10000000"}
DB_ENGINES=${DB_ENGINES:-"sqlite postgresql"}
DB_WHAT=${DB_WHAT:-auto}
pgbin=/usr/lib/postgresql/15/bin
exe=$B/sluice
fail=0

val() { printf '%s\n' "$1" | tr ' ' '\n' | sed -n "s/^$2=//p" | head -n 1; }
ratio() {
  awk -v a="${1:-}" -v b="${2:-}" 'BEGIN {
    if (a == "" || b == "" || b + 0 <= 0) print "-";
    else if (a / b < 0.01) printf "%.2gx\n", a / b; else printf "%.2fx\n", a / b }'
}
secs() { [ -z "${1:-}" ] && { echo "-"; return; }
  awk -v t="$1" 'BEGIN { printf (t < 10 ? "%.3f s" : "%.2f s"), t }'; }
mb() { [ -z "${1:-}" ] && { echo "-"; return; }
  awk -v k="$1" 'BEGIN { printf "%.1f MB", k * 1024 / 1e6 }'; }
# rows_name N: 1e7, 3e5, or N itself when it has more than one digit.
rows_name() { awk -v n="$1" 'BEGIN { e = 0; m = n; while (m >= 10 && m % 10 == 0) { m /= 10; e++ }
  if (m < 10 && e > 1) printf "%de%d\n", m, e; else print n }'; }
row() { printf '%-34s %-10s %-8s %-10s %-32s %s\n' "$1" "$2" "$3" "$4" "$5" "$6"; }
failed() { echo "FAILED: $*"; fail=1; }
note() { notes="$notes
$*"; }
notes=""

[ "${DB_NO_HEADER:-}" = 1 ] || row "figure" "sluice" "target" "vs target" "reference" "vs ref"
if [ ! -x "$exe" ]; then
  echo "db                                 skipped: $exe not built"; exit 0
fi
if ! command -v "$PYTHON" >/dev/null 2>&1; then
  echo "db                                 skipped: $PYTHON not found (it measures peak memory)"; exit 0
fi
tmp=$(mktemp -d /tmp/sluice-benchdb.XXXXXX) || exit 1
started=
. tests/lib/pg_user.sh
trap pg_cleanup EXIT
trap 'exit 1' INT TERM
# shellcheck disable=SC2046
cc -std=c11 -O2 -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE bench/db_gen.c \
  $(pkg-config --libs sqlite3) -lm -o "$tmp/db_gen" || { failed "cannot compile bench/db_gen.c"; exit 1; }

# measure OUT CMD...: runs CMD with its output in OUT; OUT.m gets
# "wall_s=... rss_kb=... rc=..." (the peak RSS of CMD alone: the parent
# starts it with vfork and waits for nothing else).
measure() {
  m_out=$1; shift
  "$PYTHON" -c '
import resource, subprocess, sys, time
t0 = time.monotonic()
with open(sys.argv[1], "w") as out:
    rc = subprocess.call(sys.argv[2:], stdout=out, stderr=subprocess.STDOUT)
t1 = time.monotonic()
kb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
with open(sys.argv[1] + ".m", "w") as m:
    m.write("wall_s=%.6f rss_kb=%d rc=%d\n" % (t1 - t0, kb, rc))
sys.exit(1 if rc else 0)' "$m_out" "$@"
}

# The script each sluice process runs: TARGET WHERE (db or fetch) WHAT.
cat > "$tmp/est.lua" <<'LUA'
local target, where, what = arg[1], arg[2], arg[3]
local t = connect(target):table("farm")
local data = where == "db" and t or t:fetch{limit = 20000000}
local set = {"soil_ph", "rain_mm", "slope", "elevation", "plot_age"}
if what == "aipw" then
  local r = estimate{data = data, treatment = "irrigated", outcome = "yield_t",
                     set = set, method = "aipw"}
  print(string.format("estimate=%.17g se=%.17g n=%d", r.estimate, r.se, r.n))
else
  local m = ols{data = data, y = "yield_t", x = {"irrigated", table.unpack(set)}}
  print(string.format("estimate=%.17g se=%.17g n=%d", m.coef.irrigated, m.se.irrigated, m.n))
end
LUA

# ---- what to measure: estimate{} if it takes a lazy table ----
"$tmp/db_gen" sqlite 2000 1 "$tmp/probe.db" 2>/dev/null || failed "db_gen sqlite (probe)"
if [ "$DB_WHAT" = auto ]; then
  if "$exe" "$tmp/est.lua" "$tmp/probe.db" db aipw > "$tmp/probe.txt" 2>&1; then
    DB_WHAT=aipw
  else
    DB_WHAT=ols
    note "       db: estimate{} on a lazy table failed, so ols{} is measured in its place:"
    note "         $(grep -m 1 'estimate' "$tmp/probe.txt" | sed 's/^.*est\.lua:[0-9]*: //; s/;.*//')"
  fi
fi
case $DB_WHAT in
  aipw) label="aipw" ;;
  ols) label="ols" ;;
  *) echo "bench_db: DB_WHAT must be auto, aipw or ols, not '$DB_WHAT'"; exit 2 ;;
esac
# the process that only starts, connects and counts: its peak memory
"$exe" -e "assert(#connect('$tmp/probe.db'):table('farm') == 2000)" >/dev/null 2>&1 ||
  failed "connect to an SQLite file"
measure "$tmp/base.txt" "$exe" -e "local n = #connect('$tmp/probe.db'):table('farm')" ||
  failed "sluice -e (connect and count)"
base_kb=$(val "$(cat "$tmp/base.txt.m")" rss_kb)

# ---- PostgreSQL: a throw-away cluster ----
pg=
case " $DB_ENGINES " in *" postgresql "*) pg=1 ;; esac
if [ -n "$pg" ] && { [ ! -x "$pgbin/initdb" ] || ! command -v psql >/dev/null 2>&1; }; then
  echo "db, PostgreSQL                     skipped: postgresql-15 (server and client) not installed"
  pg=
fi
if [ -n "$pg" ]; then
  pg_folder "$tmp" || { failed "a folder for the server"; pg=; }
fi
if [ -n "$pg" ]; then
  # no WAL for the tables loaded in the transaction that makes them, no
  # fsync; every statement's duration logged (the queries of a run counted)
  if as_server "$pgbin/initdb" -D "$sock/data" -U sluice --auth=trust -E UTF8 --no-locale \
       > "$tmp/pg.txt" 2>&1 &&
     started=1 &&
     as_server "$pgbin/pg_ctl" -D "$sock/data" -l "$sock/server.log" -w -t 60 \
       -o "-k $sock -c listen_addresses= -F -c wal_level=minimal -c max_wal_senders=0 -c log_min_duration_statement=0" \
       start > "$tmp/pg.txt" 2>&1 &&
     psql -X -q -v ON_ERROR_STOP=1 -h "$sock" -U sluice -d postgres -c "CREATE DATABASE bench" \
       > "$tmp/pg.txt" 2>&1; then
    pg_target="postgresql://sluice@/bench?host=$sock"
  else
    failed "a PostgreSQL cluster: $(tail -n 3 "$tmp/pg.txt" | tr '\n' ' ')"; pg=
  fi
fi
psqlq() { psql -X -q -A -t -v ON_ERROR_STOP=1 -h "$sock" -U sluice -d bench "$@"; }

# load ENGINE N: the rows in a fresh SQLite file, or the PostgreSQL table
# farm made anew; sets target and load_s.
load() {
  l_a=$(date +%s.%N)
  if [ "$1" = sqlite ]; then
    target=$tmp/farm.db
    "$tmp/db_gen" sqlite "$2" 1 "$target" 2> "$tmp/gen.txt" || return 1
  else
    target=$pg_target
    "$tmp/db_gen" csv "$2" 1 2> "$tmp/gen.txt" | psqlq -c "BEGIN" \
      -c "DROP TABLE IF EXISTS farm" \
      -c "CREATE TABLE farm (id integer NOT NULL, irrigated integer NOT NULL,
            yield_t double precision, soil_ph double precision, rain_mm double precision,
            slope double precision, elevation double precision, plot_age integer)" \
      -c "COPY farm FROM STDIN WITH (FORMAT csv, HEADER true, FREEZE true)" \
      -c "COMMIT" -c "ALTER TABLE farm ADD PRIMARY KEY (id)" -c "VACUUM ANALYZE farm" \
      > "$tmp/load.txt" 2>&1 || { cat "$tmp/load.txt"; return 1; }
    [ "$(psqlq -c "SELECT count(*) FROM farm")" = "$2" ] || return 1
  fi
  l_z=$(date +%s.%N)
  load_s=$(awk -v a="$l_a" -v z="$l_z" 'BEGIN { print z - a }')
}

# queries LINE: the SELECT statements the server logged after line LINE
# of its log, their total and longest time ("queries=K total_s=T max_s=M").
queries() {
  tail -n +"$(($1 + 1))" "$sock/server.log" | awk '/duration: [0-9.]+ ms +(statement|execute[^:]*): SELECT/ {
    for (i = 1; i < NF; i++) if ($i == "duration:") { d = $(i + 1) / 1000; break }
    k++; s += d; if (d > m) m = d }
    END { printf "queries=%d total_s=%.3f max_s=%.3f\n", k, s, m }'
}
# rel A B: |A - B| / |B|, two digits; close A B: within 1e-8 relative.
rel() { awk -v a="$1" -v b="$2" 'BEGIN { d = a - b; if (d < 0) d = -d; s = b < 0 ? -b : b
  if (s > 0) printf "%.2g\n", d / s; else print "-" }'; }
close() { awk -v a="$1" -v b="$2" 'BEGIN { d = a - b; if (d < 0) d = -d; s = b < 0 ? -b : b
  exit !(a != "" && b != "" && d <= 1e-8 * s) }'; }

# ---- each size, each engine ----
first_n=""; last_n=""
for n in $DB_ROWS; do
  nn=$(rows_name "$n")
  [ -z "$first_n" ] && first_n=$n
  last_n=$n
  for eng in $DB_ENGINES; do
    case $eng in
      sqlite) en=SQLite ;;
      postgresql) en=PostgreSQL; [ -n "$pg" ] || continue ;;
      *) echo "bench_db: unknown engine '$eng' (sqlite, postgresql)"; exit 2 ;;
    esac
    if ! load "$eng" "$n"; then failed "loading $nn rows into $en"; continue; fi
    note "       db: $nn rows loaded into $en in $(secs "$load_s") (not counted)"
    for where in db fetch; do
      out=$tmp/$eng.$n.$where
      m=""; r=""
      [ "$eng" = postgresql ] && log_at=$(wc -l < "$sock/server.log")
      if measure "$out" "$exe" "$tmp/est.lua" "$target" "$where" "$DB_WHAT"; then
        m=$(cat "$out.m"); r=$(grep -m 1 '^estimate=' "$out")
      else
        failed "$label $where on $en, $nn rows: $(tail -n 2 "$out" | tr '\n' ' ' | cut -c 1-200)"
      fi
      [ "$eng" = postgresql ] && [ "$where" = db ] && q_db=$(queries "$log_at")
      if [ "$where" = db ]; then t_db=$(val "$m" wall_s); k_db=$(val "$m" rss_kb); r_db=$r
      else t_fetch=$(val "$m" wall_s); k_fetch=$(val "$m" rss_kb); r_fetch=$r; fi
    done
    row "$label in $en $nn, time" "$(secs "$t_db")" "$(secs "$t_fetch")" "$(ratio "$t_db" "$t_fetch")" \
        "baseline: t:fetch + in memory" ""
    row "$label in $en $nn, peak mem." "$(mb "$k_db")" "$(mb "$k_fetch")" "$(ratio "$k_db" "$k_fetch")" \
        "baseline: t:fetch + in memory" ""
    e_db=$(val "$r_db" estimate); e_fe=$(val "$r_fetch" estimate)
    if [ -n "$e_db" ] && [ -n "$e_fe" ]; then
      close "$e_db" "$e_fe" || failed "$label on $en, $nn rows: $e_db in the database, $e_fe in memory"
      note "         $en $nn: estimate $e_db in the database, $e_fe in memory (relative difference" \
           "$(rel "$e_db" "$e_fe")); SE $(val "$r_db" se) and $(val "$r_fetch" se); n $(val "$r_db" n)"
      [ "$eng" = postgresql ] && note "           the server ran $(val "$q_db" queries) SELECTs for it," \
        "$(secs "$(val "$q_db" total_s)") in all, the longest $(secs "$(val "$q_db" max_s)")"
    fi
    eval "k_${eng}_$n=\$k_db"
  done
  rm -f "$tmp/farm.db"
done

# ---- memory against rows ----
if [ "$first_n" != "$last_n" ]; then
  for eng in $DB_ENGINES; do
    case $eng in sqlite) en=SQLite ;; *) en=PostgreSQL ;; esac
    eval "k1=\${k_${eng}_$first_n:-} k2=\${k_${eng}_$last_n:-}"
    [ -n "$k1" ] && [ -n "$k2" ] || continue
    row "$label in $en, peak mem. $(rows_name "$last_n")" "$(mb "$k2")" "$(mb "$k1")" "$(ratio "$k2" "$k1")" \
        "baseline: the same at $(rows_name "$first_n") rows" "about 1"
  done
fi
echo "       db: $label of irrigated on yield_t given soil_ph, rain_mm, slope, elevation, plot_age;" \
     "wall time and peak RSS of"
echo "         whole sluice processes (start-up and connection included: $(mb "$base_kb") for one that" \
     "only connects and counts);"
echo "         the baseline is the same process fetching the rows (t:fetch) first; the server's own" \
     "memory and CPU are not counted$notes"
[ -n "$pg" ] && echo "         PostgreSQL $("$pgbin/postgres" --version | awk '{print $3}'): the default" \
  "settings (shared_buffers 128 MB, work_mem 4 MB) but fsync off; $(nproc 2>/dev/null || echo '?') cores"
exit $fail
