#!/bin/sh
# run.sh: run the notation fuzzer for a while and report in one line.
#   sh tests/fuzz/run.sh BINARY SECONDS [CORPUS]
# The seed corpus (tests/fuzz/corpus) is copied to a scratch directory under
# build/, so new inputs found by the run never land in the source tree.
# Exits non-zero when libFuzzer reports a crash, a leak or a timeout.
set -u
bin=${1:?usage: sh tests/fuzz/run.sh BINARY SECONDS}
secs=${2:-60}
here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)
corpus=${3:-$here/corpus}
case $corpus in /*) ;; *) corpus="$root/$corpus" ;; esac
build=${B:-build}
case $build in /*) ;; *) build="$root/$build" ;; esac
scratch="$build/fuzz/scratch.$$"
rm -rf "$scratch"
mkdir -p "$scratch"
cp "$corpus"/* "$scratch"/ 2>/dev/null || true
log="$scratch.log"
"$bin" -max_total_time="$secs" -max_len=4096 -print_final_stats=1 \
  -artifact_prefix="$scratch/" "$scratch" "$corpus" > "$log" 2>&1
rc=$?
execs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log" | tail -n 1)
took=$(sed -n 's/^Done [0-9]* runs in \([0-9]*\) second.*/\1/p' "$log" | tail -n 1)
[ -n "$took" ] || took=$secs
if [ "$rc" -ne 0 ]; then
  echo "fuzz: CRASH after ${execs:-?} executions (exit $rc); log $log"
  grep -E '^(==[0-9]+==|SUMMARY|fuzz_[a-z]*:|canonical text)' "$log" | head -n 5
  ls "$scratch"/crash-* "$scratch"/leak-* "$scratch"/timeout-* 2>/dev/null | head -n 3
  exit 1
fi
if [ -z "$execs" ]; then
  echo "fuzz: no final stats in $log"
  exit 1
fi
echo "fuzz: $execs executions in $took s, no crash"
rm -rf "$scratch" "$log"
