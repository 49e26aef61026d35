#!/bin/sh
# replay_kernel.sh: the kernel layer of the replay sandbox holds on its own.
# SLUICE_TEST_KERNEL_ONLY=1 switches the Lua-level environment off (the
# replayed code gets the real os, io, require and debug), so every attempt
# below reaches the kernel; nothing outside --out may change and no program
# may run.  Also: the refusal where the kernel lacks a layer, --limit, and
# a child that dies.  Environment: B.
scratch=sluice-kernel
. "$(dirname "$0")/../lib/replay.sh"
listing() { find . -path ./out -prune -o ! -name out.txt -print | sort | while read -r f; do
  if [ -f "$f" ]; then sha256sum "$f"; else echo "$f"; fi; done; }

mkdir out
echo "the orchard register" > keep.txt
ln -s "$tmp/made-by-link.txt" out/dangling
cat > bare.lua <<LOG
$head3
--@ in 1
print(os.execute("touch executed"))
--@ in 2
print(pcall(io.popen, "touch popened"))
--@ in 3
print(os.remove("keep.txt"))
--@ in 4
print(io.open("$tmp/outside.txt", "w"))
--@ in 5
print(io.open("out/dangling", "w"))
--@ in 6
print(os.rename("keep.txt", "out/moved.txt"))
--@ in 7
print(io.open("out/inside.txt", "w"):write("ok"):close())
--@ in 8
print(package.loadlib("libc.so.6", "system"))
--@ in 9
print(os.tmpname())
LOG
before=$(listing)
SLUICE_TEST_KERNEL_ONLY=1 "$exe" --replay bare.lua --out out > out.txt 2>&1
after=$(listing)
[ "$before" = "$after" ] || fail "nothing outside --out changes (listing differs)"
for f in executed popened outside.txt made-by-link.txt; do
  [ -e "$f" ] && fail "the kernel lets nothing happen: $f exists"
done
[ -f keep.txt ] || fail "keep.txt is still there"
[ "$(cat out/inside.txt)" = "ok" ] || fail "a write beneath --out works"
ok "with the Lua layer off, the kernel stops programs and writes outside --out"

# a kernel without Landlock or seccomp: an untrusted log is refused
cat > small.lua <<LOG
$head3
--@ in 1 show
show(6 * 7)
--| 42
LOG
SLUICE_TEST_NO_KERNEL_SANDBOX=landlock "$exe" --replay small.lua > out.txt 2>&1
code=$?
[ "$code" = 1 ] || fail "without Landlock the replay is refused with exit 1 (got $code)"
has "will not replay small.lua without --trust" "the refusal names the log"
has "Landlock" "the refusal says which layer is missing"
SLUICE_TEST_NO_KERNEL_SANDBOX=landlock "$exe" --replay small.lua --trust > out.txt 2>&1 \
  || fail "--trust replays where the kernel cannot confine"
has "1 commands: 1 matched, 0 differed" "the trusted replay runs"
"$exe" --replay small.lua > out.txt 2>&1 || fail "a clean log replays with exit 0"
ok "without the kernel layers an untrusted log is refused; --trust still replays"

# --limit: an entry that never ends is stopped; the rest is not run
cat > spin.lua <<LOG
$head3
--@ in 1
while true do end
--@ in 2 show
show(1)
--| 1
LOG
start=$(date +%s)
"$exe" --replay spin.lua --limit 1 > out.txt 2>&1
code=$?
took=$(( $(date +%s) - start ))
[ "$code" = 1 ] || fail "a timed-out replay exits 1 (got $code)"
[ "$took" -lt 30 ] || fail "--limit 1 stops the entry (took $took s)"
has "in 1: timed out after 1 s (--limit)" "the timed-out entry is named"
has "in 2: not run (the replay stopped at in 1)" "later entries are not run"
has "2 commands: 0 matched, 1 differed, 1 not run" "the summary counts them"
"$exe" --replay spin.lua --limit 0 > out.txt 2>&1
[ $? = 2 ] || fail "--limit 0 is a usage error"
ok "--limit stops an entry that runs too long"

# what the child prints on its standard error is marked as its own
cat > noisy.lua <<LOG
$head3
--@ in 1
io.stderr:write("2 commands: 2 matched, 0 differed\n")
LOG
"$exe" --replay noisy.lua > stdout.txt 2> stderr.txt
grep -q "^replayed code: 2 commands: 2 matched" stderr.txt \
  || { cat stderr.txt; fail "the child's error output carries a prefix"; }
grep -q "2 commands" stdout.txt && fail "the child cannot print into the report"
ok "the replayed code cannot print into the report"
# --update writes only the file it read: a log that swaps itself is refused
mkdir upd
cat > upd/self.lua <<LOG
$head3
--@ in 1
local f = io.open("upd/other.lua", "w") f:write("print('planted')") f:close()
os.rename("upd/other.lua", "upd/self.lua")
LOG
SLUICE_TEST_KERNEL_ONLY=1 "$exe" --replay upd/self.lua --out upd --update > out.txt 2>&1
[ $? = 1 ] || fail "an --update of a log that changed exits 1"
has "not rewriting upd/self.lua: it changed during the replay" "the refusal says why"
[ "$(cat upd/self.lua)" = "print('planted')" ] || fail "the swapped file is left alone"
[ -e upd/self.lua.bak ] && fail "no .bak is written"
ok "--update refuses a log that changed during the replay"
echo "$n passed, 0 failed"
