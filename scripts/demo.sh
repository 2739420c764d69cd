#!/bin/sh
# demo.sh - the quick start: install what is missing, build dervish, then
# generate C for a sample model, compile it with its driver and run it.
set -eu
cd "$(dirname "$0")/.."
sh scripts/setup.sh
make -s
make -s demo
