#!/bin/sh
# shellcheck disable=SC2086 # $cc, $flags, $mgh and $PERF_SIZES are word lists
# perf.sh [DERVISH] - dervish's performance benchmarks: (1) a two-layer
# network against a hand-written gradient, (2) a 10^4-statement scalar chain
# against central differences, (3) More, Garbow & Hillstrom test functions,
# (4) compiler scaling (perf_scale.sh), (5) a dense Jacobian of 4 outputs
# and 40 params (run before 4). See bench/PERF.md. Files go to
# $PERF_OUT (default build/perf); set PERF_SIZES to change the scaling sizes.
set -eu
here=$(cd "$(dirname "$0")" && pwd)
repo=$(dirname "$here")
dervish=${1:-$repo/build/dervish}
if [ ! -x "$dervish" ]; then
    echo "perf.sh: no dervish executable at '$dervish' (run make first)" >&2
    exit 2
fi
out=${PERF_OUT:-$repo/build/perf}
mkdir -p "$out"
cc=${CC:-cc}
flags="-std=c99 -Wall -Wextra -Wpedantic -Wshadow -Werror -O2 -I$out -I$here -I$repo/samples/common"

"$dervish" build --emit value,gradient,hessvec -o "$out/net2.c" "$here/net2.dvs"
$cc $flags -o "$out/perf_net" "$here/perf_net.c" "$here/perf_net_hand.c" \
    "$here/perf_timing.c" "$out/net2.c" "$repo/samples/common/sample_util.c" -lm
"$out/perf_net"
echo

sh "$here/gen_chain.sh" 10000 100 chain >"$out/chain.dvs"
"$dervish" build -o "$out/chain.c" "$out/chain.dvs"
"$dervish" build --loop-repeats 0 --name chainflat -o "$out/chainflat.c" \
    "$out/chain.dvs"
echo "(compiling the 10^4-statement chain written out at -O2 takes about half a minute)"
$cc $flags -o "$out/perf_chain" "$here/perf_chain.c" "$here/perf_timing.c" \
    "$out/chain.c" "$out/chainflat.c" "$repo/samples/common/sample_util.c" -lm
"$out/perf_chain"
echo

mgh=""
for model in "$here"/mgh_*.dvs; do
    name=$(basename "$model" .dvs)
    "$dervish" build -o "$out/$name.c" "$model"
    mgh="$mgh $out/$name.c"
done
$cc $flags -o "$out/perf_mgh" "$here/perf_mgh.c" "$here/perf_timing.c" $mgh -lm
"$out/perf_mgh"
echo

# benchmark 5 first in its output: the scaling runs take minutes
"$dervish" build --emit value,adjoint,tangent,jacobian -o "$out/jac40.c" \
    "$here/jac40.dvs"
$cc $flags -o "$out/perf_jacobian" "$here/perf_jacobian.c" "$here/perf_timing.c" \
    "$out/jac40.c" -lm
"$out/perf_jacobian"
echo "  the emitter chose: $(grep -o 'One [a-z]* sweep per [a-z ]*' "$out/jac40.c")"
echo

echo "4. compiler scaling: chains of 100 params (gen_chain.sh)"
sh "$here/perf_scale.sh" "$dervish" "$out/scale" ${PERF_SIZES:-1000 10000 100000 1000000}
