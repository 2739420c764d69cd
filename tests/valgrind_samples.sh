#!/bin/sh
# valgrind_samples.sh DERVISH - run `dervish build` and `dervish check` on
# every sample under valgrind's memcheck: any memory error or leak fails.
# Prints "N passed, N failed" over the runs.
set -u
dervish=$1
out=$(mktemp -d)
passed=0
failed=0
for model in samples/*/*.dvs; do
    case $model in samples/common/*) continue ;; esac   # used by others
    for cmd in "build -o $out/m.c" "check"; do
        if valgrind -q --leak-check=full --show-leak-kinds=all \
               --errors-for-leak-kinds=all --error-exitcode=99 \
               "$dervish" $cmd "$model" >"$out/log" 2>&1; then
            passed=$((passed + 1))
        else
            failed=$((failed + 1))
            echo "valgrind: dervish $cmd $model failed:"
            cat "$out/log"
        fi
    done
done
rm -rf "$out"
echo "valgrind: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
