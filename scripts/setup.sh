#!/bin/sh
# setup.sh - install the Debian packages dervish needs to build and test
# that are not installed yet.  Run as root (or with sudo available).
set -eu
packages="make gcc clang libclang-rt-dev re2c lemon check pkg-config valgrind python3-mpmath graphviz mandoc cmake ninja-build"
missing=""
for p in $packages; do
    dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" ||
        missing="$missing $p"
done
if [ -n "$missing" ]; then
    echo "setup: installing$missing"
    sudo=""
    [ "$(id -u)" -eq 0 ] || sudo="sudo"
    $sudo apt-get update -qq
    DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y -qq $missing >/dev/null
fi
