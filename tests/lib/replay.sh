# replay.sh: what the replay shell tests share, sourced with the name of
# the scratch folder's prefix in $scratch.  Leaves the working directory in
# a fresh folder (removed at exit) and defines exe, fail, ok, has and head3.
B=${B:-build}
exe=$(cd "$B" && pwd)/sluice
tmp=$(mktemp -d "${TMPDIR:-/tmp}/$scratch.XXXXXX")
trap 'rm -rf "$tmp"' EXIT
cd "$tmp" || exit 1
n=0
fail() { echo "FAIL  $1"; [ -f out.txt ] && sed 's/^/      /' out.txt; exit 1; }
ok() { n=$((n + 1)); echo "ok    $1"; }
has() { grep -qF -- "$1" out.txt || fail "$2: the output lacks '$1'"; }
head3='--@ sluice 0.1.0 session log
--@ started 2026-01-01T00:00:00Z
--@ lua 5.4'
