#!/bin/sh
# run_all.sh BUILD_DIR - run every Check test program in BUILD_DIR/tests and
# print a closing summary of the checks they ran.  Exit status 1 when any
# program fails.
set -u
build=${1:-build}
export DERVISH="$build/dervish"
passed=0
failed=0
status=0
log=$(mktemp)
for t in "$build"/tests/test_*; do
    [ -x "$t" ] || continue
    CK_VERBOSITY=${CK_VERBOSITY:-normal} "$t" >"$log" 2>&1
    rc=$?
    cat "$log"
    # Check's summary: "100%: Checks: 7, Failures: 0, Errors: 0"
    line=$(grep -E '^[0-9]+%: Checks: ' "$log" | tail -n 1)
    checks=$(echo "$line" | sed -E 's/.*Checks: ([0-9]+).*/\1/')
    bad=$(echo "$line" | sed -E 's/.*Failures: ([0-9]+), Errors: ([0-9]+).*/\1 \2/' |
          awk '{print $1 + $2}')
    if [ -z "$line" ]; then
        echo "$(basename "$t"): no summary (exit status $rc)"
        failed=$((failed + 1))
        status=1
        continue
    fi
    passed=$((passed + checks - bad))
    failed=$((failed + bad))
    if [ "$rc" -ne 0 ] || [ "$bad" -ne 0 ]; then
        status=1
    fi
done
rm -f "$log"
echo "$passed passed, $failed failed"
exit $status
