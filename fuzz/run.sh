#!/bin/sh
# run.sh FUZZER SECONDS - run the libFuzzer target for SECONDS with the
# language dictionary, seeded from the samples and the test corpora.  The
# working corpus grows in build-fuzz/corpus; crashes land in build-fuzz/.
set -eu
fuzzer=$1
seconds=$2
seeds=build-fuzz/seeds
mkdir -p "$seeds" build-fuzz/corpus
cp samples/*/*.dvs tests/bad/*.dvs "$seeds"/ 2>/dev/null || true
[ -d tests/random ] && cp tests/random/*.dvs "$seeds"/ 2>/dev/null || true
exec "$fuzzer" -dict=fuzz/dvs.dict -max_total_time="$seconds" \
    -max_len=4096 -timeout=10 -rss_limit_mb=2048 -print_final_stats=1 \
    -artifact_prefix=build-fuzz/ build-fuzz/corpus "$seeds"
