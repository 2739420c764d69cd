#!/bin/sh
# run.sh FUZZER SECONDS - run the libFuzzer target for SECONDS with the
# language dictionary, seeded from the samples and the test corpora.  The
# working corpus grows in build-fuzz/corpus; a crashing input is saved in
# build-fuzz/ and its report printed.  The fuzzer's own log goes to
# build-fuzz/fuzz.log; a summary line is printed at the end.  An input
# may take up to 60 s: a statement just under the def expansion limit
# (10^5 operations) takes some 10 s with every derivative product under
# the sanitizers, which is slow but not a hang.
set -u
fuzzer=$1
seconds=$2
seeds=build-fuzz/seeds
mkdir -p "$seeds" build-fuzz/corpus
cp samples/*/*.dvs tests/bad/*.dvs "$seeds"/ 2>/dev/null || true
cp tests/random/*.dvs "$seeds"/ 2>/dev/null || true
"$fuzzer" -dict=fuzz/dvs.dict -max_total_time="$seconds" \
    -max_len=4096 -timeout=60 -rss_limit_mb=2048 -print_final_stats=1 \
    -artifact_prefix=build-fuzz/ build-fuzz/corpus "$seeds" \
    >build-fuzz/fuzz.log 2>&1
status=$?
runs=$(sed -n 's/^stat::number_of_executed_units: *//p' build-fuzz/fuzz.log)
if [ "$status" -ne 0 ]; then
    grep -E "ERROR|SUMMARY|Test unit written" build-fuzz/fuzz.log | head -20
    echo "fuzz: the fuzzer stopped with status $status after ${runs:-?} runs"
    exit 1
fi
echo "fuzz: ${runs:-?} runs in $seconds s, no crash, leak or sanitizer report"
