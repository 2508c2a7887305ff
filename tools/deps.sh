#!/bin/sh
# Installs the Debian packages given as arguments when some are missing:
# with apt-get when run as root, otherwise prints the exact command and stops.
missing=""
for p in "$@"; do
    dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" ||
        missing="$missing $p"
done
[ -z "$missing" ] && exit 0
if [ "$(id -u)" = 0 ]; then
    echo "  DEPS   installing:$missing"
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq >/dev/null && apt-get install -y -qq --no-install-recommends $missing >/dev/null ||
        { echo "deps: apt-get install failed for:$missing" >&2; exit 1; }
else
    echo "loopwise needs these Debian packages:$missing" >&2
    echo "install them with:  sudo apt-get install$missing" >&2
    exit 1
fi
