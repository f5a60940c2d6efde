#!/bin/sh
# Annotates the process lab's reaction list (examples/process_lab_reactions.smi): every record
# gets its predicted products and, where a product was recorded, the check verdict; malformed
# records get an error with their position. Writes JSON Lines to standard output (the
# committed examples/process_lab_reactions.annotated.jsonl is this output) and the summary to
# standard error.
# Usage: examples/annotate_demo.sh [path/to/addsite] [more annotate options, e.g. --format tsv]
# The binary defaults to $ADDSITE, then build/addsite beside this directory.
# The list holds malformed records on purpose: they are reported (error records and the
# summary) under --on-error ignore, so the demo exits 0 when it ran to the end.
here=$(cd "$(dirname "$0")" && pwd)
bin=${1:-${ADDSITE:-$here/../build/addsite}}
case $bin in /*) ;; *) bin=$(pwd)/$bin ;; esac
[ $# -gt 0 ] && shift
if [ ! -x "$bin" ]; then
    echo "annotate_demo: no addsite binary at $bin (build first: cmake -S . -B build && cmake --build build)" >&2
    exit 2
fi
cd "$here" && exec "$bin" annotate --on-error ignore process_lab_reactions.smi "$@"
