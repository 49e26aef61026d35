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

cat > assign_const.lua <<'EOF'
local k <const> = 5
k = 6
print(k)
EOF
"$exe" -i -q < assign_const.lua > out.txt 2>&1
has "attempt to assign to const variable 'k'" "a <const> session local stays constant in the next input"
grep -q "> 5\$" out.txt || fail "the const keeps its value"
ok "a <const> local stays constant across inputs"

echo "all $n checks passed"
