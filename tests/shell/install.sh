#!/bin/sh
# install.sh: make install honours DESTDIR and PREFIX, and the installed
# module and Lua layer work from a stock lua5.4.
B=${B:-build}; LUA=${LUA:-lua5.4}
set -e
[ -n "$SLUICE_ASAN" ] && { echo "skipped under the sanitizer build"; exit 0; }
dest=$(mktemp -d)
trap 'rm -rf "$dest"' EXIT
make --no-print-directory -s install B="$B" DESTDIR="$dest" PREFIX=/opt/sluice >/dev/null
for f in bin/sluice lib/lua/5.4/sluice.so share/lua/5.4/sluice/help.lua \
         share/lua/5.4/sluice/print.lua share/man/man1/sluice.1; do
  [ -f "$dest/opt/sluice/$f" ] || { echo "missing $f"; exit 1; }
  echo "installed $f"
done
out=$(LUA_CPATH="$dest/opt/sluice/lib/lua/5.4/?.so" "$LUA" -e \
  'print((require "sluice").graph "hedge -> birds")')
[ "$out" = "hedge -> birds" ] || { echo "installed module printed: $out"; exit 1; }
"$dest/opt/sluice/bin/sluice" --version | grep -q '^sluice ' || { echo "installed program fails"; exit 1; }
echo "installed program and module work"
