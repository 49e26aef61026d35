#!/bin/sh
# cli.sh: the command line of sluice: options, modes, exit statuses and
# where messages go.  Each check prints what it tested; the script exits
# non-zero when any check failed.  Environment: B, the build directory.
B=${B:-build}
case $B in /*) ;; *) B=$(pwd)/$B ;; esac
SLUICE=$B/sluice
T=$(mktemp -d "${TMPDIR:-/tmp}/sluice-cli.XXXXXX") || exit 1
trap 'rm -rf "$T"' EXIT INT TERM
fails=0
checks=0
export HOME="$T/home" XDG_STATE_HOME="$T/state"

# run ARGS...: run sluice with stdin from $T/in (empty unless written);
# leaves $T/out, $T/err and $status.
run() {
  [ -f "$T/in" ] || : > "$T/in"
  "$SLUICE" "$@" < "$T/in" > "$T/out" 2> "$T/err"
  status=$?
  rm -f "$T/in"
}

# check NAME CONDITION...: record one check; CONDITION is a command.
check() {
  name=$1; shift
  checks=$((checks + 1))
  if "$@"; then
    echo "ok    $name"
  else
    fails=$((fails + 1))
    echo "FAIL  $name"
    echo "      status: $status"
    sed 's/^/      stdout: /' "$T/out"
    sed 's/^/      stderr: /' "$T/err"
  fi
}

is() { [ "$1" = "$2" ]; }                     # is A B: A equals B
has() { grep -q -e "$2" "$1"; }              # has FILE REGEX
hasnt() { ! grep -q -e "$2" "$1"; }          # hasnt FILE REGEX
line() { sed -n "$2p" "$1"; }                # line FILE N
empty() { [ ! -s "$1" ]; }                   # empty FILE
all() { for c in "$@"; do eval "$c" || return 1; done; }  # all 'CMD' ...

[ -x "$SLUICE" ] || { echo "FAIL  no program at $SLUICE"; exit 1; }

# ---- leaving at once --------------------------------------------------
run --version
check "--version: status 0, 'sluice VERSION' then Lua and the licence" all \
  'is $status 0' \
  'line "$T/out" 1 | grep -q "^sluice [0-9][0-9.]*$"' \
  'line "$T/out" 2 | grep -q "Lua 5\.4"' \
  'line "$T/out" 2 | grep -q "GPL-3\.0-or-later"' \
  'empty "$T/err"'

run --help
check "--help: status 0, usage on stdout, nothing on stderr" all \
  'is $status 0' 'has "$T/out" "^usage: sluice"' 'has "$T/out" "-e CODE"' \
  'empty "$T/err"'

run -h
check "-h: the same usage text" all 'is $status 0' 'has "$T/out" "^usage: sluice"'

# ---- usage errors -----------------------------------------------------
run --frobnicate
check "unknown option: status 2, stderr names it and suggests --help" all \
  'is $status 2' 'has "$T/err" "frobnicate"' 'has "$T/err" "--help"' \
  'empty "$T/out"'

run -x -e 'print("not run")'
check "unknown short option: status 2, nothing run" all \
  'is $status 2' "has \"\$T/err\" \"'-x'\"" 'hasnt "$T/out" "not run"'

run -e
check "-e without code: status 2, stderr names -e" all \
  'is $status 2' "has \"\$T/err\" \"'-e'\"" 'has "$T/err" "--help"'

run --log
check "--log without a path: status 2, stderr names --log" all \
  'is $status 2' 'has "$T/err" "--log"'

run --log "$T/session.lua" --no-log -e 'print("logged")'
check "--log PATH with --no-log: status 2, nothing run (--log is never ignored)" all \
  'is $status 2' 'has "$T/err" "contradict"' 'hasnt "$T/out" "logged"'

run --log="$T/session.lua" -e 'print("logged")'
check "--log=PATH logs the -e code" all 'is $status 0' 'has "$T/out" "^logged$"' \
  'empty "$T/err"' "has \"\$T/session.lua\" '^print(\"logged\")$'"

# ---- -e -----------------------------------------------------------------
run -e 'print(6 * 7)'
check "-e CODE: runs it, status 0" all \
  'is $status 0' 'is "$(cat "$T/out")" 42' 'empty "$T/err"'

run -e 'x = 20' -e 'print(x + 1)' -e'print(x * 2)'
check "-e given several times runs in order (also -eCODE)" all \
  'is $status 0' 'is "$(line "$T/out" 1)" 21' 'is "$(line "$T/out" 2)" 40'

run -e 'return 42'
check "-e: values are not printed outside the prompt" all \
  'is $status 0' 'empty "$T/out"'

run -e 'local yield = nil + 1'
check "-e with a runtime error: status 1, 'sluice: (command line):1:'" all \
  'is $status 1' 'has "$T/err" "^sluice: (command line):1: .*arithmetic"'

run -e 'error("first")' -e 'print("second")'
check "-e: the first failure stops the rest" all \
  'is $status 1' 'has "$T/err" "first"' 'hasnt "$T/out" "second"'

run -e 'x = = 1'
check "-e with a syntax error: status 1, position given" all \
  'is $status 1' 'has "$T/err" "^sluice: (command line):1: "'

run -e 'assert(type(graph) == "function" and type(help) == "function")' \
    -e 'assert(package.loaded.sluice)' -e 'print("module ok")'
check "the sluice module is loaded and its functions are globals" all \
  'is $status 0' 'has "$T/out" "^module ok$"'

run -e 'for k, v in pairs(package.loaded.sluice) do
          if type(k) == "string" and k:sub(1, 1) == "_" and rawget(_G, k) == v
          then error("copied " .. k) end end'
check "module fields starting with _ are not copied into the globals" \
  is $status 0

run -e 'g = graph "a -> "'
check "a notation error keeps its caret line after 'sluice: (command line):1:'" all \
  'is $status 1' 'has "$T/err" "^sluice: (command line):1: .*line 1, column [0-9]*: "' \
  'has "$T/err" "^ *\^ *$"'

# ---- scripts -----------------------------------------------------------
cat > "$T/orchard.lua" <<'EOF'
-- an orchard: rain waters the soil, both raise the yield
local n = select("#", ...)
print("script", arg[0]:match("[^/]*$"), n, arg[1], arg[2], arg[-1] ~= nil)
print("dots", ...)
EOF
run "$T/orchard.lua" pears "two words"
check "script: runs with arg[0], arg[1..] and ... set, status 0" all \
  'is $status 0' \
  'is "$(line "$T/out" 1)" "$(printf "script\torchard.lua\t2\tpears\ttwo words\ttrue")"' \
  'is "$(line "$T/out" 2)" "$(printf "dots\tpears\ttwo words")"'

cat > "$T/fail.lua" <<'EOF'
local trees = 12
local function harvest(n)
  return n + nil
end
print("before")
harvest(trees)
print("after")
EOF
run "$T/fail.lua"
check "script with a runtime error: status 1, 'sluice: FILE:LINE:' on stderr" all \
  'is $status 1' "has \"\$T/err\" \"^sluice: $T/fail.lua:3: \"" \
  'has "$T/out" "^before$"' 'hasnt "$T/out" "after"'

printf 'print("line 1")\nlocal = 3\n' > "$T/syntax.lua"
run "$T/syntax.lua"
check "script with a syntax error: status 1, nothing run, line given" all \
  'is $status 1' "has \"\$T/err\" \"^sluice: $T/syntax.lua:2: \"" 'empty "$T/out"'

printf 'error({ code = 3 })\n' > "$T/table.lua"
run "$T/table.lua"
check "script raising a non-string error: status 1, one message" all \
  'is $status 1' 'has "$T/err" "^sluice: .*table value"'

printf 'os.exit(3)\n' > "$T/exit.lua"
run "$T/exit.lua"
check "script calling os.exit(3): status 3" is $status 3

run "$T/missing.lua"
check "missing script: status 1, stderr says it cannot open it" all \
  'is $status 1' 'has "$T/err" "^sluice: cannot open .*missing.lua"'

run -e 'print("first")' "$T/orchard.lua" x
check "-e runs before the script" all \
  'is $status 0' 'is "$(line "$T/out" 1)" first' 'has "$T/out" "^script"'

run -- "$T/orchard.lua" -q
check "-- ends the options; later ones go to the script" all \
  'is $status 0' 'has "$T/out" "^dots	-q$"'

# ---- standard input ----------------------------------------------------
printf 'print("piped " .. 6 * 7)\n' > "$T/in"
run
check "standard input that is not a terminal runs as a script" all \
  'is $status 0' 'is "$(cat "$T/out")" "piped 42"' 'empty "$T/err"'

printf 'print("ok")\nerror("soil too dry")\n' > "$T/in"
run
check "a piped script that fails: status 1, 'sluice: stdin:2:'" all \
  'is $status 1' 'has "$T/err" "^sluice: stdin:2: soil too dry"'

printf 'print(...)\n' > "$T/in"
run - rain soil
check "'sluice -' runs standard input with arguments" all \
  'is $status 0' 'is "$(cat "$T/out")" "$(printf "rain\tsoil")"'

# ---- the prompt over a pipe (-i) --------------------------------------
printf 'x = 41\nx + 1\nnil + 1\nx\nfor i = 1, 2 do\nprint("row " .. i)\nend\n1, "two"\n' > "$T/in"
run -i -q
check "-i over a pipe: values print, errors do not end the session" all \
  'is $status 0' 'has "$T/out" "42"' 'has "$T/out" "41"' \
  'has "$T/out" "row 1"' 'has "$T/out" "row 2"' 'has "$T/out" "two"' \
  'has "$T/err" "^error: attempt to perform arithmetic"' \
  'hasnt "$T/out" "Caution"'

printf 'print("hi")\n' > "$T/in"
run -i
check "-i without -q shows the banner with its caution" all \
  'is $status 0' 'has "$T/out" "help()"' 'has "$T/out" "Caution"'

printf 'print(x)\n' > "$T/in"
run -e 'x = "kept"' -i -q
check "-e then -i: the prompt sees what -e defined" all \
  'is $status 0' 'has "$T/out" "kept"'

# issue 12: a misspelled function said only "attempt to call a nil value"
run -e 'estimat{}'
check "a misspelled global function suggests the closest public name" all \
  'is $status 1' \
  'has "$T/err" "attempt to call a nil value (global .estimat.); did you mean .estimate.?"'

printf 'graf "a -> b"\n' > "$T/in"
run -i -q
check "the prompt suggests the closest name too" all \
  'has "$T/err" "(global .graf.); did you mean .graph.?"'

run -e 'zzzzzzzzzz()'
check "no suggestion when no name is near" all \
  'has "$T/err" "(global .zzzzzzzzzz.)$"'

echo "$((checks - fails)) passed, $fails failed"
[ "$fails" = 0 ]
