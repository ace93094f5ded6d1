#!/usr/bin/env bash
# Install the Debian packages lantern needs to build, test, plot and fuzz.
# Idempotent: asks dpkg which packages are missing and installs only those.
# As root it runs apt-get itself; otherwise it prints the exact command to run.
set -eu

PACKAGES="build-essential pkg-config
libgsl-dev libcfitsio-dev libopenblas-dev liblapacke-dev
libplplot-dev plplot-driver-cairo libcairo2-dev
libinih-dev libcjson-dev libcmocka-dev
libopenmpi-dev openmpi-bin
python3 python3-dev python3-astropy python3-scipy python3-numpy python3-matplotlib
clang libclang-rt-14-dev valgrind poppler-utils"

missing=""
for p in $PACKAGES; do
    # dpkg-query prints "install ok installed" only for a fully installed package.
    status=$(dpkg-query -W -f='${Status}' "$p" 2>/dev/null || true)
    case "$status" in
        *"ok installed") ;;
        *) missing="$missing $p" ;;
    esac
done

if [ -z "$missing" ]; then
    echo "install-deps: all packages present"
    exit 0
fi

cmd="apt-get update && DEBIAN_FRONTEND=noninteractive apt-get install -y --no-install-recommends$missing"
if [ "$(id -u)" -eq 0 ]; then
    echo "install-deps: installing$missing"
    apt-get update -q
    DEBIAN_FRONTEND=noninteractive apt-get install -y -q --no-install-recommends $missing
else
    echo "install-deps: missing packages:$missing" >&2
    echo "install-deps: run as root:  $cmd" >&2
    exit 1
fi
