#!/bin/sh
# bench/run.sh: the benchmarks behind `make bench`.
#
# Builds the programs in bench/ into $B/bench, writes random DAGs in the
# graph notation there, and prints each figure beside its baseline as a
# ratio (sluice / baseline: below 1 is faster or smaller; for a rate, the
# ratio of the times, baseline rate / sluice rate).  Timings never fail the
# run: the exit status is non-zero only when a program crashes, a parsed
# graph is not the one written, or two answers disagree (sluice and
# networkx, or sluice and a property every answer must have).
set -u
cd "$(dirname "$0")/.." || exit 1
B=${B:-build}
PYTHON=${PYTHON:-/usr/bin/python3}
D=$B/bench
fail=0

# val LINE KEY: the value of KEY=... in a line of key=value pairs.
val() { printf '%s\n' "$1" | tr ' ' '\n' | sed -n "s/^$2=//p" | head -n 1; }
# ratio A B: A/B as "0.12x" (two significant digits below 0.01, "0.00068x"),
# or "-" when either is missing.
ratio() {
  awk -v a="${1:-}" -v b="${2:-}" 'BEGIN {
    if (a == "" || b == "" || b + 0 <= 0) print "-";
    else if (a / b < 0.01) printf "%.2gx\n", a / b; else printf "%.2fx\n", a / b }'
}
secs() { awk -v t="$1" 'BEGIN { printf (t < 10 ? "%.3f s" : "%.2f s"), t }'; }
ms() { awk -v t="$1" 'BEGIN { printf "%.1f ms", t }'; }
# tms SECONDS: as milliseconds, or microseconds below 0.1 ms.
tms() { awk -v t="$1" 'BEGIN { if (t < 1e-4) printf "%.1f us", t * 1e6;
  else if (t < 1) printf "%.2f ms", t * 1e3; else printf "%.3f s", t }'; }
# rate PER_S: "5.09 M/s", "119 k/s" or "212 /s".
rate() { awk -v r="$1" 'BEGIN { if (r >= 1e6) printf "%.2f M/s", r / 1e6;
  else if (r >= 1e4) printf "%.0f k/s", r / 1e3; else printf "%.0f /s", r }'; }
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
# SECTION=NAME runs some sections alone: model (9, 10), log (10), estimate
# (8), routes (12), implications (14), citest (15), coverage (16), db (17).
section_range() {
  case $1 in
    model) echo "9 10" ;; log) echo "10 10" ;; estimate) echo "8 8" ;;
    routes) echo "12 12" ;; implications) echo "14 14" ;; citest) echo "15 15" ;;
    coverage) echo "16 16" ;; db) echo "17 17" ;;
  esac
}
if [ -n "${SECTION:-}" ]; then
  set -- $(section_range "$SECTION")
  [ $# = 2 ] || { echo "bench: no section '$SECTION' (model, log, estimate, routes, implications, citest, coverage, db)"; exit 2; }
  row "figure" "sluice" "target" "vs target" "reference" "vs ref"
  eval "$(sed -n "/^# ---- $1: /,/^# ---- end of $2 /p" bench/run.sh)"
  echo "bench: done"
  exit $fail
fi
for p in gen_graph bench_parse bench_start bench_dsep bench_trails bench_adjust; do
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

# ---- 4: d-separation on the 1e5 graph ----
# 200 queries, each timed alone (best of 3); networkx repeats the first
# NX_QUERIES of them (both kinds: they alternate), as it takes seconds each.
DQ=$D/dsep_queries.txt
NXQ=${NX_QUERIES:-6}
rd=""; nd=""
if [ -f "$G5" ]; then
  rd=$("$D/bench_dsep" "$G5" 200 11 3 "$DQ") ||
    { failed "bench_dsep (crashed, or an answer broke the local Markov property)"; rd=""; }
fi
if [ -n "$rd" ]; then
  dref="networkx not installed"; dtgt="-"; dtr="-"; drr="-"
  if command -v "$PYTHON" >/dev/null 2>&1; then
    if nd=$("$PYTHON" bench/nx_dsep.py "$G5" "$DQ" "$NXQ"); then
      if [ -z "$(val "$nd" missing)" ]; then
        np=$(val "$nd" per_query_s); ss=$(val "$nd" sluice_s)
        np100=$(awk -v t="$np" 'BEGIN { print t / 100 }')
        dtgt=$(tms "$np100"); dtr=$(ratio "$ss" "$np100")
        dref="networkx $(tms "$np") ($(val "$nd" compared) queries)"; drr=$(ratio "$ss" "$np")
      else
        nd=""
      fi
    else
      failed "bench/nx_dsep.py (crashed, or networkx and sluice disagree)"
      nd=""
    fi
  else
    dref="$PYTHON not found"
  fi
  row "d-separation 1e5 / 5e5, per query" "$(tms "$(val "$rd" mean_s)")" "$dtgt" "$dtr" "$dref" "$drr"
fi

# ---- 5: trails on a dense graph: 15 nodes, 52 of the 105 pairs joined ----
GT=$D/dense_15.sl
rtr=""; ntr=""
if "$D/gen_graph" 15 52 3 "$GT" >/dev/null; then
  rtr=$("$D/bench_trails" "$GT" n0 n14 3) || { failed "bench_trails $GT"; rtr=""; }
else
  failed "gen_graph 15"
fi
if [ -n "$rtr" ]; then
  tref="networkx not installed"; trr="-"
  if command -v "$PYTHON" >/dev/null 2>&1; then
    if ntr=$("$PYTHON" bench/nx_paths.py "$GT" n0 n14); then
      if [ -n "$(val "$ntr" missing)" ]; then
        ntr=""
      elif [ "$(val "$ntr" paths)" != "$(val "$rtr" trails)" ] ||
           [ "$(val "$ntr" edges)" != "$(val "$rtr" edges)" ]; then
        failed "trails n0 .. n14: sluice $(val "$rtr" trails) ($(val "$rtr" edges) edges)," \
               "networkx $(val "$ntr" paths) ($(val "$ntr" edges) edges)"
        tref="networkx: a different count"
      else
        tref="networkx $(rate "$(val "$ntr" per_s)")"; trr=$(ratio "$(val "$ntr" per_s)" "$(val "$rtr" per_s)")
      fi
    else
      failed "bench/nx_paths.py (crashed)"
      ntr=""
    fi
  else
    tref="$PYTHON not found"
  fi
  row "trails, 15 nodes / 52 edges" "$(rate "$(val "$rtr" per_s)")" "-" "-" "$tref" "$trr"
fi

# ---- 6: minimal adjustment sets, 1e3 nodes / 5e3 edges ----
# No library in Debian lists them; the reference is the textbook delay bound
# O(n(n + m)) per set, taken as n(n + m) steps of an assumed 1 ns each.
GA=$D/dag_1e3.sl
ra=""
if "$D/gen_graph" 1000 5000 4 "$GA" >/dev/null; then
  ra=$("$D/bench_adjust" "$GA" n894 n999 10000) ||
    { failed "bench_adjust (crashed, or a set listed is not a minimal adjustment set)"; ra=""; }
else
  failed "gen_graph 1000"
fi
if [ -n "$ra" ]; then
  bnd=$(awk -v n="$(val "$ra" nodes)" -v m="$(val "$ra" edges)" 'BEGIN { print n * (n + m) * 1e-9 }')
  bref="n(n+m) steps at 1 ns: $(tms "$bnd")"
  row "adjust 1e3 / 5e3, first set" "$(tms "$(val "$ra" first_s)")" "-" "-" "$bref" \
    "$(ratio "$(val "$ra" first_s)" "$bnd")"
  row "adjust 1e3 / 5e3, mean delay" "$(tms "$(val "$ra" mean_delay_s)")" "-" "-" "$bref" \
    "$(ratio "$(val "$ra" mean_delay_s)" "$bnd")"
  row "adjust 1e3 / 5e3, sets per second" "$(rate "$(val "$ra" per_s)")" "-" "-" \
    "1 / that bound: $(rate "$(awk -v b="$bnd" 'BEGIN { print 1 / b }')")" \
    "$(ratio "$(awk -v b="$bnd" 'BEGIN { print 1 / b }')" "$(val "$ra" per_s)")"
fi

# ---- notes ----
echo "notes: times are the parse alone, text already in memory; 1e5 is the best of 3" \
     "(first, cold run: $(secs "${t5cold:-0}"))"
echo "       memory is the peak RSS of a parsing process minus that of one that only reads the file"
echo "       whole-process peaks: sluice $(mb "$(val "$rm1" rss_kb)")${rn:+, networkx $(mb "$(val "$rn" rss_kb)")}," \
     "for $(awk -v b="$(val "$r0" bytes)" 'BEGIN { printf "%.1f MB", b / 1e6 }') of text"
[ -n "$why" ] && echo "       start-up: $why"
echo "       ratios of rates (trails, sets per second) are of the times: baseline rate / sluice rate"
if [ -n "$rd" ]; then
  echo "       d-separation: 200 queries, each the best of 3; the even ones a random x, y and 0-5 other"
  echo "         random nodes given ($(val "$rd" random_separated) of 100 separated), the odd ones x before y given pa(y)"
  echo "         (all 100 separated, by the local Markov property); target: 1/100 of networkx's time"
  if [ -n "$nd" ]; then
    echo "         networkx $(val "$nd" version) repeated the first $(val "$nd" compared) and agreed; the ratios are"
    echo "         over those, where sluice took $(tms "$(val "$nd" sluice_s)") per query"
  fi
fi
if [ -n "$rtr" ]; then
  echo "       trails: all $(val "$rtr" trails) trails n0 .. n14 of a 15-node, 52-edge DAG, best of 3"
  [ -n "$ntr" ] && echo "         networkx all_simple_paths on the undirected skeleton, once:" \
    "$(secs "$(val "$ntr" best_s)"); same count and total length"
fi
if [ -n "$ra" ]; then
  echo "       adjustment: effect of n894 on n999, stopped at $(val "$ra" sets) sets of mean size $(val "$ra" mean_size);"
  echo "         longest delay $(tms "$(val "$ra" max_delay_s)"); the bound is O(n(n+m)) per set (van der Zander et al."
  echo "         2019; Kloks and Kratsch 1998), at an assumed 1 ns per step: no library lists these sets"
fi
# ---- 7: read_csv, 1e6 rows x 8 numeric columns, beside pandas ----
# Speed is the best of 3 reads in one process; memory the peak RSS of a
# process that reads once, minus its RSS before the read.  The memory
# target is 1.5 x the parsed columns (1e6 x 8 doubles).
CSVF=$D/num_1e6x8.csv
rc=""; rc1=""; pc=""
# shellcheck disable=SC2046
if cc -std=c11 -O2 -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE -Isrc/graph -Isrc/stats \
     bench/bench_csv.c "$B/libsluice.a" $(pkg-config --libs sqlite3 libsodium) -lcsv -lm \
     -o "$D/bench_csv"; then
  "$D/bench_csv" gen "$CSVF" 1000000 8 1 >/dev/null || failed "bench_csv gen"
  rc=$("$D/bench_csv" read "$CSVF" 3) || { failed "bench_csv read (timing run)"; rc=""; }
  rc1=$("$D/bench_csv" read "$CSVF" 1) || { failed "bench_csv read (memory run)"; rc1=""; }
else
  failed "cannot compile bench/bench_csv.c"
fi
if [ -n "$rc" ] && [ -n "$rc1" ]; then
  mbs=$(awk -v b="$(val "$rc" bytes)" -v t="$(val "$rc" best_s)" 'BEGIN { print b / 1e6 / t }')
  cm=$(kdiff "$(val "$rc1" rss_kb)" "$(val "$rc1" base_kb)")
  ctgt=$(awk -v p="$(val "$rc1" parsed_kb)" 'BEGIN { print 1.5 * p }')
  cref="pandas not installed"; cmref=$cref; crr="-"; cmr="-"
  if command -v "$PYTHON" >/dev/null 2>&1; then
    if pc=$("$PYTHON" bench/bench_csv.py "$CSVF" 3); then
      if [ -z "$(val "$pc" missing)" ]; then
        pmbs=$(awk -v b="$(val "$rc" bytes)" -v t="$(val "$pc" best_s)" 'BEGIN { print b / 1e6 / t }')
        pm=$(kdiff "$(val "$pc" rss_kb)" "$(val "$pc" base_kb)")
        cref=$(awk -v r="$pmbs" 'BEGIN { printf "pandas %.1f MB/s", r }'); crr=$(ratio "$pmbs" "$mbs")
        cmref="pandas $(mb "$pm")"; cmr=$(ratio "$cm" "$pm")
        awk -v a="$(val "$rc" sum)" -v b="$(val "$pc" sum)" 'BEGIN {
          d = a - b; if (d < 0) d = -d; s = b < 0 ? -b : b; exit !(d <= 1e-9 * s) }' ||
          failed "read_csv: sluice and pandas sum the file to $(val "$rc" sum) and $(val "$pc" sum)"
      else
        pc=""
      fi
    else
      failed "bench/bench_csv.py (crashed)"; pc=""
    fi
  else
    cref="$PYTHON not found"; cmref=$cref
  fi
  rm -f "$CSVF"   # 59 MB; the next run writes it again
  row "read_csv 1e6 x 8 numeric" "$(awk -v r="$mbs" 'BEGIN { printf "%.1f MB/s", r }')" "-" "-" "$cref" "$crr"
  row "peak memory, read_csv 1e6 x 8" "$(mb "$cm")" "$(mb "$ctgt")" "$(ratio "$cm" "$ctgt")" "$cmref" "$cmr"
  echo "       read_csv: $(awk -v b="$(val "$rc" bytes)" 'BEGIN { printf "%.1f MB", b / 1e6 }') of text," \
       "best of 3 ($(secs "$(val "$rc" best_s)")${pc:+; pandas $(val "$pc" version) $(secs "$(val "$pc" best_s)"), dtype float64});"
  echo "       memory target 1.5 x the parsed columns ($(mb "$(val "$rc1" parsed_kb)")); the ratio beside" \
       "pandas is of the memory; the two sums of every value agree"
fi
# ---- 8: estimators, n = 1e5 rows, 6 covariates, 200 bootstrap replicates ----
# bench/bench_estimate.lua writes the data (seeded); then whole processes
# read the same CSV and estimate with 200 bootstrap replicates: sluice
# (bench/bench_estimate.lua) and the baseline bench/np_estimate.py, the same
# computation in plain numpy (lstsq per replicate; for aipw a Newton-Raphson
# logistic fit too).  Each is timed from outside with a wall clock, best of
# EST_REPS (default 3; the baseline once: it is slow).  The target is 1/10
# of the baseline's time.  The point estimates, on all the rows, must agree
# within 1e-8 relative (the replicates differ: each side resamples its own
# way).  SECTION=estimate runs this section alone.
ES=$D/est_1e5.csv
ES_B=200
ES_REPS=${EST_REPS:-3}
# es_best N CMD...: the best wall time of N runs of CMD in es_t, the output
# of the last in es_out; non-zero when a run fails.
es_best() {
  es_reps=$1; shift
  es_t=""; es_i=0
  while [ "$es_i" -lt "$es_reps" ]; do
    es_a=$(date +%s.%N)
    es_out=$("$@") || return 1
    es_z=$(date +%s.%N)
    es_t=$(awk -v a="$es_a" -v z="$es_z" -v t="$es_t" 'BEGIN {
      d = z - a; print (t == "" || d < t + 0) ? d : t }')
    es_i=$((es_i + 1))
  done
}
# es_rel A B: |A - B| / |B|, to two digits.
es_rel() { awk -v a="$1" -v b="$2" 'BEGIN { d = a - b; if (d < 0) d = -d; s = b < 0 ? -b : b
  if (s > 0) printf "%.2g\n", d / s; else print "-" }'; }
# es_close A B: whether A and B agree within 1e-8 relative.
es_close() {
  awk -v a="$1" -v b="$2" 'BEGIN { d = a - b; if (d < 0) d = -d; s = b < 0 ? -b : b
    exit !(a != "" && b != "" && d <= 1e-8 * s) }'
}
es_notes=""
if [ ! -x "$B/sluice" ]; then
  echo "estimators                         skipped: $B/sluice not built"
elif ! "$B/sluice" bench/bench_estimate.lua gen "$ES" 100000 1 >/dev/null; then
  failed "bench/bench_estimate.lua gen (crashed)"
else
  es_py=""
  if command -v "$PYTHON" >/dev/null 2>&1; then es_py=$PYTHON; fi
  for es_m in standardize aipw; do
    if ! es_best "$ES_REPS" "$B/sluice" bench/bench_estimate.lua "$es_m" "$ES" "$ES_B" 1; then
      failed "bench/bench_estimate.lua $es_m (crashed)"; continue
    fi
    es_r=$es_out
    es_s=$es_t
    es_ref="$PYTHON not found"; es_tgt="-"; es_tr="-"; es_rr="-"; es_p=""
    if [ -n "$es_py" ]; then
      if es_best 1 "$es_py" bench/np_estimate.py "$ES" "$es_m" "$ES_B" 1; then
        es_p=$es_out
        if [ -n "$(val "$es_p" missing)" ]; then
          es_ref="numpy not installed"; es_p=""
        else
          es_10=$(awk -v t="$es_t" 'BEGIN { print t / 10 }')
          es_tgt=$(secs "$es_10"); es_tr=$(ratio "$es_s" "$es_10")
          es_ref="numpy $(secs "$es_t")"; es_rr=$(ratio "$es_s" "$es_t")
          es_close "$(val "$es_r" estimate)" "$(val "$es_p" estimate)" ||
            failed "$es_m: sluice estimates $(val "$es_r" estimate)," \
                   "numpy $(val "$es_p" estimate)"
        fi
      else
        failed "bench/np_estimate.py $es_m (crashed)"; es_p=""
      fi
    fi
    [ "$(val "$es_r" boot)" = "$ES_B" ] ||
      es_notes="$es_notes
         $es_m: $(val "$es_r" boot_failed) of $ES_B sluice replicates failed"
    row "$es_m 1e5 x 6, boot $ES_B" "$(secs "$es_s")" "$es_tgt" "$es_tr" "$es_ref" "$es_rr"
    es_notes="$es_notes
         $es_m: point estimate sluice $(val "$es_r" estimate)${es_p:+, numpy $(val "$es_p" estimate)
           (relative difference $(es_rel "$(val "$es_r" estimate)" "$(val "$es_p" estimate)"))};
           bootstrap SE sluice $(val "$es_r" se)${es_p:+, numpy $(val "$es_p" se)}; sluice's analytic SE $(val "$es_r" se_analytic)"
  done
  echo "       estimators: wall time of whole processes that read the same CSV and estimate" \
       "(sluice best of $ES_REPS, numpy once);"
  echo "         y ~ 1 + t + W + t:W (least squares), aipw adding t ~ 1 + W (logistic); $(nproc 2>/dev/null || echo '?') cores${es_p:+; numpy $(val "$es_p" version)}$es_notes"
  rm -f "$ES"   # 11 MB; the next run writes it again
fi
# ---- end of 8 ----
# ---- 9: structural models: simulate 1e7 rows of a 20-node model; compare ----
# Target for the simulation: under 2 s, memory about rows x nodes x 8 bytes;
# beside numpy generating the same model.  Each run is a new process: the
# best of SEM_REPS (default 3) on every core, the slowest beside it (a new
# process's first touch of 1.6 GB costs what fresh memory costs on the
# machine), then one run on one thread.  Every run's column sums must agree
# bit for bit: the draws do not depend on the thread count.
# compare{} with 5 sets and 200 bootstrap replicates on 1e5 rows: seconds
# (no reference library does it).
if [ -x "$B/sluice" ]; then
  SEM_ROWS=${SEM_ROWS:-10000000}; SEM_REPS=${SEM_REPS:-3}
  sm_s=""; sm_worst=""; sm_kb=""; sm_sums=""; sm_k=0
  while [ "$sm_k" -lt "$SEM_REPS" ]; do
    sm_r=$( { SLUICE_NOW=1 /usr/bin/time -f "peak_kb=%M" "$B/sluice" bench/bench_sem.lua simulate "$SEM_ROWS"; } 2>&1 ) ||
      failed "bench_sem.lua simulate"
    sm_t=$(val "$sm_r" seconds)
    sm_s=$(awk -v a="$sm_s" -v b="$sm_t" 'BEGIN { print (a == "" || b + 0 < a + 0) ? b : a }')
    sm_worst=$(awk -v a="$sm_worst" -v b="$sm_t" 'BEGIN { print (a == "" || b + 0 > a + 0) ? b : a }')
    sm_kb=$(awk -v a="$sm_kb" -v b="$(val "$sm_r" peak_kb)" 'BEGIN { print (a == "" || b + 0 > a + 0) ? b : a }')
    [ -z "$sm_sums" ] && sm_sums=$(val "$sm_r" sums)
    [ "$(val "$sm_r" sums)" = "$sm_sums" ] || failed "simulate: two runs with seed 1 give different columns"
    sm_k=$((sm_k + 1))
  done
  sm_1=$(SLUICE_NOW=1 "$B/sluice" bench/bench_sem.lua simulate "$SEM_ROWS" 1) || failed "bench_sem.lua simulate, one thread"
  [ "$(val "$sm_1" sums)" = "$sm_sums" ] || failed "simulate: one thread and every core give different columns"
  sm_np=""
  if "$PYTHON" -c 'import numpy' 2>/dev/null; then
    sm_np=$("$PYTHON" bench/np_sem.py "$SEM_ROWS") || failed "np_sem.py"
  fi
  row "simulate 1e7 rows x 20 nodes" "$(secs "$sm_s")" "2 s" "$(ratio "$sm_s" 2)" \
      "${sm_np:+numpy $(secs "$(val "$sm_np" seconds)")}" "$(ratio "$sm_s" "$(val "$sm_np" seconds)")"
  row "  the slowest of $SEM_REPS runs" "$(secs "$sm_worst")" "2 s" "$(ratio "$sm_worst" 2)" "" ""
  row "  on one thread" "$(secs "$(val "$sm_1" seconds)")" "2 s" "$(ratio "$(val "$sm_1" seconds)" 2)" \
      "same columns as every core" ""
  sm_bound=$(awk -v r="$SEM_ROWS" 'BEGIN { print r * 20 * 8 / 1024 }')
  row "peak memory, that simulation" "$(mb "$sm_kb")" "$(mb "$sm_bound")" "$(ratio "$sm_kb" "$sm_bound")" \
      "${sm_np:+numpy $(val "$sm_np" peak_mb) MB}" ""
  cp_r=$(SLUICE_NOW=1 "$B/sluice" bench/bench_sem.lua compare 100000) || failed "bench_sem.lua compare"
  row "compare, 5 sets x 200 boot, 1e5" "$(secs "$(val "$cp_r" seconds)")" "-" "-" "-" "-"
  echo "       simulation: wall time of m:simulate alone, each run a new process; rows x nodes x 8 bytes is the memory bound; numpy: the same equations"
fi
# ---- 10: the session log ----
# Per-command overhead of the log at the prompt (target: under 1 ms plus the
# fsync), the replay of a 1 000-command log beside the same log run as a
# script, the fixed cost of the confined child, and the log parser.
if [ -x "$B/sluice" ]; then
  lg_dir=$(mktemp -d)
  i=0; : > "$lg_dir/in.lua"
  while [ $i -lt 1000 ]; do echo "x = $i + 1" >> "$lg_dir/in.lua"; i=$((i + 1)); done
  lg_t0=$(date +%s.%N); "$B/sluice" -q -i --no-log < "$lg_dir/in.lua" > /dev/null 2>&1; lg_t1=$(date +%s.%N)
  "$B/sluice" -q -i --log "$lg_dir/s.lua" < "$lg_dir/in.lua" > /dev/null 2>&1; lg_t2=$(date +%s.%N)
  lg_per=$(awk -v a="$lg_t0" -v b="$lg_t1" -v c="$lg_t2" 'BEGIN { print ((c - b) - (b - a)) / 1000 }')
  row "log overhead per command" "$(tms "$lg_per")" "1 ms" "$(ratio "$lg_per" 0.001)" "(includes the fsync)" ""
  # replay: sandboxed, trusted, and the same log run as a plain script (the
  # baseline: the same Lua work with no capture, no child, no sandbox)
  el() { awk -v a="$1" -v b="$2" 'BEGIN { print b - a }'; }
  lg_t3=$(date +%s.%N); "$B/sluice" --replay "$lg_dir/s.lua" > /dev/null 2>&1 || failed "replay of the 1000-command log"
  lg_t4=$(date +%s.%N); "$B/sluice" --replay "$lg_dir/s.lua" --trust > /dev/null 2>&1 || failed "trusted replay"
  lg_t5=$(date +%s.%N); "$B/sluice" "$lg_dir/s.lua" > /dev/null 2>&1 || failed "the log as a script"
  lg_t6=$(date +%s.%N)
  lg_sb=$(el "$lg_t3" "$lg_t4"); lg_tr=$(el "$lg_t4" "$lg_t5"); lg_sc=$(el "$lg_t5" "$lg_t6")
  row "replay of a 1000-command log" "$(secs "$lg_sb")" "$(secs "$lg_sc")" "$(ratio "$lg_sb" "$lg_sc")" "baseline: sluice LOG (no checks)" ""
  row "  the same, --trust (no sandbox)" "$(secs "$lg_tr")" "$(secs "$lg_sb")" "$(ratio "$lg_tr" "$lg_sb")" "baseline: the sandboxed replay" ""
  # the fixed cost of the child and its confinement, on a one-command log
  printf -- '--@ sluice 0.1.0 session log\n--@ started 2026-01-01T00:00:00Z\n--@ lua 5.4\n--@ in 1 show (1 line)\nshow(1)\n--| 1\n' > "$lg_dir/one.lua"
  lg_t7=$(date +%s.%N); for k in 1 2 3 4 5 6 7 8 9 10; do "$B/sluice" --replay "$lg_dir/one.lua" > /dev/null 2>&1; done
  lg_t8=$(date +%s.%N); for k in 1 2 3 4 5 6 7 8 9 10; do "$B/sluice" -e 'print(1)' > /dev/null 2>&1; done
  lg_t9=$(date +%s.%N)
  lg_one=$(awk -v a="$lg_t7" -v b="$lg_t8" 'BEGIN { print (b - a) / 10 }')
  lg_st=$(awk -v a="$lg_t8" -v b="$lg_t9" 'BEGIN { print (b - a) / 10 }')
  row "replay of a one-command log" "$(tms "$lg_one")" "$(tms "$lg_st")" "$(ratio "$lg_one" "$lg_st")" "baseline: sluice -e (start-up)" ""
  # the log parser is linear: 100 000 entries, and a 40 KB last line
  lg_pp=$(SLUICE_NOW=1 "$B/sluice" -e '
    local T = require "sluice.logtext"
    local t = {"--@ sluice 0.1.0 session log", "--@ started 2026-01-01T00:00:00Z", "--@ lua 5.4"}
    for i = 1, 100000 do t[#t + 1] = "--@ in " .. i .. " (1 line)"; t[#t + 1] = "x = " .. i; t[#t + 1] = "--| " .. i end
    local text = table.concat(t, "\n") .. "\n"
    local c0 = os.clock(); assert(T.parse(text, "b")); local c1 = os.clock()
    local tail = table.concat(t, "\n", 1, 6) .. "\n--| " .. string.rep("y", 40000)
    assert(T.parse(tail, "b")); local c2 = os.clock()
    print(string.format("%.6f %.6f %d", c1 - c0, c2 - c1, #text))') || failed "log parser"
  set -- $lg_pp
  row "parse a 100 000-entry log" "$(secs "$1")" "-" "-" "$(awk -v b="$3" -v t="$1" 'BEGIN { printf "%.0f MB/s", b / t / 1e6 }')" "linear"
  row "parse a log with a 40 KB last line" "$(tms "$2")" "-" "-" "-" "(was 32 s: quadratic)"
  rm -rf "$lg_dir"
fi
# ---- end of 10 ----
# ---- 11: identification ----
# g:identify on random graphs of 50 observed nodes with 20 <-> edges: time
# per query (projection, ID, simplification, the printed formula), beside
# one m-separation query on the same graphs (x and y given x's parents).
# shellcheck disable=SC2046
if cc -std=c11 -O2 -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE -Isrc/graph \
     bench/bench_identify.c "$B/libsluice.a" $(pkg-config --libs libgvc) -lm -o "$D/bench_identify"; then
  ri=$("$D/bench_identify" 40 50) || { failed "bench_identify"; ri=""; }
  row "identify, 50 nodes + 20 <->" "$(tms "$(val "$ri" per_query)")" "$(tms "$(val "$ri" sep_per_query)")" \
      "$(ratio "$(val "$ri" per_query)" "$(val "$ri" sep_per_query)")" "baseline: one m-separation query" \
      "$(val "$ri" identified) of $(val "$ri" queries) identified"
else
  failed "cannot compile bench/bench_identify.c"
fi
# ---- end of 11 ----
# ---- 12: front-door and IV estimators, n = 1e5 rows, 200 bootstrap replicates ----
# bench/bench_routes.lua writes the data (seeded: a hidden confounder of x
# and y, an instrument z given w, a mediator m) and runs one estimate{} per
# process, timed from outside with a wall clock, best of EST_REPS (default
# 3), minus the best of as many runs that only read the file.  The
# baseline, bench/sm_routes.py (statsmodels IV2SLS; two OLS fits and their
# product for the front-door), runs once; the target is 1/10 of its time.
# The point estimates must agree within 1e-8 relative.  SECTION=routes
# runs this section alone.
RT=$D/routes_1e5.csv
RT_B=200
RT_REPS=${EST_REPS:-3}
# rt_best CMD...: the best wall time of RT_REPS runs of CMD in rt_t, the
# output of the last in rt_out; non-zero when a run fails.
rt_best() {
  rt_t=""; rt_i=0
  while [ "$rt_i" -lt "$RT_REPS" ]; do
    rt_a=$(date +%s.%N)
    rt_out=$("$@") || return 1
    rt_z=$(date +%s.%N)
    rt_t=$(awk -v a="$rt_a" -v z="$rt_z" -v t="$rt_t" 'BEGIN {
      d = z - a; print (t == "" || d < t + 0) ? d : t }')
    rt_i=$((rt_i + 1))
  done
}
# rt_close A B: whether A and B agree within 1e-8 relative.
rt_close() {
  awk -v a="$1" -v b="$2" 'BEGIN { d = a - b; if (d < 0) d = -d; s = b < 0 ? -b : b
    exit !(a != "" && b != "" && d <= 1e-8 * s) }'
}
rt_notes=""
if [ ! -x "$B/sluice" ]; then
  echo "routes                             skipped: $B/sluice not built"
elif ! "$B/sluice" bench/bench_routes.lua gen "$RT" 100000 1 >/dev/null; then
  failed "bench/bench_routes.lua gen (crashed)"
elif ! rt_best "$B/sluice" bench/bench_routes.lua read "$RT"; then
  failed "bench/bench_routes.lua read (crashed)"
else
  rt_t0=$rt_t
  for rt_m in iv frontdoor; do
    if ! rt_best "$B/sluice" bench/bench_routes.lua "$rt_m" "$RT" "$RT_B" 1; then
      failed "bench/bench_routes.lua $rt_m (crashed)"; continue
    fi
    rt_r=$rt_out
    rt_s=$(awk -v t="$rt_t" -v r="$rt_t0" 'BEGIN { print t - r }')
    rt_ref="$PYTHON not found"; rt_tgt="-"; rt_tr="-"; rt_rr="-"; rt_p=""
    if command -v "$PYTHON" >/dev/null 2>&1; then
      if rt_p=$("$PYTHON" bench/sm_routes.py "$RT" "$rt_m" "$RT_B" 1); then
        if [ -n "$(val "$rt_p" missing)" ]; then
          rt_ref="statsmodels not installed"; rt_p=""
        else
          rt_pt=$(val "$rt_p" total_s)
          rt_10=$(awk -v t="$rt_pt" 'BEGIN { print t / 10 }')
          rt_tgt=$(secs "$rt_10"); rt_tr=$(ratio "$rt_s" "$rt_10")
          rt_ref="statsmodels $(secs "$rt_pt")"; rt_rr=$(ratio "$rt_s" "$rt_pt")
          rt_close "$(val "$rt_r" estimate)" "$(val "$rt_p" estimate)" ||
            failed "$rt_m: sluice estimates $(val "$rt_r" estimate), statsmodels $(val "$rt_p" estimate)"
        fi
      else
        failed "bench/sm_routes.py $rt_m (crashed)"; rt_p=""
      fi
    fi
    [ "$(val "$rt_r" boot)" = "$RT_B" ] ||
      rt_notes="$rt_notes
         $rt_m: $(val "$rt_r" boot_failed) of $RT_B sluice replicates failed"
    row "$rt_m 1e5, boot $RT_B" "$(secs "$rt_s")" "$rt_tgt" "$rt_tr" "$rt_ref" "$rt_rr"
    rt_notes="$rt_notes
         $rt_m: point estimate sluice $(val "$rt_r" estimate)${rt_p:+, statsmodels $(val "$rt_p" estimate)};
           bootstrap SE sluice $(val "$rt_r" se)${rt_p:+, statsmodels $(val "$rt_p" se); statsmodels $(tms "$(val "$rt_p" per_rep_s)") per replicate}"
  done
  echo "       routes: wall time of a sluice run that reads the file and estimates (best of $RT_REPS)," \
       "minus one that only reads it ($(secs "$rt_t0")); $(nproc 2>/dev/null || echo '?') cores;"
  echo "         iv: 2SLS of y on x, z instrumenting x, given w; frontdoor: via m (two linear models)$rt_notes"
  rm -f "$RT"
fi
# ---- end of 12 ----
# ---- 13: front-door sets and instruments, 1e3 nodes ----
# Random graphs of 1e3 nodes, 3e3 local directed edges and 30 <-> edges;
# among 20 random pairs the longest front-door listing (up to 200 sets).
# No Debian library lists them; the reference is the textbook bound
# n(n + m) steps at an assumed 1 ns each per answer, and (n + m) steps for
# one check (linear-time separation).  Seed 2 gives a long front-door
# listing, seed 3 many instruments.
# shellcheck disable=SC2046
if cc -std=c11 -O2 -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE -Isrc/graph \
     bench/bench_frontdoor.c "$B/libsluice.a" $(pkg-config --libs libgvc) -lm -o "$D/bench_frontdoor"; then
  rf=$("$D/bench_frontdoor" 1000 3000 30 2 200) || { failed "bench_frontdoor (a listed set fails the criterion)"; rf=""; }
  rv=$("$D/bench_frontdoor" 1000 3000 30 3 200) || { failed "bench_frontdoor (seed 3)"; rv=""; }
  if [ -n "$rf" ]; then
    fb=$(awk -v n="$(val "$rf" nodes)" -v m="$(val "$rf" edges)" 'BEGIN { print n * (n + m) * 1e-9 }')
    fl=$(awk -v n="$(val "$rf" nodes)" -v m="$(val "$rf" edges)" 'BEGIN { print (n + m) * 1e-9 }')
    fref="n(n+m) at 1 ns: $(tms "$fb")"
    row "frontdoor 1e3, first set" "$(tms "$(val "$rf" first_s)")" "-" "-" "$fref" "$(ratio "$(val "$rf" first_s)" "$fb")"
    row "frontdoor 1e3, mean delay ($(val "$rf" sets) sets)" "$(tms "$(val "$rf" mean_delay_s)")" "-" "-" "$fref" \
        "$(ratio "$(val "$rf" mean_delay_s)" "$fb")"
    row "frontdoor 1e3, max delay" "$(tms "$(val "$rf" max_delay_s)")" "-" "-" "$fref" "$(ratio "$(val "$rf" max_delay_s)" "$fb")"
    row "frontdoor 1e3, check one set" "$(tms "$(val "$rf" check_s)")" "-" "-" "(n+m) at 1 ns: $(tms "$fl")" \
        "$(ratio "$(val "$rf" check_s)" "$fl")"
  fi
  if [ -n "$rv" ]; then
    vb=$(awk -v n="$(val "$rv" nodes)" -v m="$(val "$rv" edges)" 'BEGIN { print n * (n + m) * 1e-9 }')
    vref="n(n+m) at 1 ns: $(tms "$vb")"
    row "instruments 1e3, first" "$(tms "$(val "$rv" iv_first_s)")" "-" "-" "$vref" "$(ratio "$(val "$rv" iv_first_s)" "$vb")"
    row "instruments 1e3, mean delay ($(val "$rv" instruments))" "$(tms "$(val "$rv" iv_mean_delay_s)")" "-" "-" "$vref" \
        "$(ratio "$(val "$rv" iv_mean_delay_s)" "$vb")"
  fi
else
  failed "cannot compile bench/bench_frontdoor.c"
fi
# ---- end of 13 ----
# ---- 14: testable implications, 1e3 nodes ----
# g:implications on a random graph of 1e3 nodes, 3e3 local directed edges,
# 30 <-> edges and 50 hidden nodes: the whole listing (every non-adjacent
# observed pair) beside the same number of separation queries, one per
# pair, by the linear-time reachability test given the later node's
# observed parents.  No Debian library lists testable implications; the
# listing asks up to four searches of each pair, within its ancestors.
# 200 listed sets are checked for separation and minimality (untimed).
# SECTION=implications runs this section alone.
# shellcheck disable=SC2046
if cc -std=c11 -O2 -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE -Isrc/graph \
     bench/bench_implications.c "$B/libsluice.a" $(pkg-config --libs libgvc) -lm -o "$D/bench_implications"; then
  ri=$("$D/bench_implications" 1000 3000 30 50 1) || { failed "bench_implications (a listed set fails its check)"; ri=""; }
  if [ -n "$ri" ]; then
    row "implications 1e3 ($(val "$ri" implications) listed)" "$(secs "$(val "$ri" total_s)")" "-" "-" \
        "$(val "$ri" pairs) queries: $(secs "$(val "$ri" queries_s)")" "$(ratio "$(val "$ri" total_s)" "$(val "$ri" queries_s)")"
    iq=$(awk -v t="$(val "$ri" queries_s)" -v p="$(val "$ri" pairs)" 'BEGIN { print (p > 0 ? t / p : 0) }')
    row "implications 1e3, per pair" "$(tms "$(val "$ri" per_pair_s)")" "-" "-" "one query: $(tms "$iq")" \
        "$(ratio "$(val "$ri" per_pair_s)" "$iq")"
    echo "       implications: $(val "$ri" observed) observed nodes, $(val "$ri" pairs) non-adjacent pairs," \
         "$(val "$ri" untestable) untestable; the parents separate $(val "$ri" parents_separate) pairs"
  fi
else
  failed "cannot compile bench/bench_implications.c"
fi
# ---- end of 14 ----
# ---- 15: g:test, 200 implications on 1e5 rows ----
# bench/bench_citest.lua simulates 1e5 rows of a linear model on a fixed
# 40-node graph (seed 15) and lists the first 200 of its implications; the
# time of g:test on them is the best of CT_REPS (default 3) wall-clock runs
# minus the best of as many runs that only read the file.  The baseline,
# bench/np_citest.py, computes the same partial correlations and Fisher
# p-values with numpy (lstsq residuals, corrcoef; the read untimed).  The
# sum of the 200 partial correlations must agree within 1e-8 (of 1: they
# are near zero).  SECTION=citest runs this section alone.
CT=$D/citest
CT_REPS=${CT_REPS:-3}
mkdir -p "$CT"
# ct_best CMD...: the best wall time of CT_REPS runs of CMD in ct_t, the
# output of the last in ct_out; non-zero when a run fails.
ct_best() {
  ct_t=""; ct_i=0
  while [ "$ct_i" -lt "$CT_REPS" ]; do
    ct_a=$(date +%s.%N)
    ct_out=$("$@") || return 1
    ct_z=$(date +%s.%N)
    ct_t=$(awk -v a="$ct_a" -v z="$ct_z" -v t="$ct_t" 'BEGIN {
      d = z - a; print (t == "" || d < t + 0) ? d : t }')
    ct_i=$((ct_i + 1))
  done
}
if "$B/sluice" bench/bench_citest.lua gen "$CT" 100000 200 >/dev/null; then
  ct_read=""; ct_test=""; ct_line=""
  if ct_best "$B/sluice" bench/bench_citest.lua read "$CT"; then ct_read=$ct_t; fi
  if ct_best "$B/sluice" bench/bench_citest.lua test "$CT"; then ct_test=$ct_t; ct_line=$ct_out
  else failed "bench_citest.lua test (crashed)"; fi
  ct_s=$(awk -v a="$ct_test" -v b="$ct_read" 'BEGIN { if (a != "" && b != "") print a - b }')
  ct_np=""
  if ct_p=$("$PYTHON" bench/np_citest.py "$CT"); then
    [ "$(val "$ct_p" missing)" = 1 ] || ct_np=$(val "$ct_p" total_s)
  else
    failed "bench/np_citest.py (crashed)"; ct_p=""
  fi
  if [ -n "$ct_line" ] && [ -n "$ct_np" ]; then
    awk -v a="$(val "$ct_line" r_sum)" -v b="$(val "$ct_p" r_sum)" 'BEGIN {
      d = a - b; if (d < 0) d = -d; exit !(d <= 1e-8) }' \
      || failed "g:test and numpy disagree: sum of r $(val "$ct_line" r_sum) vs $(val "$ct_p" r_sum)"
  fi
  row "g:test 200 impl., 1e5 rows" "$(secs "${ct_s:-0}")" "-" "-" \
      "numpy $(secs "${ct_np:-0}")" "$(ratio "$ct_s" "$ct_np")"
  echo "         partial correlations by least squares, Fisher's z; $(val "$ct_line" contradicted) of 200 contradicted (data from the graph)"
else
  failed "bench_citest.lua gen"
fi
# ---- end of 15 ----
# ---- 16: coverage of the analytic intervals, 2000 data sets of 500 rows ----
# The long version of tests/lua/test_coverage.lua (bench/bench_coverage.lua):
# for each method and estimand the share of 95% intervals that hold the
# true effect beside 0.95 (binomial limits for 2000 sets: 0.95 +- 0.016 at
# 3.3 SD), and the mean analytic SE over the spread of the estimates
# beside 1.  Not a timing.  SECTION=coverage runs this section alone.
if cv_out=$("$B/sluice" bench/bench_coverage.lua "${COVERAGE_SETS:-2000}" 500); then
  printf '%s\n' "$cv_out" | while read -r cv_line; do
    cv_m="$(val "$cv_line" method) $(val "$cv_line" estimand)"
    row "coverage $cv_m" "$(val "$cv_line" cover)" "0.95" "$(ratio "$(val "$cv_line" cover)" 0.95)" \
        "SE / spread $(val "$cv_line" ratio)" "$(ratio "$(val "$cv_line" ratio)" 1)"
  done
  echo "       coverage: $(printf '%s\n' "$cv_out" | head -n 1 | tr ' ' '\n' | sed -n 's/^sets=//p') seeded data sets of 500 rows," \
       "a 0/1 treatment with effect 2; the analytic 95% interval of each estimate"
else
  failed "bench/bench_coverage.lua (crashed)"
fi
# ---- end of 16 ----
# ---- 17: estimation inside the database, 1e6 and 1e7 rows x 8 columns ----
# bench/bench_db.sh: an invented farm trial loaded into SQLite and into a
# throw-away PostgreSQL 15 cluster (load times not counted); the estimate
# with the rows left in the database beside t:fetch and the same estimate
# in memory, wall time and peak memory of whole processes, and the peak
# memory at 1e7 rows beside 1e6.  DB_ROWS, DB_ENGINES and DB_WHAT choose
# (see the script).  SECTION=db runs this section alone.
DB_NO_HEADER=1 B=$B PYTHON=$PYTHON sh bench/bench_db.sh || failed "bench/bench_db.sh (see above)"
# ---- end of 17 ----
echo "bench: done"
exit $fail
