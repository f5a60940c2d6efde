#!/bin/sh
# Builds addsite twice — plain (build/) and with AddressSanitizer + UndefinedBehaviorSanitizer
# (build-asan/) — and runs every test (cmocka units and the script checks, valgrind included
# in the plain build) in both; then runs each libFuzzer target (tests/fuzz.sh, build-fuzz/)
# for AS_FUZZ_SECONDS (default here 60) seconds. AS_FUZZ_SECONDS=0 skips the fuzz step.
set -e
cd "$(dirname "$0")/.."
jobs=$(nproc 2>/dev/null || echo 2)
cmake -S . -B build -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
cmake --build build -j"$jobs"
ctest --test-dir build --output-on-failure -j"$jobs"
cmake -S . -B build-asan -DAS_SANITIZE=ON -DCMAKE_BUILD_TYPE=Debug >/dev/null
cmake --build build-asan -j"$jobs"
ASAN_OPTIONS=detect_leaks=1:abort_on_error=1 UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
    ctest --test-dir build-asan --output-on-failure -j"$jobs"
if [ "${AS_FUZZ_SECONDS:-60}" != 0 ]; then
    AS_FUZZ_SECONDS=${AS_FUZZ_SECONDS:-60} sh tests/fuzz.sh
fi
echo "all tests passed in build/ and build-asan/; fuzz targets ran clean"
