#!/bin/sh
# hostile_replay.sh: replay every hostile log of tests/hostile (see its
# README) and check that the confinement held: nothing outside --out changed,
# no program ran, no native code loaded, the report is the parent's own (one
# verdict per entry, counts that agree, blocked calls shown, no control
# characters), the exit status is right, and endless or greedy entries are
# stopped.  One ok/FAIL line per case.  Environment: B, SLUICE_ASAN.
B=${B:-build}
LC_ALL=C; export LC_ALL
exe=$(cd "$B" && pwd)/sluice
corpus=$(cd "$(dirname "$0")/../hostile" && pwd)
CC=${CC:-cc}
T=40            # seconds a replay may take before the test stops it
T_LOG=10        # seconds for a log that is not a regular file
LIMIT=2         # --limit for the endless entries
MEM_KB=9437184  # peak memory of a replay must stay below 9 GiB (8 GiB limit)
root=$(mktemp -d "${TMPDIR:-/tmp}/sluice-hostile.XXXXXX")
outside=$(mktemp -d "${TMPDIR:-/tmp}/sluice-canary.XXXXXX")
work=$(mktemp -d "${TMPDIR:-/tmp}/sluice-hostile-work.XXXXXX")
rand=$(od -An -N6 -tx1 /dev/urandom | tr -d ' \n')
tmpname=/tmp/sluice-hostile-$rand
trap 'rm -rf "$root" "$outside" "$work" "$tmpname"*' EXIT
passed=0; failed=0; skipped=0

# ---- a case: its folder, the canaries, the log ----

# Fresh canaries outside the case: a file and a folder, each with content.
canaries_outside() {
  rm -rf "$outside"/* "$outside"/.[!.]* 2>/dev/null
  echo "the canary outside" > "$outside/canary.txt"
  mkdir "$outside/canary"
  echo "the canary's inner file" > "$outside/canary/inner.txt"
}

# setup NAME: the case folder $case (log NAME.lua, canary.txt, canary/,
# out/), the placeholders filled in; the working directory becomes $case.
setup() {
  name=$1
  case=$root/$name
  mkdir "$case" "$case/out" "$case/canary"
  echo "the canary inside the tree" > "$case/canary.txt"
  echo "the canary folder's file" > "$case/canary/inner.txt"
  canaries_outside
  if [ -f "$corpus/$name.log" ]; then
    sed -e "s|@CASE@|$case|g" -e "s|@OUTSIDE@|$outside|g" -e "s|@TMP@|$tmpname|g" \
      "$corpus/$name.log" > "$case/$name.lua"
  fi
  cd "$case" || exit 1
  problems=
}

# A listing of both trees, --out left out: type, mode, size, time, path,
# link target, and the SHA-256 of every regular file.
snap() {
  find "$root" "$outside" -path "$case/out" -prune -o \
    -printf '%y %m %s %T@ %p -> %l\n' | LC_ALL=C sort
  find "$root" "$outside" -path "$case/out" -prune -o -type f -print0 |
    LC_ALL=C sort -z | xargs -0 -r sha256sum
}

problem() { problems="$problems
      $*"; }

# ---- running a replay ----

# replay OPTIONS...: sluice --replay NAME.lua OPTIONS under the timeout;
# the report in $rep, standard error in $err, the status in $code.
replay() {
  rep=$work/$name.out; err=$work/$name.err
  snap > "$work/$name.before"
  timeout -k 5 "$T" "$exe" --replay "$name.lua" "$@" > "$rep" 2> "$err"
  code=$?
  timed_out=0
  if [ "$code" = 124 ] || [ "$code" = 137 ]; then
    timed_out=1
    problem "the replay did not end: the test's timeout stopped it after $T s"
  fi
}

# Nothing outside --out changed, nothing in /tmp, no marker anywhere.
check_untouched() {
  snap > "$work/$name.after"
  if ! cmp -s "$work/$name.before" "$work/$name.after"; then
    problem "something outside --out changed:"
    problems="$problems
$(diff "$work/$name.before" "$work/$name.after" | grep '^[<>]' | head -n 12 |
  sed 's/^/        /')"
  fi
  for f in "$tmpname"*; do
    [ -e "$f" ] || [ -L "$f" ] || continue
    problem "a file appeared in /tmp: $f"
  done
  rm -rf "$tmpname"*
  for f in $(find "$case" -name 'ran*'); do
    problem "a program or native code ran: $f exists"
  done
}

# The verdict line of entry K: exactly one, one of the report's words; and
# every line the report may hold (anything else is forged or new).
VERDICT='(ok|differs|error|blocked|killed([ :].*)?|timed out after [0-9.]+ s( .*)?|not run( .*)?)'
LINES="replaying .*|in [0-9]+: ($VERDICT|error: line [0-9]+ of the log is not valid Lua.*|skipped .*)"
LINES="$LINES|  line [0-9]+ of its output:|    (expected|got): .*|blocked: in [0-9]+: .*"
LINES="$LINES|  \\(and [0-9]+ more lines? differs?\\)"
LINES="$LINES|  line [0-9]+ of its output is volatile \\(the log's path\\), not compared:"
LINES="$LINES|  \\(and [0-9]+ more volatile lines?\\)|[0-9]+ volatile lines? \\(the log's path\\) not compared"
LINES="$LINES|data (missing|changed|not checked): .*|[0-9]+ commands: .*|sluice: .*"
LINES="$LINES|in [0-9]+: its code begins with '\\(': .*"
LINES="$LINES|[0-9]+ calls? (was|were) blocked by the replay sandbox .*"
verdict() {
  grep -E "^in $1: $VERDICT\$" "$rep" | sed "s/^in $1: //"
}

# expect STATUS "K=CLASS ..." "K ..." MODE: the exit status, one verdict per
# entry of the class asked (ok, differs, error, bad = not ok, stopped =
# killed or timed out, any), a blocked line for each K of the third list,
# a "blocked" verdict for exactly the entries with a blocked line (never ok),
# and counts that agree (N entries, A matched = the ok lines, K blocked = the
# blocked verdicts, C not run = the not-run lines, B differed covering the
# rest); MODE is what the header says of the writes.
expect() {
  want_code=$1; classes=$2; blocked=$3; mode=$4
  [ "$timed_out" = 1 ] && return
  [ "$code" = "$want_code" ] || problem "exit status $code, expected $want_code"
  total=0
  for kc in $classes; do
    total=$((total + 1))
    k=${kc%%=*}; c=${kc#*=}
    n=$(grep -cE "^in $k: $VERDICT\$" "$rep")
    if [ "$n" != 1 ]; then
      problem "entry $k has $n verdict lines, expected exactly 1"
      continue
    fi
    v=$(verdict "$k")
    case $c in
      ok|differs|error) [ "$v" = "$c" ] || problem "in $k: $v, expected $c" ;;
      bad) [ "$v" != ok ] || problem "in $k: ok, but it must not match" ;;
      stopped) case $v in killed*|timed*) ;; *) problem "in $k: $v, expected killed or timed out" ;; esac ;;
      any) ;;
      *) echo "hostile_replay.sh: unknown class $c" >&2; exit 2 ;;
    esac
  done
  n=$(grep -cE "^in [0-9]+: $VERDICT\$" "$rep")
  [ "$n" = "$total" ] || problem "$n verdict lines for $total entries"
  grep -vxE "$LINES" "$rep" | head -n 3 > "$work/$name.odd"
  while IFS= read -r l; do
    problem "a line the report does not make: $l"
  done < "$work/$name.odd"
  n=$(grep -cE "^replaying $name\\.lua: $total entries, sandboxed, writes $mode\$" "$rep")
  [ "$n" = 1 ] || problem "no single header 'replaying $name.lua: $total entries, sandboxed, writes $mode'"
  matched=$(grep -c '^in [0-9]*: ok$' "$rep")
  notrun=$(grep -cE '^in [0-9]+: not run( .*)?$' "$rep")
  nblk=$(grep -c '^in [0-9]*: blocked$' "$rep")
  SUMMARY='^[0-9]+ commands: [0-9]+ matched, [0-9]+ differed(, [0-9]+ blocked)?(, [0-9]+ not run)?$'
  n=$(grep -cE "$SUMMARY" "$rep")
  [ "$n" = 1 ] || problem "$n summary lines, expected exactly 1"
  s=$(grep -E "$SUMMARY" "$rep" | head -n 1)
  sb=$(echo "$s" | sed -n 's/.*, \([0-9]*\) blocked.*/\1/p'); sb=${sb:-0}
  sn=$(echo "$s" | sed -n 's/.*, \([0-9]*\) not run$/\1/p'); sn=${sn:-0}
  set -- $(echo "$s" | tr -c '0-9\n' ' ') 0 0 0
  if [ "$1" != "$total" ] || [ "$2" != "$matched" ] || [ "$sb" != "$nblk" ] ||
     [ "$3" -lt $((total - matched - nblk - notrun)) ] || [ "$sn" != "$notrun" ]; then
    problem "the summary is not '$total commands: $matched matched, $((total - matched - nblk - notrun)) differed, $nblk blocked' ($notrun not run)"
  fi
  for k in $blocked; do
    grep -q "^blocked: in $k: " "$rep" || problem "no 'blocked: in $k: ...' line"
  done
  for k in $(sed -n 's/^blocked: in \([0-9]*\): .*/\1/p' "$rep" | sort -u); do
    [ "$(verdict "$k")" = blocked ] || problem "in $k has a blocked call, but its verdict is $(verdict "$k")"
  done
  for k in $(sed -n 's/^in \([0-9]*\): blocked$/\1/p' "$rep"); do
    grep -q "^blocked: in $k: " "$rep" || problem "in $k: blocked, but no blocked call is shown"
  done
  nb=$(grep -c '^blocked: in [0-9]*: ' "$rep")
  if [ "$nb" -gt 0 ]; then
    s="$nb calls were"; [ "$nb" = 1 ] && s="1 call was"
    grep -qx "$s blocked by the replay sandbox (--trust lifts it)" "$rep" ||
      problem "no '$s blocked by the replay sandbox' for $nb blocked lines"
  else
    grep -q 'blocked by the replay sandbox' "$rep" && problem "a blocked count without blocked lines"
  fi
  n=$(LC_ALL=C tr -d '\n\t\040-\176\200-\377' < "$rep" | wc -c)
  [ "$n" = 0 ] || problem "the report holds $n control characters"
  grep -qE '^(in [0-9]+: (ok|differs)|[0-9]+ commands: )' "$err" &&
    problem "standard error holds forged verdict lines"
}

# done_case: the case's ok/FAIL line.
done_case() {
  check_untouched
  cd "$root" || exit 1
  if [ -z "$problems" ]; then
    passed=$((passed + 1)); echo "ok    $name"
  else
    failed=$((failed + 1)); echo "FAIL  $name$problems"
    for f in "$rep" "$err"; do
      [ -s "$f" ] && head -n 30 "$f" | sed 's/^/      | /'
    done
  fi
}

skip() { skipped=$((skipped + 1)); echo "skip  $1 ($2)"; }

# ---- the cases ----

setup searchers_rewrite
replay
expect 1 "1=bad 2=bad 3=ok 4=differs" "" nowhere
done_case

setup searchers_out
replay --out out
expect 1 "1=ok 2=bad 3=bad 4=bad 5=bad 6=bad 7=bad 8=ok 9=differs" "3 4 5 6 7" "inside out"
done_case

setup writers_require
replay --out out
expect 1 "1=bad 2=bad 3=bad 4=bad 5=bad 6=bad 7=bad 8=bad 9=bad 10=bad 11=ok 12=differs 13=bad 14=bad" \
  "10" "inside out"
done_case

setup gc_finaliser
replay --out out
expect 1 "1=any 2=any 3=any 4=any 5=ok 6=differs" "" "inside out"
done_case

setup patch_strings
replay --out out
expect 1 "1=ok 2=any 3=differs 4=bad 5=bad 6=any 7=differs 8=bad 9=any 10=differs 11=bad 12=bad" \
  "4 5 8 11 12" "inside out"
done_case

setup report_forge
replay --out out
expect 1 "1=ok 2=differs 3=differs 4=bad 5=bad 6=error 7=bad 8=differs" "4 5" "inside out"
done_case

setup symlinks_out
ln -s "$outside/through-dangling" out/dangling
ln -s "$outside/canary" out/outdir
ln -s "$outside/canary.txt" out/outfile
ln -s "$outside/through.csv" out/dangling.csv
ln -s "$outside/through.svg" out/dangling.svg
ln -s "$outside/through.md" out/dangling.md
mkdir out/kit
ln -s "$outside/kit-data.csv" out/kit/data.csv
ln -s "$outside/canary.txt" out/kit/key.md
ln -s "$outside/kit-graph.svg" out/kit/graph.svg
replay --out out
expect 1 "1=ok 2=bad 3=bad 4=bad 5=bad 6=bad 7=bad 8=bad 9=bad 10=bad 11=ok 12=ok 13=differs" \
  "" "inside out"
[ "$(cat out/plain.txt 2>/dev/null)" = inside ] || problem "a plain write inside --out did not happen"
[ -s out/new/key.md ] || problem "exercise{dir = \"new\"} inside --out wrote no key.md"
done_case

# Relative writes are placed in --out: links and ".." must not lead out.
setup out_mapping
mkdir out/canary esc esc/sub figs
ln -s "$outside" out/esc
ln -s "$outside/canary" tolink
replay --out out
expect 1 "1=ok 2=bad 3=bad 4=bad 5=bad 6=bad 7=bad 8=bad 9=bad 10=bad 11=ok 12=ok 13=differs" \
  "2 3 4 5 6 7 8 9 10" "inside out"
[ "$(cat out/tolink/x.txt 2>/dev/null)" = inside ] || problem "a write through the working directory's link did not land in out/tolink"
[ -s out/figs/ok.svg ] || problem "g:draw(\"figs/ok.svg\") did not land in out/figs"
[ -e "$outside/sub" ] && problem "a folder was made through the link out/esc"
done_case

# The volatile mark exempts only the log's own path, given by sluice's log().
setup volatile_forge
replay --out out
expect 1 "1=ok 2=differs 3=differs 4=differs 5=differs 6=differs 7=ok 8=differs" "" "inside out"
[ "$(grep -c "^  line 1 of its output is volatile (the log's path), not compared:$" "$rep")" = 2 ] ||
  problem "not exactly the two volatile lines of entries 5 and 7 are shown"
grep -qx "2 volatile lines (the log's path) not compared" "$rep" || problem "no count of the volatile lines"
cp "$name.lua" again.lua
timeout -k 5 "$T" "$exe" --replay again.lua --out out --update > "$work/$name.update" 2>&1
# marks stay on the lines the replay confirmed (5, 7) and on the query show(log()) (4)
[ "$(grep -c '^--@ volatile ' again.lua)" = 3 ] || problem "--update kept marks that the replay did not confirm"
snap > "$work/$name.before"   # again.lua and its .bak are the test's own
done_case

# Endless entries: each its own log, stopped by --limit.
for c in dev_zero fifo_csv fifo_io loop pattern sql; do
  setup "endless_$c"
  mkfifo fifo
  if [ "$c" = sql ]; then
    if ! command -v sqlite3 > /dev/null; then
      skip "$name" "no sqlite3 program to make the database"; cd "$root"; continue
    fi
    sqlite3 empty.db 'CREATE TABLE t(x)'
  fi
  replay --out out --limit "$LIMIT"
  case $c in loop|pattern|fifo_io) k2=stopped ;; *) k2=bad ;; esac
  expect 1 "1=ok 2=$k2" "" "inside out"
  done_case
done

# Memory: an address-space limit cannot coexist with AddressSanitizer.
if [ -n "$SLUICE_ASAN" ]; then
  skip memory_unbounded "AddressSanitizer cannot run under an address-space limit"
  skip memory_one_block "AddressSanitizer cannot run under an address-space limit"
else
  setup memory_unbounded
  rep=$work/$name.out; err=$work/$name.err
  snap > "$work/$name.before"
  # a safety net for the machine running the test, above the limit checked
  time=; [ -x /usr/bin/time ] && time="/usr/bin/time -f %M -o $work/$name.rss"
  (ulimit -v 12582912
   timeout -k 5 "$T" $time "$exe" --replay "$name.lua" --out out --limit 3 > "$rep" 2> "$err")
  code=$?; timed_out=0
  if [ "$code" = 124 ] || [ "$code" = 137 ]; then
    timed_out=1; problem "the replay did not end: the test's timeout stopped it after $T s"
  fi
  expect 1 "1=ok 2=bad" "" "inside out"
  rss=$(tail -n 1 "$work/$name.rss" 2>/dev/null)
  case $rss in
    '') [ -n "$time" ] && problem "no peak memory measured" ;;
    *[!0-9]*) problem "no peak memory measured: $rss" ;;
    *) [ "$rss" -lt "$MEM_KB" ] || problem "the replay grew to $rss kB" ;;
  esac
  done_case

  setup memory_one_block
  replay --out out --limit 20
  expect 1 "1=ok 2=error" "" "inside out"
  done_case
fi

setup process_routes
replay --out out
expect 1 "1=bad 2=bad 3=bad 4=bad 5=bad 6=bad 7=bad 8=bad 9=bad 10=bad 11=bad 12=bad 13=bad 14=ok 15=differs" \
  "1 2 3 4 7 8 9 10 11 12" "inside out"
done_case

if command -v "$CC" > /dev/null; then
  setup native_module
  "$CC" -shared -fPIC -o native.so "$corpus/native_module.c" \
    -DCASE="\"$case\"" -DOUTSIDE="\"$outside\"" 2> "$work/cc.err" ||
    { cat "$work/cc.err"; exit 1; }
  replay --out out
  expect 1 "1=ok 2=bad 3=bad 4=bad 5=bad 6=ok 7=differs" "2 4" "inside out"
  done_case
else
  skip native_module "no C compiler ($CC) to build the library"
fi

setup nested_replay_trust
replay --out out
expect 1 "1=ok 2=bad 3=bad 4=ok 5=differs" "" "inside out"
done_case

# The hand-over of top-level locals under a chunk name of sluice's own
# files: no variable of the replay or the session reaches the log.
setup handover_forge
replay --out out
expect 1 "1=ok 2=ok 3=ok 4=ok 5=ok 6=ok 7=ok 8=ok 9=differs" "" "inside out"
done_case

setup session_install
replay --out out
expect 1 "1=any 2=bad 3=bad 4=ok 5=differs" "" "inside out"
done_case

setup self_load
replay --out out
expect 1 "1=ok 2=differs 3=bad" "" "inside out"
done_case

# os.tmpname's file, if it made one, is named in out/tmpname.txt (the only
# file of /tmp this test may remove: the replay made it).
setup tmpname
replay --out out
expect 1 "1=bad 2=ok 3=differs" "" "inside out"
if [ -s out/tmpname.txt ]; then
  made=$(cat out/tmpname.txt)
  if [ -e "$made" ]; then
    problem "os.tmpname made $made"
    case $made in /tmp/lua_??????) rm -f "$made" ;; esac
  fi
fi
done_case

# The log given is not a regular file: it must be refused, not read for ever.
for what in dev_zero fifo; do
  setup "log_$what"
  log=/dev/zero
  if [ "$what" = fifo ]; then mkfifo log.fifo; log=log.fifo; fi
  rep=$work/$name.out; err=$work/$name.err
  snap > "$work/$name.before"
  timeout -k 5 "$T_LOG" "$exe" --replay "$log" > "$rep" 2>&1
  code=$?
  if [ "$code" = 124 ] || [ "$code" = 137 ]; then
    problem "--replay $log did not end: the test's timeout stopped it after $T_LOG s"
  else
    [ "$code" = 1 ] || problem "exit status $code, expected 1"
    grep -qF "$log" "$rep" || problem "the message does not name $log"
  fi
  done_case
done

# A carriage return, form feed, NUL or escape in printed output, in an error
# message, or in an input that does not compile must stay inside the log's
# comments: the log runs as a script without running what follows a CR (a
# marker each; the last entry's CR would exit 3), and replays clean.
setup cr_in_output
timeout -k 5 "$T" "$exe" -q -i --log cr.lua < "$corpus/cr_in_output.input" > /dev/null 2>&1
n=$(LC_ALL=C grep -aE '^--[|>@]' cr.lua | LC_ALL=C tr -d '\n\t\040-\176\200-\377' | wc -c)
[ "$n" = 0 ] || problem "the log's comment lines hold $n control characters"
rep=$work/$name.out; err=$work/$name.err
snap > "$work/$name.before"
timeout -k 5 "$T" "$exe" cr.lua > "$rep" 2> "$err"
code=$?
# (0 when the recorded error counts as expected, 1 when it ends the script;
# never 3, the os.exit after the CR)
case $code in 0|1) ;; *) problem "sluice LOG exits $code, expected 0 or 1 (3: it ran what follows a CR)" ;; esac
timeout -k 5 "$T" "$exe" --replay cr.lua > "$rep" 2> "$err"
code=$?
[ "$code" = 0 ] || problem "the log replays with status $code, expected 0"
grep -qE '^3 commands: 3 matched, 0 differed$' "$rep" || problem "the replay does not match its 3 commands"
done_case

# Entry markers and session headers typed inside a string must not split the
# entry on replay.
setup typed_entry_marker
timeout -k 5 "$T" "$exe" -q -i --log typed.lua < "$corpus/typed_entry_marker.input" > "$work/typed.session" 2>&1
rep=$work/$name.out; err=$work/$name.err
snap > "$work/$name.before"
timeout -k 5 "$T" "$exe" --replay typed.lua > "$rep" 2> "$err"
code=$?
[ "$code" = 0 ] || problem "the log replays with status $code, expected 0"
grep -qE '^[0-9]+ commands: [0-9]+ matched, 0 differed$' "$rep" || problem "the replay does not match"
grep -qE '^in (97|98|99):' "$rep" && problem "a typed '--@ in' line became an entry"
[ "$("$exe" typed.lua 2>&1)" = 121 ] || problem "the log run as a script does not print 121 (the string's length)"
grep -q '121$' "$work/typed.session" || problem "the session did not print 121"
done_case

# ---- found by an attacker's review of the kernel sandbox ----

setup preload_escape
replay --out out
expect 1 "1=bad 2=differs" "1" "inside out"
done_case

setup script_continuation
replay --out out
expect 1 "1=ok 2=error 3=ok 4=error 5=ok 6=error" "" "inside out"
grep -q "^in 6: its code begins with '(': " "$rep" || problem "an entry opening with '(' is not named"
done_case

setup oldformat_header
replay --out out
[ "$code" = 1 ] || problem "exit status $code, expected 1"
grep -q "oldformat_header.lua:[0-9]*: a session header line inside an entry" "$rep" ||
  problem "a header line inside an old entry is not refused"
grep -q '^in 1: ok' "$rep" && problem "the entry was replayed as ok"
done_case

setup data_kernel_files
replay --out out --limit 5
expect 1 "1=differs" "" "inside out"
[ "$(grep -c '^data missing: .*a file of the kernel' "$rep")" = 3 ] ||
  problem "the three kernel files are not refused as data"
done_case

setup stderr_controls
replay --out out
expect 0 "1=ok" "" "inside out"
n=$(LC_ALL=C tr -d '\011\012\040-\176' < "$err" | wc -c)
[ "$n" = 0 ] || problem "standard error holds $n bytes that are not printable ASCII"
grep -q '^replayed code: ' "$err" || problem "the child's error output is not relayed"
done_case

setup control_file_name
cp "$corpus/stderr_controls.log" "$case/plain.lua"
bad=$(printf 'x\033[2K\rin 9: ok\n9 commands: 9 matched, 0 differed\033[8m.lua')
cp "$case/plain.lua" "$bad"
rep=$work/$name.out; err=$work/$name.err
snap > "$work/$name.before"
timeout -k 5 "$T" "$exe" --replay "$bad" > "$rep" 2> "$err"
n=$(LC_ALL=C tr -d '\012\040-\176\200-\377' < "$rep" | wc -c)
[ "$n" = 0 ] || problem "the report holds $n control characters from the log's name"
grep -q '^9 commands' "$rep" && problem "the log's name forged a summary line"
done_case

setup update_injection
replay --out out --update
[ "$code" = 1 ] || problem "exit status $code, expected 1 (the recorded output was empty)"
timeout -k 5 "$T" "$exe" --replay update_injection.lua --out out > "$work/$name.again" 2>&1 ||
  problem "the updated log does not replay cleanly"
grep -q '^1 commands: 1 matched, 0 differed$' "$work/$name.again" ||
  problem "the updated log has more than its one entry"
timeout -k 5 "$T" "$exe" update_injection.lua > /dev/null 2>&1
snap > "$work/$name.before"   # the script may write only its out/ markers: none expected
done_case

echo "$passed passed, $failed failed, $skipped skipped"
[ "$failed" = 0 ]
