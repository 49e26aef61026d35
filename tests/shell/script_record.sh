#!/bin/sh
# script_record.sh: a script leaves the same record as the prompt (issue
# 12): top-level locals live from one input to the next (at the prompt,
# over a pipe, in a script run entry by entry); `sluice --log LOG script`
# writes a log that `sluice --replay` verifies; report() at the end of a
# script reports what the script did; a log run as a script (`sluice LOG`)
# replays its recorded errors and stops, with status 1 and the log's file
# and line, at one it did not record.  The expected values are what Lua 5.4
# itself gives for the same code run as one chunk (its reference manual,
# section 3.5 on the scope of locals, and lua5.4 where it is installed).
# Environment: B.
scratch=sluice-script
repo=$(cd "$(dirname "$0")/../.." && pwd)
. "$(dirname "$0")/../lib/replay.sh"
export HOME="$tmp/home" XDG_STATE_HOME="$tmp/state"

# has_line FILE TEXT: FILE holds TEXT as a whole line.
has_line() { grep -qxF -- "$2" "$1"; }
# replay_ok LOG WHAT: sluice --replay LOG passes (exit 0, nothing differs).
replay_ok() {
  "$exe" --replay "$1" > out.txt 2>&1 || fail "$2: sluice --replay $1 exits $?"
  grep -q " 0 differed" out.txt || fail "$2: the replay differs"
}

# ---- locals over a pipe ----
# Lua 5.4 manual 3.5: a local's scope runs to the end of its block, and a
# closure shares the variable; run as one chunk this prints 42, 82, 3, 2,
# 41 (checked with lua5.4 below when it is installed).
cat > locals.lua <<'EOF'
local a = 41
print(a + 1)
local function twice(x)
  return 2 * x
end
print(twice(a))
local t <const> = {n = 3}
print(t.n)
local n = 0
local function bump() n = n + 1; return n end
bump()
print(bump())
local a = a * 0 + 41
print(a)
EOF
printf '42\n82\n3\n2\n41\n' > locals.want
if command -v lua5.4 > /dev/null; then
  lua5.4 locals.lua > lua.txt 2>&1
  cmp -s lua.txt locals.want || fail "the expected values are Lua's own (lua5.4 gave $(cat lua.txt))"
fi
"$exe" -i -q < locals.lua > out.txt 2>&1
grep -q "^error" out.txt && fail "top-level locals over a pipe (-i): an input lost a local"
for v in 42 82 3 2 41; do grep -q "> $v\$\|^$v\$" out.txt || fail "-i over a pipe prints $v"; done
ok "top-level locals (plain, local function, <const>, closures, shadowing) persist over a pipe with -i"

# ---- a return at the script's top level ends it ----
# Lua 5.4 manual 3.3.4: return ends the function, here the main chunk, even
# from inside a block; what follows does not run.
cat > early.lua <<'EOF'
local mode = ...
print("start")
if mode == "gen" then
  print("generated")
  return
end
print("other mode")
EOF
"$exe" early.lua gen > out.txt 2>&1 || fail "a script ending in a return inside a block exits $?"
printf 'start\ngenerated\n' > early.want
cmp -s out.txt early.want || fail "a return inside if ends the script (got: $(tr '\n' '|' < out.txt))"
if command -v lua5.4 > /dev/null; then
  lua5.4 early.lua gen > lua.txt 2>&1
  cmp -s lua.txt early.want || fail "the expected output is Lua's own"
fi
"$exe" early.lua other > out.txt 2>&1
printf 'start\nother mode\n' > early.want
cmp -s out.txt early.want || fail "without the return the script goes on"
ok "a return at the script's top level, inside a block, ends the script as in Lua"

cat > assign_const.lua <<'EOF'
local k <const> = 5
k = 6
print(k)
EOF
"$exe" -i -q < assign_const.lua > out.txt 2>&1
has "attempt to assign to const variable 'k'" "a <const> session local stays constant in the next input"
grep -q "> 5\$" out.txt || fail "the const keeps its value"
ok "a <const> local stays constant across inputs"

# ---- locals in a script, which runs entry by entry ----
"$exe" locals.lua > out.txt 2>&1 || fail "locals.lua runs as a script (exit $?)"
cmp -s out.txt locals.want || fail "a script run entry by entry keeps its locals"
"$exe" - < locals.lua > out.txt 2>&1 || fail "locals.lua runs from standard input"
cmp -s out.txt locals.want || fail "a script on standard input keeps its locals"
cat > goto.lua <<'EOF'
local i = 0
::again::
i = i + 1
if i < 3 then goto again end
print(i)
do
  local c <close> = setmetatable({}, {__close = function() print("closed") end})
end
local last <close> = setmetatable({}, {__close = function() print("closed last") end})
print("before the end")
EOF
"$exe" goto.lua > out.txt 2>&1 || fail "goto.lua runs (exit $?)"
[ "$(cat out.txt)" = "$(printf '3\nclosed\nbefore the end\nclosed last')" ] ||
  fail "a goto back to an earlier statement, and a <close> local closed at the script's end"
printf 'local secret = 41\n' > pre.lua
printf 'secret + 1\n' | "$exe" -i -q pre.lua > out.txt 2>&1
grep -q "> 42\$" out.txt || fail "the prompt after a script (-i) sees the script's locals"
ok "a script keeps its top-level locals (file, standard input, goto, <close>, then the prompt)"

# ---- --log with a script ----
printf 'row,yield\n1,4.5\n2,5.5\n' > orchard.csv
bytes=$(wc -c < orchard.csv | tr -d ' ')
sha=$(sha256sum orchard.csv | cut -d' ' -f1)     # coreutils, outside sluice
cat > orchard.lua <<'EOF'
-- the orchard's rows
trees = read_csv "orchard.csv"
print(#trees)
total = 0

for i = 1, 3 do
  total = total + i
end
print(total)
EOF
"$exe" --log orchard.log orchard.lua > out.txt 2>&1 || fail "--log with a script exits $?"
[ "$(cat out.txt)" = "$(printf '2\n6')" ] || fail "--log with a script prints only what the script prints"
cat > want.log <<EOF
--@ in 1 (2 lines)
-- the orchard's rows
trees = read_csv "orchard.csv"
--@ data orchard.csv $bytes $sha
--@ at @orchard.lua 1
--@ in 2 (1 line)
print(#trees)
--| 2
--@ at @orchard.lua 3
--@ in 3 (1 line)
total = 0
--@ at @orchard.lua 4
--@ in 4 (3 lines)
for i = 1, 3 do
  total = total + i
end
--@ at @orchard.lua 6
--@ in 5 (1 line)
print(total)
--| 6
--@ at @orchard.lua 9
EOF
[ -f orchard.log ] || fail "sluice --log LOG script.lua writes LOG"
head -n 1 orchard.log | grep -qx -- "--@ sluice [0-9.]* session log" || fail "the log's header"
tail -n +4 orchard.log > got.log
cmp -s got.log want.log || { diff want.log got.log > out.txt; fail "the script's log holds each top-level statement, its output and the data"; }
replay_ok orchard.log "the script's log"
ok "sluice --log LOG script.lua writes each top-level statement as an entry, and --replay passes"

"$exe" --log orchard2.log -e 'rows = 3' -e 'print(rows * 2)' > out.txt 2>&1 || fail "--log with -e exits $?"
grep -qx "rows = 3" orchard2.log && grep -qx "print(rows \* 2)" orchard2.log && grep -qx -- "--| 6" orchard2.log ||
  fail "--log records the -e code"
replay_ok orchard2.log "the -e code's log"
printf 'print("piped")\n' | "$exe" --log piped.log > out.txt 2>&1 || fail "--log with a piped script exits $?"
grep -qx -- "--| piped" piped.log || fail "--log records a script on standard input"
ok "--log records -e code and a script on standard input"

"$exe" --log no-such-dir/x.log -e 'print("ran")' > out.txt 2>&1
code=$?
[ "$code" = 1 ] || fail "--log to a place that cannot be written exits 1 (got $code)"
has "sluice: --log no-such-dir/x.log: cannot write the session log there" "the message names --log and the path"
grep -q "^ran" out.txt && fail "nothing runs when the log cannot be written"
"$exe" --log a.log --no-log -e 'print(1)' > out.txt 2>&1
[ $? = 2 ] || fail "--log with --no-log is a usage error"
has "--log PATH and --no-log contradict each other" "--log with --no-log says so"
"$exe" --replay orchard.log --log b.log > out.txt 2>&1
[ $? = 2 ] || fail "--log with --replay is a usage error"
has "--replay keeps no session log" "--log with --replay says so"
"$exe" -e 'local f = io.open("bin.luac", "wb"); f:write(string.dump(load("print(42)"))); f:close()'
"$exe" bin.luac > out.txt 2>&1 && has_line out.txt 42 || fail "a precompiled script runs"
"$exe" --log bin.log bin.luac > out.txt 2>&1
[ $? = 1 ] || fail "a precompiled script with --log exits 1"
has "bin.luac: a precompiled script cannot be kept in the session log" "a precompiled script with --log says why"
ok "--log is never ignored: an unwritable path or a precompiled script exits 1, with --no-log or --replay it is a usage error"

# a script that fails: status 1, its file and line; the log holds the error
cat > fails.lua <<'EOF'
stock = 3
local function half(n)
  return n / nil
end
print(stock)
half(stock)
print("not reached")
EOF
"$exe" --log fails.log fails.lua > out.txt 2>&1
code=$?
[ "$code" = 1 ] || fail "a failing script exits 1 (got $code)"
has "sluice: fails.lua:3: attempt to perform arithmetic on a nil value" "the error names the script's file and line"
grep -q "not reached" out.txt && fail "the script stops at its error"
grep -qx -- "--| error: fails.lua:3: attempt to perform arithmetic on a nil value" fails.log ||
  fail "the log records the error as the script showed it"
grep -qx -- "--@ at @fails.lua 6" fails.log || fail "the log says where the failing statement stands"
ok "a failing script exits 1 naming file:line; its log records the error"

# an error the script catches itself, and a traceback, name the file's line
cat > caught.lua <<'EOF'
local function cut(n)
  return n + nil
end
local ok, e = pcall(cut, 1)
print(e)
print(debug.traceback("here"))
EOF
"$exe" caught.lua > out.txt 2>&1 || fail "caught.lua exits $?"
has_line out.txt "caught.lua:2: attempt to perform arithmetic on a nil value" ||
  fail "an error the script catches names the script's file and line"
grep -q "^	caught.lua:6: in " out.txt || fail "a traceback names the script's file and line"
ok "positions inside a script are the file's lines, also in errors it catches"

# an error without a position of its own is placed at the innermost line
# outside sluice's own Lua files (lua/sluice/*.lua): the user's line
printf 'x = 1\nload("error({})", "@lua/sluice/estimate.lua")()\n' > inner.lua
"$exe" inner.lua > out.txt 2>&1
[ $? = 1 ] || fail "an error object without a position stops the script"
has_line out.txt "sluice: inner.lua:2: (error object is a table value)" ||
  fail "the error is placed at the script's line, not in sluice's own files"
ok "an error without a position names the script's line, never sluice's own files"

# ---- report() at the end of a script ----
# The same statements typed at the prompt (over a pipe) and run as a script
# give the same report, apart from the times.
mkdir typed scripted
for d in typed scripted; do cp orchard.csv "$d/"; done
cat > scripted/work.lua <<'EOF'
trees = read_csv "orchard.csv"
print(#trees)
best = 0
for i = 1, 2 do
  best = best + i
end
print(best)
report("r.md")
EOF
(cd scripted && "$exe" work.lua > ../out.txt 2>&1) || fail "the script with report() exits $?"
(cd typed && "$exe" -i -q < ../scripted/work.lua > ../out.txt 2>&1) || fail "the typed session exits $?"
grep -q "not recorded" scripted/r.md && fail "the script's report records its start"
grep -q "^## Command 1$" scripted/r.md || fail "the script's report holds its commands"
grep -qx "best = 0" scripted/r.md || fail "the script's report holds a statement"
grep -qx "3" scripted/r.md || fail "the script's report holds a statement's output"
grep -qF "data read in command 1: \`orchard.csv\` ($bytes bytes, sha256 \`$sha\`)" scripted/r.md ||
  fail "the script's report lists the data file with its fingerprint"
for d in typed scripted; do grep -v "^- session started\|^- report written" "$d/r.md" > "$d.md"; done
cmp -s typed.md scripted.md || { diff typed.md scripted.md > out.txt; fail "the script and the prompt give the same report"; }
printf 'for i = 1, 2500 do print(i) end\nreport("long.md")\n' > long.lua
"$exe" long.lua > out.txt 2>&1 || fail "a script that prints 2500 lines exits $?"
[ "$(grep -c '^[0-9][0-9]*$' long.md)" = 2000 ] || fail "the report keeps 2000 lines of one command's output"
has_line long.md "... (500 more lines, not kept for the report)" || fail "the report says how many lines it left out"
ok "report() at the end of a script reports each of its commands, as the prompt does"

# exercise{} writes its kit into a temporary folder and moves it into place:
# the picture the session notes (and report() links) is the kit's graph.svg
cat > kit.lua <<'EOF'
g = graph("z -> x; z -> y; x -> y")
m = sem(g, {["z -> x"] = 0.5, ["z -> y"] = 0.4, ["x -> y"] = 0.3})
exercise{graph = g, model = m, treatment = "x", outcome = "y", n = 200, seed = 1, dir = "kit"}
report("kit.md")
EOF
"$exe" --log kit.log kit.lua > out.txt 2>&1 || fail "kit.lua exits $?"
grep -qxF "![kit/graph.svg](<kit/graph.svg>)" kit.md || fail "report() links the kit's graph.svg"
[ -s kit/graph.svg ] || fail "the picture report() links exists"
grep -q "part-" kit.md kit.log && fail "the temporary folder of the kit is named in the report or the log"
grep -qx -- "--@ picture kit/graph.svg" kit.log || fail "the log notes the kit's graph.svg"
ok "exercise{} then report(): the picture linked is the kit's graph.svg, which exists"

# ---- a log run as a script ----
# A session over a pipe with a typo corrected on the next line, and a
# local; the log records the typo's error.
cat > typo.lua <<'EOF'
log("typo.log")
stock = 6
prnt(stock)
print(stock * 7)
local left = stock - 1
left
EOF
"$exe" -i -q < typo.lua > out.txt 2>&1 || fail "the typed session exits $?"
grep -qx -- "--| error: attempt to call a nil value (global 'prnt'); did you mean 'print'?" typo.log ||
  fail "the session log records the typo's error"
cp typo.log typo.before
"$exe" typo.log > out.txt 2> err.txt
code=$?
[ "$code" = 0 ] || { cat err.txt >> out.txt; fail "a log whose recorded error recurs runs to its end (exit $code)"; }
[ "$(cat out.txt)" = "$(printf 'typo.log\n42\n5')" ] || fail "the log prints what the session printed, to its end"
[ "$(cat err.txt)" = "error: attempt to call a nil value (global 'prnt'); did you mean 'print'?" ] ||
  { cat err.txt > out.txt; fail "the recorded error is shown as the prompt showed it"; }
cmp -s typo.log typo.before || fail "running a log that starts itself (log \"typo.log\") leaves it as it was"
ok "sluice LOG: an error the log recorded is shown as at the prompt and the run goes on"

"$exe" --log again.log typo.log > out.txt 2>&1 || fail "a log run as a script with --log exits $?"
[ "$(grep -c -- '^--@ in ' again.log)" = 6 ] || fail "--log records each entry of a log run as a script"
grep -qx -- "--| error: attempt to call a nil value (global 'prnt'); did you mean 'print'?" again.log ||
  fail "the new log records the expected error again"
printf '%s\n--@ in 1 skipped (1 line): interrupted\n--> while true do end\n--| error: interrupted\n--@ in 2 (1 line)\nprint(2)\n--| 2\n' "$head3" > stopped.log
"$exe" --log stopped2.log stopped.log > out.txt 2>&1 || fail "a log with an interrupted input runs (exit $?)"
grep -qx -- "--@ in 1 skipped (1 line): interrupted" stopped2.log || fail "an interrupted input is recorded as interrupted again"
ok "a log run as a script with --log is recorded entry by entry, skipped inputs as they were"

# the same log with an error it did not record: status 1, LOG:LINE
sed 's/^print(stock \* 7)$/print(stokc * 7)/' typo.log > unrecorded.log
line=$(grep -n '^print(stokc \* 7)$' unrecorded.log | cut -d: -f1)
[ -n "$line" ] || fail "the test log has the changed line"
"$exe" unrecorded.log > out.txt 2>&1
code=$?
[ "$code" = 1 ] || fail "an error the log did not record stops the run with status 1 (got $code)"
has "sluice: unrecorded.log:$line: attempt to perform arithmetic on a nil value (global 'stokc')" \
  "the error names the log's file and line"
grep -qx 5 out.txt && fail "the run stops at the unrecorded error"
ok "sluice LOG: an error the log did not record stops the run with status 1 at LOG:LINE"

cat > multi.log <<LOG
$head3
--@ in 1 (4 lines)
function area(w, h)
  if w < 0 then error("negative width") end
  return w * h
end
--@ in 2 (1 line)
print(area(-1, 2))
LOG
"$exe" multi.log > out.txt 2>&1
[ $? = 1 ] || fail "an unrecorded error inside a function of an earlier entry exits 1"
has "sluice: multi.log:6: negative width" "the error names the line of the log where the function raised it"
printf '%s\n--@ in 1 (2 lines)\nfor i = 1, 2 do\n' "$head3" > cut.log
"$exe" cut.log > out.txt 2>&1
[ $? = 1 ] || fail "a log cut inside an entry stops at it"
has "sluice: cut.log:" "a log cut inside an entry is named"
ok "sluice LOG: an error in an earlier entry's function names its line in the log"

# a misspelled name's suggestion is part of the recorded error: a replay
# gives the same message
printf 'stock = 6\nprnt(stock)\nprint(stock)\n' | "$exe" -i -q --log suggest.log > out.txt 2>&1
grep -qF "did you mean 'print'?" suggest.log || fail "the log records the suggestion"
replay_ok suggest.log "a log with a suggested name"
ok "a recorded error with a suggested name replays the same"

# ---- replay of a log whose entries share top-level locals ----
# The replay compiles each entry through the session's S.load_entry, so a
# script's log whose entries share locals replays as it ran.
"$exe" --log locals.log locals.lua > out.txt 2>&1 || fail "locals.lua with --log exits $?"
"$exe" locals.log > out.txt 2>&1 || fail "the locals log runs as a script (exit $?)"
cmp -s out.txt locals.want || fail "the locals log run as a script prints what the script printed"
replay_ok locals.log "a script's log whose entries share locals"
ok "a script's log whose entries share top-level locals replays"
# ... and it runs a script's entry under its '--@ at' chunk name and line,
# so the log of a failing script (its error at the file's line) replays.
head -n 5 caught.lua > caught2.lua    # without the traceback, which the sandbox blocks
"$exe" --log caught.log caught2.lua > out.txt 2>&1 || fail "caught2.lua with --log exits $?"
replay_ok caught.log "a script's log with an error it caught"
replay_ok fails.log "a failing script's log"
ok "the logs of a failing script and of one that catches an error replay"

echo "all $n checks passed"
