#!/bin/sh
# fuzz.sh — builds the libFuzzer targets (build-fuzz/, clang, AddressSanitizer +
# UndefinedBehaviorSanitizer + coverage) and runs each for a bounded time, two at a time.
# Fails on any crash, sanitizer report, leak, timeout (a single input over 10 s) or an input
# needing more than 2 GB. A failing input is saved as build-fuzz/artifacts/<target>/crash-*:
# copy it to tests/fuzz_corpus/<target>/ (a name saying what it is) once the bug is fixed, so
# ctest replays it in every build.
#
# Environment: AS_FUZZ_SECONDS  seconds per target (default 60)
#              AS_FUZZ_SEED     libFuzzer seed (default 1, so a run is repeatable)
#              AS_FUZZ_TARGETS  space-separated targets to run (default: every fuzz/fuzz_*.c)
#              AS_FUZZ_JOBS     targets run at once (default 2)
#              CC               compiler (default clang)
# New corpus entries go to build-fuzz/corpus/<target> (not committed); the committed seeds in
# fuzz/corpus/<target> and tests/fuzz_corpus/<target> are read, never written.
set -e
cd "$(dirname "$0")/.."
root=$(pwd)
secs=${AS_FUZZ_SECONDS:-60}
jobs=${AS_FUZZ_JOBS:-2}
cc=${CC:-clang}
if ! command -v "$cc" >/dev/null 2>&1; then
    echo "fuzz.sh: $cc not found (install clang: sh .ci/deps --test)" >&2
    exit 1
fi
cmake -S . -B build-fuzz -DAS_FUZZ=ON -DAS_TESTS=OFF -DCMAKE_C_COMPILER="$cc" \
      -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
cmake --build build-fuzz -j"$(nproc 2>/dev/null || echo 2)" >/dev/null

targets=${AS_FUZZ_TARGETS:-$(cd fuzz && ls fuzz_*.c | sed -e 's/^fuzz_//' -e 's/\.c$//' | grep -v '^fail$')}

# Longest input worth trying per target (bytes): SMILES up to a few kB reach every reader
# path; rule files are a few kB of JSON; reagent texts are short; prediction is capped at 512
# bytes inside the target; record files need several lines.
max_len() {
    case "$1" in
        smiles) echo 4096 ;;
        rules) echo 16384 ;;
        reagents) echo 1024 ;;
        predict) echo 512 ;;
        records) echo 8192 ;;
        *) echo 4096 ;;
    esac
}

run_one() {
    t=$1
    out=build-fuzz/corpus/$t
    art=build-fuzz/artifacts/$t
    mkdir -p "$out" "$art"
    seeds="$root/fuzz/corpus/$t"
    [ -d "$root/tests/fuzz_corpus/$t" ] && seeds="$seeds $root/tests/fuzz_corpus/$t"
    log=build-fuzz/fuzz-$t.log
    # shellcheck disable=SC2086
    if ASAN_OPTIONS=detect_leaks=1:abort_on_error=1 \
       UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
       "build-fuzz/fuzz_$t" -seed="${AS_FUZZ_SEED:-1}" -max_total_time="$secs" \
            -max_len="$(max_len "$t")" -timeout=10 \
            -rss_limit_mb=2048 -print_final_stats=1 -artifact_prefix="$art/" \
            "$out" $seeds >"$log" 2>&1; then
        runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log")
        rate=$(sed -n 's/^stat::average_exec_per_sec: *//p' "$log")
        echo "fuzz $t: ok, $runs inputs in ${secs} s ($rate/s)"
        return 0
    fi
    # A timeout is re-checked: the saved input runs alone, once. If it then finishes well
    # inside the limit, the timeout was the machine stalling (a loaded CI host), not a slow
    # input; that is reported and the target counts as passed. A slow input fails again here.
    if grep -q 'libFuzzer: timeout' "$log" && ! grep -qE 'ERROR: (AddressSanitizer|UndefinedBehavior|LeakSanitizer)|runtime error' "$log"; then
        unit=$(ls -t "$art"/timeout-* 2>/dev/null | head -1)
        if [ -n "$unit" ]; then
            t0=$(date +%s)
            if ASAN_OPTIONS=detect_leaks=1:abort_on_error=1 \
               UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
               "build-fuzz/fuzz_$t" -timeout=3 "$unit" >"$log.recheck" 2>&1; then
                t1=$(date +%s)
                echo "fuzz $t: ok after a re-check: a timeout during fuzzing did not reproduce ($unit ran alone in $((t1 - t0)) s; the host stalled)"
                return 0
            fi
        fi
    fi
    echo "fuzz $t: FAILED (log build-fuzz/fuzz-$t.log, inputs in $art/):" >&2
    grep -E 'ERROR|invariant|SUMMARY|Test unit written' "$log" | head -8 >&2
    return 1
}

status=0
set -- $targets
while [ $# -gt 0 ]; do
    pids=""
    i=0
    while [ $# -gt 0 ] && [ $i -lt "$jobs" ]; do
        run_one "$1" > "build-fuzz/result-$1.txt" 2>&1 &
        pids="$pids $!:$1"
        shift
        i=$((i + 1))
    done
    for p in $pids; do
        if ! wait "${p%%:*}"; then
            status=1
        fi
        cat "build-fuzz/result-${p#*:}.txt"
    done
done
if [ $status -ne 0 ]; then
    echo "fuzz.sh: a fuzz target failed" >&2
    exit 1
fi
echo "fuzz.sh: every target ran ${secs} s without a failure"
