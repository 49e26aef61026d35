#!/bin/sh
# log_replay.sh: sluice --replay on logs written by hand: the sandbox
# (os.execute, io.popen, os.remove, writes outside --out, load, debug,
# require), --trust, --update, and bad logs (not valid Lua, truncated,
# newer version, missing data file, not a log).  Environment: B.
scratch=sluice-replay
. "$(dirname "$0")/../lib/replay.sh"

# ---- the sandbox ----
mkdir out
echo "the classroom register" > keep.txt
cat > hostile.lua <<LOG
$head3
--@ in 1
os.execute("touch executed")
--@ in 2
io.popen("touch popened")
--@ in 3
os.remove("keep.txt")
--@ in 4
io.open("$tmp/outside.txt", "w"):write("x")
--@ in 5 show
show(io.open("inside.txt", "w"):write("factory line 3"):close())
--| true
--@ in 6
load("os.execute('touch loaded')")()
--@ in 7
graph("a -> b"):draw("../drawn.svg")
--@ in 8
require("os").rename("keep.txt", "moved.txt")
--@ in 9
debug.getregistry()
--@ in 10
io.open("../escaped.txt", "w")
--@ in 11 show
show(1 + 1)
--| 2
LOG
"$exe" --replay hostile.lua --out out > out.txt 2>&1
code=$?
[ "$code" = 1 ] || fail "a sandboxed replay with blocked calls exits 1 (got $code)"
for f in executed popened outside.txt loaded drawn.svg moved.txt escaped.txt; do
  [ -e "$f" ] && fail "the sandbox lets nothing happen: $f exists"
done
[ -f keep.txt ] || fail "os.remove was blocked: keep.txt is gone"
[ "$(cat out/inside.txt)" = "factory line 3" ] || fail "writing inside --out works"
has "blocked: in 1: os.execute" "os.execute is reported"
has "blocked: in 2: io.popen" "io.popen is reported"
has "blocked: in 3: os.remove" "os.remove is reported"
has "blocked: in 4: io.open(\"$tmp/outside.txt\", \"w\") writes outside --out out" "a write outside --out is reported"
has "blocked: in 6: os.execute" "load inherits the sandbox"
has "blocked: in 7: g:draw(\"../drawn.svg\") writes outside --out out" "g:draw is checked"
has "blocked: in 8: os.rename" "require(\"os\") is the sandbox's os"
has "blocked: in 9: debug.getregistry" "debug is blocked"
has "blocked: in 10: io.open(\"../escaped.txt\"" "a path that leaves --out through .. is blocked"
has "in 5: ok" "an allowed write matches"
has "in 11: ok" "replay goes on after blocked calls"
has "11 commands: 2 matched, 0 differed, 9 blocked" "the summary counts them"
has "in 4: blocked" "an entry with a blocked call has the verdict blocked"
has "9 calls were blocked by the replay sandbox" "the blocked calls are counted"
ok "the sandbox blocks os.execute, io.popen, os.remove, os.rename, debug, writes outside --out"

"$exe" --replay hostile.lua --trust > out.txt 2>&1
[ -e executed ] || fail "--trust lifts the sandbox: os.execute ran"
[ -e keep.txt ] && fail "--trust lifts the sandbox: os.remove ran"
ok "--trust lifts the sandbox"

# ---- --update ----
cat > update.lua <<LOG
$head3
--@ in 1
x = 6
--@ in 2 show
show(x * 7)
--| 41
LOG
"$exe" --replay update.lua --update > out.txt 2>&1
[ $? = 1 ] || fail "--update still reports the difference"
grep -q -- '--| 42' update.lua || fail "--update rewrites the output"
grep -q -- '--| 41' update.lua.bak || fail "--update keeps the old log"
"$exe" --replay update.lua > out.txt 2>&1 || fail "the updated log replays"
has "2 commands: 2 matched, 0 differed" "the updated log matches"
ok "--update rewrites the recorded outputs and keeps LOG.bak"

# a blocked call stays blocked after --update: its entry keeps the recorded
# output, never the sandbox's refusal, and is never counted as matched
cat > upblock.lua <<LOG
$head3
--@ in 1
g = graph "rain -> yield"
--@ in 2 show
show(g:draw("rain.svg"))
--| rain.svg
--@ in 3 show
show(1 + 1)
--| 3
LOG
"$exe" --replay upblock.lua --update > out.txt 2>&1
[ $? = 1 ] || fail "--update of a log with a blocked call exits 1"
has "1 entry with a blocked call kept its recorded output" "--update says what it kept"
grep -q -- '^--| rain.svg$' upblock.lua || fail "--update keeps the blocked entry's recorded output"
grep -q -- 'blocked by the replay sandbox' upblock.lua && fail "--update wrote the refusal into the log"
grep -q -- '^--| 2$' upblock.lua || fail "--update rewrites the other entries"
"$exe" --replay upblock.lua > out.txt 2>&1
[ $? = 1 ] || fail "the updated log with a blocked call still exits 1"
has "in 2: blocked" "the blocked entry is reported as blocked after --update"
has "blocked: in 2: g:draw(\"rain.svg\") writes outside an --out folder" "the blocked call is named"
has "3 commands: 2 matched, 0 differed, 1 blocked" "a blocked entry is not counted as matched"
ok "after --update a blocked call is still reported as blocked, not as matched"

# ---- every differing entry shows its differing lines (issue 12) ----
{ echo "$head3"
  echo "--@ in 1"; echo "print(1) print(2) print(3)"
  echo "--| 1"; echo "--| 20"; echo "--| 3"
  echo "--@ in 2"; echo "print('same')"; echo "--| same"
  echo "--@ in 3"; echo "for i = 1, 15 do print(i) end"
  for i in 1 2 3 4 5 6 7 8 9 10 11 12 13 14 15; do echo "--| $((i * 100))"; done
  echo "--@ in 4"; echo "print('a') print('b') print('c')"
  echo "--| a"; echo "--| c"
  echo "--@ in 5"; echo "print(string.rep('w', 1000))"; echo "--| short"
} > many.lua
"$exe" --replay many.lua > out.txt 2>&1
[ $? = 1 ] || fail "a log with differing entries exits 1"
has "5 commands: 1 matched, 4 differed" "four entries differ"
grep -A 3 '^in 1: differs' out.txt | grep -qx '    expected: 20' || fail "the first differing entry shows its line"
grep -A 3 '^in 3: differs' out.txt | grep -qx '    got:      1' || fail "the third entry shows its lines too, not only the first entry"
[ "$(sed -n '/^in 3: differs/,/^in 4/p' out.txt | grep -c '^  line [0-9]* of its output:$')" = 10 ] ||
  fail "an entry shows at most 10 differing lines"
has "  line 10 of its output:" "the tenth differing line is shown"
has "  (and 5 more lines differ)" "the rest is counted"
grep -A 3 '^in 4: differs' out.txt | grep -q '^  line 2 of its output:$' || fail "an added line is shown at its place"
grep -A 3 '^in 4: differs' out.txt | grep -qx '    got:      b' || fail "the added line is shown"
[ "$(sed -n '/^in 4: differs/,/^in 5/p' out.txt | grep -c '^  line')" = 1 ] ||
  fail "a line added in the middle shows once, not as a shift of every later line"
has "    got:      $(printf 'w%.0s' $(seq 300)) ... (700 more bytes)" "a long line is cut with what is left counted"
ok "every differing entry shows its differing lines, bounded per entry and per line"

# ---- the log's own path is volatile, not a difference (issue 12) ----
printf 'x = 6\nlog()\nx * 7\n' | "$exe" -q -i --log first.lua > /dev/null 2>&1
grep -q '^--@ volatile 1$' first.lua || fail "the session marks the output of log() volatile"
cp first.lua moved.lua
"$exe" --replay moved.lua > out.txt 2>&1 || fail "a log replayed under another name matches (exit 0)"
has "in 2: ok" "the entry log() matches"
has "  line 1 of its output is volatile (the log's path), not compared:" "the volatile line is shown as such"
has "    expected: first.lua" "the recorded path is shown"
has "    got:      moved.lua" "the replay's log path is shown"
has "3 commands: 3 matched, 0 differed" "nothing differs"
has "1 volatile line (the log's path) not compared" "the summary counts the volatile line"
# a log written before the mark: the query of the log's path is recognised
cat > unmarked.lua <<LOG
$head3
--@ in 1 show (1 line)
show(log())
--| sluice-logs/session-20260101-000000.lua
--@ in 2 (1 line)
print(log() == nil, 6 * 7)
--| true	42
LOG
"$exe" --replay unmarked.lua > out.txt 2>&1
[ $? = 1 ] || fail "a real difference beside a log() call still differs"
has "in 1: ok" "show(log()) in a log without marks is volatile"
has "in 2: differs" "a line that is not log()'s own output is compared"
ok "the output of log() is volatile: shown, not counted as a difference; other lines still compared"

# ---- bad logs ----
cat > invalid.lua <<LOG
$head3
--@ in 1
x = = 1
--@ in 2 show
show(2 + 3)
--| 5
LOG
"$exe" --replay invalid.lua > out.txt 2>&1
[ $? = 1 ] || fail "a log with invalid Lua exits 1"
has "in 1: error: line 5 of the log is not valid Lua" "invalid Lua is named with its line"
has "in 2: ok" "replay goes on after invalid Lua"
ok "a log entry that is not valid Lua is reported; replay goes on"

printf '%s\n--@ in 1\nfor i = 1, 3 do\n  print(i)' "$head3" > truncated.lua
"$exe" --replay truncated.lua > out.txt 2>&1
[ $? = 1 ] || fail "a truncated log exits 1"
has "(the log is truncated)" "a truncated log says so"
ok "a truncated log is reported as truncated"

printf '%s\n' '--@ sluice 99.1.0 session log' '--@ in 1' 'x = 1' > newer.lua
"$exe" --replay newer.lua > out.txt 2>&1
[ $? = 1 ] || fail "a log from a newer sluice exits 1"
has "newer.lua was written by sluice 99.1.0, newer than this sluice" "a newer log says so"
ok "a log from a newer version is refused with a message"

cat > missing.lua <<LOG
$head3
--@ in 1
trees = read_csv "orchard-gone.csv"
--@ data orchard-gone.csv 177 4185850cb103de325fba433e306d3e5713a4acc8aa936a40d8848098c4fe8fa4
LOG
"$exe" --replay missing.lua > out.txt 2>&1
[ $? = 1 ] || fail "a missing data file exits 1"
has "data missing: orchard-gone.csv (recorded sha256 4185850c" "a missing data file is named"
has "in 1: error" "the entry that reads it errors"
ok "a missing data file is reported"

echo 'print("not a log")' > plain.lua
"$exe" --replay plain.lua > out.txt 2>&1
[ $? = 1 ] || fail "a file that is not a log exits 1"
has "plain.lua:1: not a sluice session log" "a file that is not a log says so"
"$exe" --replay nowhere.lua > out.txt 2>&1
[ $? = 1 ] || fail "a missing log exits 1"
has "cannot read the log: nowhere.lua" "a missing log is named"
"$exe" --out out > out.txt 2>&1
[ $? = 2 ] || fail "--out without --replay is a usage error"
"$exe" --replay update.lua --out no-such-dir > out.txt 2>&1
[ $? = 2 ] || fail "--out to a missing folder is a usage error"
has "--out no-such-dir: no such folder" "a missing --out folder is named"
ok "not a log, no log, and option errors: messages and exit codes"

# ---- the log runs as a script ----
cat > script.lua <<LOG
$head3
--@ in 1
x = 6
--@ in 2 show
show(x * 7)
--| 42
LOG
[ "$("$exe" script.lua)" = 42 ] || fail "sluice LOG re-executes the log"
ok "sluice LOG runs the log as a script"
# ---- a log two sessions appended to (-i over a pipe logs with --log) ----
printf 'x = 6\nx * 7\n' | "$exe" -q -i --log two.lua > /dev/null 2>&1
printf 'x\n' | "$exe" -q -i --log two.lua > /dev/null 2>&1
[ "$(grep -c -- '--@ sluice' two.lua)" = 2 ] || fail "the second session appends its header"
"$exe" --replay two.lua > out.txt 2>&1 || fail "a log of two sessions replays, each afresh"
has "3 commands: 3 matched, 0 differed" "both sessions' commands match"
"$exe" --replay two.lua --update > out.txt 2>&1 || fail "--update of a two-session log"
[ "$(grep -c -- '--@ sluice' two.lua)" = 2 ] || fail "--update keeps the second session's header"
"$exe" --replay two.lua > out.txt 2>&1 || fail "the updated two-session log replays"
has "3 commands: 3 matched, 0 differed" "each session still starts afresh"
ok "a log appended to by a second session replays each session afresh, also after --update"
# ---- writers in the sandbox: a new folder beneath --out, log(), tmpname ----
rm -rf out2; mkdir out2
cat > writers.lua <<LOG
$head3
--@ in 1
g = graph "rain -> yield"; m = sem(g, {["rain -> yield"] = 1})
--@ in 2
kit = exercise{graph = g, model = m, dir = "new/kit", n = 20}
--@ in 3 show
show(log("inside-log.lua") ~= nil)
--| true
--@ in 4
log("../outside-log.lua")
--@ in 5
os.tmpname()
LOG
"$exe" --replay writers.lua --out out2 > out.txt 2>&1
[ -f out2/new/kit/key.md ] || fail "exercise may make new folders beneath --out"
[ -f out2/inside-log.lua ] || fail "log(path) beneath --out starts a log there"
[ -e outside-log.lua ] && fail "log(path) outside --out writes nothing"
has "in 2: ok" "exercise beneath --out is not blocked"
has "blocked: in 4: log(\"../outside-log.lua\") writes outside --out out2" "log() outside is named"
has "blocked: in 5: os.tmpname" "os.tmpname is blocked"
ok "exercise into a new folder beneath --out; log() and os.tmpname in the sandbox"

# ---- --out DIR: where a replayed log's writes go (issue 12) ----
# Relative writes land beneath DIR, their folders made as the working
# directory has them, and print the path as typed; reads stay where they
# were recorded; writes that leave DIR are still blocked.
rm -rf out3 figs; mkdir out3 figs
printf 'plot,n\n1,5\n2,7\n' > field.csv
printf 'plot,n\n1,5\n' > out3/field.csv
cat > placed.lua <<LOG
$head3
--@ in 1
g = graph "rain -> soil -> yield"
m = sem(g, {["rain -> soil"] = 0.5, ["soil -> yield"] = 0.8})
d = m:simulate(40, {seed = 1})
--@ in 2 show
show(g:draw("figs/rain.svg"))
--| figs/rain.svg
--@ in 3
d:write_csv("draws.csv")
local f = io.open("notes.txt", "w") f:write("plot 3") f:close()
io.output("plain.txt") io.write("plain") io.close() io.output(io.stdout)
print("written")
--| written
--@ in 4 show
show(report("session.md"))
--| session.md
--@ in 5 show
show(log("kept.lua"))
--| kept.lua
--@ in 6
print(exercise{graph = g, model = m, dir = "kit", n = 20}.key)
--| kit/key.md
--@ in 7
local r = g:test(d, {plot = "tests.svg"})
print(#r)
--| 1
--@ in 8 show
show(#read_csv("field.csv"))
--| 2
--@ in 9
io.open("figs/../../escape.txt", "w")
--@ in 10
g:draw("$tmp/absolute.svg")
--@ in 11
d:write_csv("../draws-outside.csv")
LOG
"$exe" --replay placed.lua --out out3 > out.txt 2>&1
[ $? = 1 ] || fail "the replay with blocked writes exits 1"
for f in figs/rain.svg draws.csv notes.txt plain.txt session.md kept.lua kit/key.md kit/data.csv \
         kit/graph.svg tests.svg; do
  [ -s "out3/$f" ] || fail "the relative write of $f lands in --out: out3/$f"
  [ -e "$f" ] && fail "the relative write of $f does not land in the working directory"
done
for f in escape.txt absolute.svg draws-outside.csv; do
  [ -e "$f" ] && fail "a write that leaves --out is blocked: $f exists"
done
[ "$(cat out3/notes.txt)" = "plot 3" ] || fail "io.open for writing lands in --out"
for k in 1 2 3 4 5 6 7 8; do has "in $k: ok" "entry $k matches, printing the paths as typed"; done
has "blocked: in 9: io.open(\"figs/../../escape.txt\", \"w\") writes outside --out out3" ".. out of --out is blocked"
has "blocked: in 10: g:draw(\"$tmp/absolute.svg\") writes outside --out out3" "an absolute path outside --out is blocked"
has "blocked: in 11: f:write_csv(\"../draws-outside.csv\") writes outside --out out3" "f:write_csv out of --out is blocked"
has "11 commands: 8 matched, 0 differed, 3 blocked" "the summary"
grep -q 'out3' out3/session.md && fail "the report names nothing of --out"
ok "--out DIR: relative writes land in DIR as typed; reads stay; writes leaving DIR are blocked"

# ---- a script's log: its entries' places ('--@ at') ----
# A script's statement runs under the script's chunk name and line, so an
# error names the file's line (Lua 5.4 manual, 4.6: luaL_loadbuffer's chunk
# name "@file" gives positions "file:LINE:"); the replay runs each entry the
# same way, --update keeps the places, and a place that would cost more than
# the documented limit of newlines is refused with the log's line.  A return
# at the script's top level ends it (manual 3.3.4) and prints nothing, in
# the replay too.
cat > places.lua <<'EOF2'
local area = 6 * 7
print(area)

print(pcall(function() error("negative width") end))
if area then return area end
print("not reached")
EOF2
"$exe" --log places.log places.lua > out.txt 2>&1 || fail "places.lua with --log exits $?"
grep -qx -- "--| false	places.lua:4: negative width" places.log || fail "the log records the file's line"
[ "$(grep -c -- '^--@ at @places.lua ' places.log)" = 4 ] || fail "each entry of the script has its place"
grep -q "not reached" out.txt && fail "a return at the script's top level ends it"
"$exe" --replay places.log --update > out.txt 2>&1 || fail "a script's log replays (exit $?)"
has "4 commands: 4 matched, 0 differed" "the script's log matches"
[ "$(grep -c -- '^--@ at @places.lua ' places.log)" = 4 ] || fail "--update keeps the places"
grep -qx -- "--@ at @places.lua 4" places.log || fail "--update keeps the line of a place"
"$exe" --replay places.log > out.txt 2>&1 || fail "the updated script's log replays"
printf '%s\n--@ in 1 (1 line)\nprint(1)\n--| 1\n--@ at =x 10000001\n' "$head3" > far.lua
"$exe" --replay far.lua > out.txt 2>&1
[ $? = 1 ] || fail "a place past the limit is refused"
has "sluice: far.lua:7: the line of '--@ at' is not a whole number from 1 to 10000000" "the refusal names the log's line"
ok "a script's log replays at the script's lines, --update keeps them, a place past the limit is refused"

# ---- logs that are not plain files, and a log saved with CRLF ----
"$exe" --replay . > out.txt 2>&1
[ $? = 1 ] || fail "a folder as the log exits 1"
has "cannot read the log: .: a directory, not a file" "a folder is named as such"
"$exe" --replay /dev/zero > out.txt 2>&1
[ $? = 1 ] || fail "a device as the log exits 1"
has "/dev/zero: not a regular file" "a device is refused at once"
mkfifo fifo.lua
timeout 20 "$exe" --replay fifo.lua > out.txt 2>&1
[ $? = 1 ] || fail "a FIFO as the log is refused, not waited on"
sed 's/$/\r/' script.lua > crlf.lua
"$exe" --replay crlf.lua > out.txt 2>&1 || fail "a log saved with CRLF line ends replays"
has "2 commands: 2 matched, 0 differed" "the CRLF log matches"
ok "a folder, a device or a FIFO as the log is refused; a CRLF log replays"
echo "$n passed, 0 failed"
