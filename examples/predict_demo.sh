#!/bin/sh
# Runs `addsite predict` on every line of examples/predict_demo.tsv (text layout).
# Usage: examples/predict_demo.sh [path/to/addsite] [--format json]
# The binary defaults to $ADDSITE, then build/addsite beside this directory.
here=$(cd "$(dirname "$0")" && pwd)
bin=${1:-${ADDSITE:-$here/../build/addsite}}
[ $# -gt 0 ] && shift
if [ ! -x "$bin" ]; then
    echo "predict_demo: no addsite binary at $bin (build first: cmake -S . -B build && cmake --build build)" >&2
    exit 2
fi
status=0
tab=$(printf '\t')
grep -v '^#' "$here/predict_demo.tsv" | while IFS="$tab" read -r smiles reagents note; do
    [ -z "$smiles" ] && continue
    echo "=== $note"
    "$bin" predict "$smiles" --reagents "$reagents" "$@" || status=1
    echo
done
exit $status
