#!/usr/bin/env bash
# Instructions per row of `concord check` and of the bare csv parse, counted by valgrind's
# callgrind on the first ROWS rows of the benchmark data (default 20000). Unlike wall time
# this does not move with the load of a shared machine, so it is the figure to compare
# builds by. The file stays under 4 MB at the default size, so concord runs on one thread.
#
#   bench/instructions.sh [ROWS]
set -euo pipefail

here="$(cd "$(dirname "$0")" && pwd)"
root="$(dirname "$here")"
out="$here/out"
rows="${1:-20000}"

command -v valgrind >/dev/null || { echo "bench: valgrind missing (apt-get install valgrind)" >&2; exit 2; }
cd "$root"
cargo build --release --quiet --bin concord --example bare_csv
target="${CARGO_TARGET_DIR:-$root/target}/release"

mkdir -p "$out"
[ -s "$out/data-1000000.csv" ] || python3 "$here/generate.py" 1000000 "$out"
sample="$out/sample-$rows.csv"
head -n "$((rows + 1))" "$out/data-1000000.csv" >"$sample"
report="$(mktemp)"
trap 'rm -f "$report" "$out"/callgrind.*' EXIT

# count CMD... -> total instructions
count() {
    local log
    log="$(valgrind --tool=callgrind --callgrind-out-file="$out/callgrind.%p" "$@" 2>&1 >/dev/null || true)"
    echo "$log" | awk '/Collected :/ {print $NF}'
}

bare="$(count "$target/examples/bare_csv" "$sample")"
concord="$(count "$target/concord" check --format json -o "$report" "$out/codebook.toml" "$sample")"
awk -v r="$rows" -v b="$bare" -v c="$concord" 'BEGIN {
    printf "rows: %d\nbare csv parse: %.0f instructions a row\nconcord check:  %.0f instructions a row (%.2fx)\n", \
        r, b / r, c / r, c / b }'
