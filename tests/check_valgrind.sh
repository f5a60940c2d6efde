#!/bin/bash
# check_valgrind.sh — valgrind memcheck (--leak-check=full, any error fails) on the predict
# demo (every line of examples/predict_demo.tsv, text and JSON) and on `addsite canon` over a
# spread subset of tests/data/canon_set.smi. tests/valgrind.supp holds the one suppression
# (PCRE2 JIT vector reads) with its reason. Skipped with a note when valgrind is missing or
# the binary is a sanitizer build (the two cannot run together).
# Environment: ADDSITE, AS_SOURCE_DIR, AS_BINARY_DIR (set by ctest); AS_VALGRIND_EVERY=N takes
# every Nth molecule of the canon set (default 10). Last line: "N passed, M failed".
set -u
src=${AS_SOURCE_DIR:-$(cd "$(dirname "$0")/.." && pwd)}
bin=${ADDSITE:-$src/build/addsite}
every=${AS_VALGRIND_EVERY:-10}
if ! command -v valgrind >/dev/null 2>&1; then
    echo "note: valgrind is not installed; skipped"
    echo "0 passed, 0 failed"
    exit 0
fi
if grep -q '^AS_SANITIZE:BOOL=ON' "${AS_BINARY_DIR:-.}/CMakeCache.txt" 2>/dev/null; then
    echo "note: sanitizer build; valgrind runs on the plain build only"
    echo "0 passed, 0 failed"
    exit 0
fi
vg=(valgrind --quiet --error-exitcode=99 --suppressions="$src/tests/valgrind.supp"
    --leak-check=full --show-leak-kinds=definite,indirect,possible
    --errors-for-leak-kinds=definite,indirect,possible)
passed=0
failed=0
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

run() { # name, then the command; valgrind's own status 99 means memcheck errors
    local name=$1
    shift
    "${vg[@]}" "$@" >"$tmp/out" 2>"$tmp/err"
    local rc=$?
    if [ $rc -eq 99 ] || grep -q '^==[0-9]*==' "$tmp/err"; then
        echo "FAIL  $name (memcheck):"
        grep '^==[0-9]*==' "$tmp/err" | head -20
        failed=$((failed + 1))
    elif [ $rc -gt 2 ]; then
        echo "FAIL  $name: exit status $rc"
        tail -3 "$tmp/err"
        failed=$((failed + 1))
    else
        echo "ok    $name"
        passed=$((passed + 1))
    fi
}

tab=$(printf '\t')
while IFS="$tab" read -r smiles reagents note; do
    case "$smiles" in ''|'#'*) continue ;; esac
    run "predict demo: ${note:0:60}" "$bin" predict "$smiles" --reagents "$reagents"
    run "predict demo (json): ${note:0:53}" "$bin" predict "$smiles" --reagents "$reagents" \
        --format json
done <"$src/examples/predict_demo.tsv"

grep -v '^#' "$src/tests/data/canon_set.smi" | awk -v n="$every" 'NR % n == 1' >"$tmp/canon.smi"
run "canon of $(wc -l <"$tmp/canon.smi") molecules of canon_set.smi" "$bin" canon <"$tmp/canon.smi"
run "canon of the same without stereo" "$bin" canon --no-stereo <"$tmp/canon.smi"
run "rules listing" "$bin" rules

echo "$passed passed, $failed failed"
[ "$failed" -eq 0 ]
