#!/bin/sh
# run_samples.sh DERVISH [NAME...] - build and run the sample models: for
# each sample (all when none is named) generate C from samples/NAME/NAME.dvs
# with DERVISH, compile it with the sample's driver, and run the driver;
# when Graphviz's dot is installed, also draw the model's graph (NAME.svg,
# from `dervish graph --sweep`).
# Generated files go to $SAMPLES_OUT/NAME/ when that is set, else next to a
# DERVISH built in this tree (build*/samples/NAME/), else build/samples/NAME/.
# Exits 1 when any step of any sample fails.
set -u
if [ $# -lt 1 ]; then
    echo "usage: sh samples/run_samples.sh DERVISH [NAME...]" >&2
    exit 2
fi
dervish=$1
case $dervish in
*/*) ;;
*) dervish=$(command -v "$dervish") || dervish=$1 ;;
esac
shift
if [ ! -x "$dervish" ]; then
    echo "run_samples.sh: no dervish executable at '$dervish'" >&2
    exit 2
fi
here=$(cd "$(dirname "$0")" && pwd)
repo=$(dirname "$here")
dervish_dir=$(cd "$(dirname "$dervish")" && pwd)
case $dervish_dir in
"$here" | "$here"/*) out_root=$repo/build/samples ;; # never write into samples/
"$repo"/*) out_root=$dervish_dir/samples ;;
*) out_root=$repo/build/samples ;;
esac
out_root=${SAMPLES_OUT:-$out_root}
cc=${CC:-cc}
dot=$(command -v dot) || {
    dot=""
    echo "run_samples.sh: no dot (Debian package graphviz), so no graphs drawn"
}

if [ $# -eq 0 ]; then
    for dir in "$here"/*/; do
        name=$(basename "$dir")
        [ -f "$dir/$name.dvs" ] && set -- "$@" "$name"
    done
fi

# Runs one sample; returns non-zero at the first step that fails.
run_one() {
    name=$1
    src=$here/$name
    out=$out_root/$name
    if [ ! -f "$src/$name.dvs" ] || [ ! -f "$src/main.c" ]; then
        echo "no sample '$name' (want $src/$name.dvs and $src/main.c)"
        return 1
    fi
    mkdir -p "$out" || return 1
    # a sample's own build options, if it has any, in NAME/build-options
    opts=$(cat "$src/build-options" 2>/dev/null || true)
    # shellcheck disable=SC2086 # the options are a word list
    "$dervish" build $opts -o "$out/$name.c" "$src/$name.dvs" || {
        echo "dervish build failed"
        return 1
    }
    if [ -n "$dot" ]; then
        "$dervish" graph --sweep -o "$out/$name.dot" "$src/$name.dvs" &&
            "$dot" -Tsvg -o "$out/$name.svg" "$out/$name.dot" || {
            echo "drawing the graph failed"
            return 1
        }
    fi
    "$cc" -std=c99 -Wall -Wextra -Wpedantic -Wshadow -Werror -O2 \
        -I"$out" -I"$here/common" -o "$out/$name" \
        "$out/$name.c" "$src/main.c" "$here/common/sample_util.c" -lm || {
        echo "compiling failed"
        return 1
    }
    "$out/$name" || {
        echo "the driver reported a failure (exit status $?)"
        return 1
    }
}

passed=0
failed=0
for name in "$@"; do
    echo "=== sample $name ==="
    if run_one "$name"; then
        passed=$((passed + 1))
    else
        echo "=== sample $name FAILED ==="
        failed=$((failed + 1))
    fi
    echo
done
echo "samples: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
