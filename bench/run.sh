#!/bin/sh
# run.sh [DERVISH] - generate C for the benchmark models with DERVISH (default
# build/dervish, as `make` builds it), compile it with bench.c at ${CC:-cc} -O2
# and run it. Files go to $BENCH_OUT, else to bench/ beside a DERVISH in a
# build directory of this tree, else to build/bench/.
set -eu
here=$(cd "$(dirname "$0")" && pwd)
repo=$(dirname "$here")
dervish=${1:-$repo/build/dervish}
if [ ! -x "$dervish" ]; then
    echo "run.sh: no dervish executable at '$dervish' (run make first)" >&2
    exit 2
fi
dervish_dir=$(cd "$(dirname "$dervish")" && pwd)
case $dervish_dir in
"$repo"/build*) out=$dervish_dir/bench ;;
*) out=$repo/build/bench ;;
esac
out=${BENCH_OUT:-$out}
mkdir -p "$out"

for model in fit20 fit20_centred; do
    "$dervish" build --explain -o "$out/$model.c" "$here/$model.dvs"
done
echo
${CC:-cc} -std=c99 -Wall -Wextra -Wpedantic -Wshadow -Werror -O2 \
    -I"$out" -I"$repo/samples/common" -o "$out/bench" "$here/bench.c" \
    "$out/fit20.c" "$out/fit20_centred.c" "$repo/samples/common/sample_util.c" -lm
"$out/bench"
