#!/bin/sh
# bench/run.sh: the benchmarks behind `make bench`.
#
# Builds the programs in bench/ into $B/bench, writes random DAGs in the
# graph notation there, and prints each figure beside its baseline as a
# ratio (sluice / baseline: below 1 is faster or smaller).  Timings never
# fail the run: the exit status is non-zero only when a program crashes or
# a parsed graph is not the one written.
set -u
cd "$(dirname "$0")/.." || exit 1
B=${B:-build}
PYTHON=${PYTHON:-/usr/bin/python3}
D=$B/bench
fail=0

# val LINE KEY: the value of KEY=... in a line of key=value pairs.
val() { printf '%s\n' "$1" | tr ' ' '\n' | sed -n "s/^$2=//p" | head -n 1; }
# ratio A B: A/B as "0.12x", or "-" when either is missing.
ratio() {
  awk -v a="${1:-}" -v b="${2:-}" 'BEGIN {
    if (a == "" || b == "" || b + 0 <= 0) print "-"; else printf "%.2fx\n", a / b }'
}
secs() { awk -v t="$1" 'BEGIN { printf (t < 10 ? "%.3f s" : "%.2f s"), t }'; }
ms() { awk -v t="$1" 'BEGIN { printf "%.1f ms", t }'; }
# mb KIB: kibibytes (ru_maxrss) as megabytes of 10^6 bytes.
mb() { awk -v k="$1" 'BEGIN { printf "%.1f MB", k * 1024 / 1e6 }'; }
kdiff() { awk -v a="$1" -v b="$2" 'BEGIN { print a - b }'; }
row() { printf '%-34s %-10s %-8s %-10s %-32s %s\n' "$1" "$2" "$3" "$4" "$5" "$6"; }
failed() { echo "FAILED: $*"; fail=1; }

if [ ! -f "$B/libsluice.a" ]; then
  echo "skipped: $B/libsluice.a not built (run make first)"
  echo "bench: done"
  exit 0
fi
mkdir -p "$D"
for p in gen_graph bench_parse bench_start; do
  # shellcheck disable=SC2046
  cc -std=c11 -O2 -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE -Isrc/graph \
    "bench/$p.c" "$B/libsluice.a" $(pkg-config --libs libgvc) -lm -o "$D/$p" ||
    { echo "bench: cannot compile bench/$p.c"; exit 1; }
done

# ---- the graphs ----
G5=$D/dag_1e5.sl
G6=$D/dag_1e6.sl
M5=$("$D/gen_graph" 100000 500000 1 "$G5") || failed "gen_graph 1e5"
M6=$("$D/gen_graph" 1000000 5000000 2 "$G6") || failed "gen_graph 1e6"

row "figure" "sluice" "target" "vs target" "reference" "vs ref"

# ---- 1: 1e5 nodes / 5e5 edges ----
t5=""; t5cold=""; m5=""; r0=""; rm1=""
r0=$("$D/bench_parse" read "$G5") || failed "bench_parse read $G5"
rt=$("$D/bench_parse" parse "$G5" 100000 500000 "$(val "$M5" sum)" 3) ||
  failed "bench_parse parse $G5 (timing run)"
rm1=$("$D/bench_parse" parse "$G5" 100000 500000 "$(val "$M5" sum)" 1) ||
  failed "bench_parse parse $G5 (memory run)"
t5=$(val "$rt" best_s)
t5cold=$(val "$rm1" best_s)
if [ -n "$(val "$rm1" rss_kb)" ] && [ -n "$(val "$r0" rss_kb)" ]; then
  m5=$(kdiff "$(val "$rm1" rss_kb)" "$(val "$r0" rss_kb)")
fi

nxt="networkx not installed"; nxm=$nxt; nxtr="-"; nxmr="-"; rn=""
if command -v "$PYTHON" >/dev/null 2>&1; then
  if rn=$("$PYTHON" bench/nx_baseline.py "$G5" 100000 500000 3); then
    if [ -z "$(val "$rn" missing)" ]; then
      nt=$(val "$rn" best_s)
      nm=$(kdiff "$(val "$rn" rss_kb)" "$(val "$rn" base_kb)")
      nxt="networkx $(secs "$nt")"; nxtr=$(ratio "$t5" "$nt")
      nxm="networkx $(mb "$nm")"; nxmr=$(ratio "$m5" "$nm")
    else
      rn=""
    fi
  else
    failed "bench/nx_baseline.py (crashed, or networkx built a different graph)"
    rn=""
  fi
else
  nxt="$PYTHON not found"; nxm=$nxt
fi
[ -n "$t5" ] &&
  row "parse 1e5 nodes / 5e5 edges" "$(secs "$t5")" "0.5 s" "$(ratio "$t5" 0.5)" "$nxt" "$nxtr"
[ -n "$m5" ] &&
  row "peak memory, 1e5 / 5e5 parse" "$(mb "$m5")" "200 MB" \
    "$(ratio "$m5" "$(awk 'BEGIN { print 200e6 / 1024 }')")" "$nxm" "$nxmr"

# ---- 2: 1e6 nodes / 5e6 edges, once ----
r6=$("$D/bench_parse" read "$G6") || failed "bench_parse read $G6"
rp6=$("$D/bench_parse" parse "$G6" 1000000 5000000 "$(val "$M6" sum)" 1) ||
  failed "bench_parse parse $G6"
t6=$(val "$rp6" best_s)
if [ -n "$t6" ]; then
  lin=$(awk -v t="${t5:-0}" 'BEGIN { print t * 10 }')
  row "parse 1e6 nodes / 5e6 edges" "$(secs "$t6")" "-" "-" \
    "10 x the 1e5 figure: $(secs "$lin")" "$(ratio "$t6" "$lin")"
  if [ -n "$m5" ] && [ -n "$(val "$r6" rss_kb)" ]; then
    m6=$(kdiff "$(val "$rp6" rss_kb)" "$(val "$r6" rss_kb)")
    linm=$(awk -v m="$m5" 'BEGIN { print m * 10 }')
    row "peak memory, 1e6 / 5e6 parse" "$(mb "$m6")" "-" "-" \
      "10 x the 1e5 figure: $(mb "$linm")" "$(ratio "$m6" "$linm")"
  fi
fi
rm -f "$G6"   # 94 MB; the next run writes it again

# ---- 3: shell start-up ----
lua=""; luat="lua5.4 not installed"
if command -v lua5.4 >/dev/null 2>&1; then
  if rl=$("$D/bench_start" 30 lua5.4 -e ''); then
    lua=$(val "$rl" median_ms); luat="lua5.4 -e '': $(ms "$lua")"
  else
    luat="lua5.4 -e '' failed ($rl)"
  fi
fi
why=""
if [ -x "$B/sluice" ]; then
  how="-q -e ''"
  rs=$("$D/bench_start" 30 "$B/sluice" -q -e ''); st=$?
  if [ "$st" -eq 3 ]; then   # -e code fails: fall back to --version
    why="sluice -q -e '' exited with $(val "$rs" status), so --version was timed instead"
    how="--version"
    rs=$("$D/bench_start" 30 "$B/sluice" --version); st=$?
  fi
  if [ "$st" -eq 0 ]; then
    s=$(val "$rs" median_ms)
    row "start-up, sluice $how" "$(ms "$s")" "20 ms" "$(ratio "$s" 20)" "$luat" "$(ratio "$s" "$lua")"
  elif [ "$st" -eq 4 ]; then
    failed "$B/sluice $how crashed ($rs)"
  else
    row "start-up, sluice $how" "failed ($rs)" "20 ms" "-" "$luat" "-"
  fi
else
  echo "start-up, sluice -q -e ''          skipped: $B/sluice not built ($luat)"
fi

# ---- notes ----
echo "notes: times are the parse alone, text already in memory; 1e5 is the best of 3" \
     "(first, cold run: $(secs "${t5cold:-0}"))"
echo "       memory is the peak RSS of a parsing process minus that of one that only reads the file"
echo "       whole-process peaks: sluice $(mb "$(val "$rm1" rss_kb)")${rn:+, networkx $(mb "$(val "$rn" rss_kb)")}," \
     "for $(awk -v b="$(val "$r0" bytes)" 'BEGIN { printf "%.1f MB", b / 1e6 }') of text"
[ -n "$why" ] && echo "       start-up: $why"
echo "bench: done"
exit $fail
