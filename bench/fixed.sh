#!/usr/bin/env bash
# Benchmark `concord check` on the fixed-width twin of the benchmark file.
#
#   bench/fixed.sh [ROWS...]      default: 1000000
#   REPEAT=5 bench/fixed.sh
#
# Needs bench/out/data-N.csv (bench/run.sh generates it); writes data-N.txt and
# codebook-fixed.toml beside it with bench/to_fixed.py, then reports the fastest of REPEAT
# runs: wall time, CPU time, MB/s (of the fixed-width file) and peak RSS. There is no bare
# reference: the csv crate does not read fixed-width records.
set -euo pipefail

here="$(cd "$(dirname "$0")" && pwd)"
root="$(dirname "$here")"
out="$here/out"
repeat="${REPEAT:-3}"
sizes=("$@")
[ ${#sizes[@]} -gt 0 ] || sizes=(1000000)

[ -x /usr/bin/time ] || { echo "bench: /usr/bin/time missing (apt-get install time)" >&2; exit 2; }
cd "$root"
cargo build --release --quiet --bin concord
concord="${CARGO_TARGET_DIR:-$root/target}/release/concord"
report="$(mktemp)"
timing="$(mktemp)"
trap 'rm -f "$report" "$timing"' EXIT

echo "| rows | MB | concord s | concord CPU s | MB/s | peak RSS MB |"
echo "| ---: | ---: | ---: | ---: | ---: | ---: |"
for n in "${sizes[@]}"; do
    [ -s "$out/data-$n.csv" ] || { echo "bench: run bench/run.sh $n first" >&2; exit 2; }
    if [ ! -s "$out/data-$n.txt" ] || [ "$out/data-$n.csv" -nt "$out/data-$n.txt" ] \
        || [ "$here/to_fixed.py" -nt "$out/data-$n.txt" ]; then
        echo "writing the fixed-width twin of $n rows..." >&2
        python3 "$here/to_fixed.py" "$out/data-$n.csv" "$out"
    fi
    bytes="$(stat -c %s "$out/data-$n.txt")"
    best=""
    for ((i = 0; i < repeat; i++)); do
        set +e
        /usr/bin/time -f "%e %U %S %M" -o "$timing" \
            "$concord" check --format json -o "$report" "$out/codebook-fixed.toml" "$out/data-$n.txt"
        rc=$?
        set -e
        # Exit code 1 is expected: the data has planted problems.
        [ "$rc" -le 1 ] || { echo "bench: concord failed with exit code $rc" >&2; exit 2; }
        # The last line: GNU time puts "Command exited with non-zero status 1" before it.
        run="$(tail -n 1 "$timing")"
        if [ -z "$best" ] || awk -v a="${run%% *}" -v b="${best%% *}" 'BEGIN{exit !(a < b)}'; then
            best="$run"
        fi
    done
    echo "$best" | awk -v n="$n" -v b="$bytes" '{ mb = b / 1e6
        printf "| %d | %.0f | %.2f | %.2f | %.0f | %.1f |\n", n, mb, $1, $2 + $3, mb / $1, $4 / 1024 }'
done
