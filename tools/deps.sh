#!/bin/sh
# deps.sh: make sure the Debian packages sluice builds and tests with are
# present.  As root, install what is missing; otherwise print the one
# apt-get line that would, and fail.
#   usage: tools/deps.sh build|check|fuzz
set -e
build="make gcc pkg-config lua5.4 liblua5.4-dev libgsl-dev libopenblas-dev
libreadline-dev libgraphviz-dev libcsv-dev libsqlite3-dev libplplot-dev
libsodium-dev plplot-driver-cairo libcmark-dev libseccomp-dev libpq-dev"
check="libcmocka-dev python3 python3-networkx python3-statsmodels python3-pandas python3-scipy
postgresql-15 postgresql-client-15"
want=$build
[ "$1" = check ] && want="$build $check"
[ "$1" = fuzz ] && want="$build clang libclang-rt-dev"
missing=
for p in $want; do
  dpkg-query -W -f='${Status}\n' "$p" 2>/dev/null | grep -q '^install ok installed' \
    || missing="$missing $p"
done
[ -z "$missing" ] && exit 0
if [ "$(id -u)" = 0 ]; then
  echo "deps: installing$missing"
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq --no-install-recommends $missing >/dev/null
else
  echo "deps: missing packages; run:" >&2
  echo "  sudo apt-get install$missing" >&2
  exit 1
fi
