#!/bin/sh
# shellcheck disable=SC2086 # ${CC:-cc} may hold a command with options
# perf_scale.sh DERVISH OUT [SIZES...] - benchmark 4: for chains of each
# size (statements; default 1000 10000 100000 1000000) made by gen_chain.sh
# with 100 params, print `dervish build` wall time and peak RSS, and the
# time of `${CC:-cc} -O2 -c` on the emitted C, capped at $PERF_CC_TIMEOUT
# seconds (default 600).
set -eu
here=$(cd "$(dirname "$0")" && pwd)
dervish=$1 out=$2
shift 2
[ $# -gt 0 ] || set -- 1000 10000 100000 1000000
cap=${PERF_CC_TIMEOUT:-600}
mkdir -p "$out"
printf '  %10s %12s %14s %12s %14s\n' statements "build/s" "build RSS/MiB" "C lines" "cc -O2 -c/s"
for n in "$@"; do
    sh "$here/gen_chain.sh" "$n" 100 "chain$n" >"$out/chain$n.dvs"
    /usr/bin/time -f "%e %M" -o "$out/chain$n.time" \
        "$dervish" build -o "$out/chain$n.c" "$out/chain$n.dvs"
    read -r secs kib <"$out/chain$n.time"
    lines=$(wc -l <"$out/chain$n.c")
    start=$(date +%s.%N)
    if timeout "$cap" ${CC:-cc} -std=c99 -O2 -c -o "$out/chain$n.o" "$out/chain$n.c"; then
        cc_secs=$(printf "%.2f" "$(echo "$(date +%s.%N) - $start" | bc)")
    else
        cc_secs="timeout>$cap"
    fi
    printf '  %10d %12.2f %14.1f %12d %14s\n' "$n" "$secs" "$(echo "$kib / 1024" | bc -l)" \
        "$lines" "$cc_secs"
    rm -f "$out/chain$n.o"
    [ "$n" -le 100000 ] || rm -f "$out/chain$n.c" "$out/chain$n.dvs"
done
