#!/bin/sh
# module.sh: the Lua module loads into a stock lua5.4 and works there.
B=${B:-build}; LUA=${LUA:-lua5.4}
set -e
pre=
if [ -n "$SLUICE_ASAN" ]; then   # a sanitized module needs its runtime first
  pre="$(cc -print-file-name=libasan.so) $(cc -print-file-name=libubsan.so)"
  export ASAN_OPTIONS=detect_leaks=0
fi
out=$(LD_PRELOAD="$pre" LUA_CPATH="$B/?.so" "$LUA" -e '
  local s = require "sluice"
  local g = s.graph "orchard -> pears; hidden frost; frost -> pears"
  print(g)
  print(table.concat(g:parents "pears", ","))
  print(s.version)')
expected='hidden frost
frost -> pears
orchard -> pears
frost,orchard
0.1.0'
if [ "$out" != "$expected" ]; then
  echo "module output differs:"; echo "$out"; exit 1
fi
echo "module loads from $LUA and answers queries"
# an argument error in the module names the position and the expected type
err=$(LD_PRELOAD="$pre" LUA_CPATH="$B/?.so" "$LUA" -e 'require "sluice".graph(1)' 2>&1 || true)
case $err in
  *"bad argument #1 to 'graph' (string expected, got number)"*) echo "argument error ok";;
  *) echo "unexpected: $err"; exit 1;;
esac
