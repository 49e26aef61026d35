#!/bin/sh
# run.sh: every test of `make check`, with one summary line at the end.
# Environment: B (build dir), PYTHON, LUA.
B=${B:-build}; PYTHON=${PYTHON:-python3}; LUA=${LUA:-lua5.4}
export B PYTHON LUA
if [ -n "$SLUICE_ASAN" ]; then
  export SLUICE_ASAN
  export LSAN_OPTIONS="suppressions=$(pwd)/tests/lsan.supp:print_suppressions=0"
  export ASAN_OPTIONS="abort_on_error=0:detect_leaks=1"
  export UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1"
fi
pass=0; fail=0; failed=
run() {  # run NAME CMD...
  name=$1; shift
  if "$@" > "$B/test-$name.log" 2>&1; then
    pass=$((pass + 1)); echo "ok    $name"
  else
    fail=$((fail + 1)); failed="$failed $name"; echo "FAIL  $name (see $B/test-$name.log)"
    tail -n 20 "$B/test-$name.log" | sed 's/^/      /'
  fi
}
for t in "$B"/tests/test_*; do
  [ -x "$t" ] && run "c-$(basename "$t")" "$t"
done
run lua-suite "$B/sluice" tests/lua/run.lua
for t in tests/shell/*.sh; do
  [ -f "$t" ] && run "shell-$(basename "$t" .sh)" sh "$t"
done
for t in tests/shell/*.py tests/oracle/*.py; do
  [ -f "$t" ] || continue
  if "$PYTHON" -c 'import sys' 2>/dev/null; then
    run "py-$(basename "$t" .py)" "$PYTHON" "$t"
  fi
done
echo "$pass passed, $fail failed"
[ "$fail" = 0 ]
