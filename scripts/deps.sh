#!/bin/sh
# deps.sh - install the Debian packages frostfit needs, or say how.
# Called by `make deps` with the package names; quiet when all are present.
missing=""
for p in "$@"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q 'install ok installed' \
    || missing="$missing $p"
done
[ -z "$missing" ] && exit 0
if [ "$(id -u)" = 0 ]; then
  echo "frostfit: installing missing packages:$missing" >&2
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq && apt-get install -y -qq --no-install-recommends $missing >&2 \
    || { echo "frostfit: apt-get failed; install by hand:$missing" >&2; exit 4; }
else
  echo "frostfit: missing packages:$missing" >&2
  echo "frostfit: run: sudo apt-get install$missing" >&2
  exit 4
fi
