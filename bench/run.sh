#!/usr/bin/env bash
# Benchmark `concord check` against a bare csv-crate parse of the same file.
#
#   bench/run.sh [ROWS...]        default: 1000000 4000000
#   REPEAT=3 bench/run.sh         rounds per size; the fastest wall time of each is reported
#
# Builds release, generates the synthetic survey once per size (cached in bench/out/), and for
# each size measures with /usr/bin/time -v, in rounds that run each command once in turn, wall
# time and peak RSS of
#   concord check --format json -o TMP codebook.toml data-N.csv        (with dataset.id)
#   concord check --format json -o TMP codebook-noid.toml data-N.csv   (without)
#   bare_csv data-N.csv                                                (reference limit)
# Prints a table and writes it to bench/out/results.md.
set -euo pipefail

here="$(cd "$(dirname "$0")" && pwd)"
root="$(dirname "$here")"
out="$here/out"
repeat="${REPEAT:-3}"
sizes=("$@")
[ ${#sizes[@]} -gt 0 ] || sizes=(1000000 4000000)

[ -x /usr/bin/time ] || { echo "bench: /usr/bin/time missing (apt-get install time)" >&2; exit 2; }

cd "$root"
cargo build --release --quiet --bin concord --example bare_csv
target="${CARGO_TARGET_DIR:-$root/target}/release"
concord="$target/concord"
bare="$target/examples/bare_csv"

mkdir -p "$out"
for n in "${sizes[@]}"; do
    if [ ! -s "$out/data-$n.csv" ] || [ "$here/generate.py" -nt "$out/data-$n.csv" ]; then
        echo "generating $n rows..." >&2
        python3 "$here/generate.py" "$n" "$out"
    fi
done
[ -s "$out/codebook.toml" ] || python3 "$here/generate.py" 1 "$out"

report="$(mktemp)"
timing="$(mktemp)"
trap 'rm -f "$report" "$timing"' EXIT

# once CMD... -> prints "SECONDS RSS_KB CPU_SECONDS" of one run (wall time, peak RSS, user +
# system time)
once() {
    set +e
    /usr/bin/time -v -o "$timing" "$@" >/dev/null 2>&1
    local rc=$?
    set -e
    # concord exits 1 when the gate fails (it will: the data has planted problems).
    if [ "$rc" -gt 1 ]; then
        echo "bench: '$*' failed with exit code $rc" >&2
        exit 2
    fi
    awk -F': ' '
        /Elapsed \(wall clock\)/ { n = split($2, p, ":"); s = 0; for (k = 1; k <= n; k++) s = s * 60 + p[k] }
        /Maximum resident set size/ { r = $2 }
        /(User|System) time \(seconds\)/ { c += $2 }
        END { print s, r, c }' "$timing"
}

# keep NAME SECONDS RSS CPU: remember the fastest run of NAME (with its CPU time) and the
# largest RSS seen.
declare -A best_s best_cpu most_rss
keep() {
    local name="$1" s="$2" r="$3" c="$4"
    if [ -z "${best_s[$name]:-}" ] || awk -v a="$s" -v b="${best_s[$name]}" 'BEGIN{exit !(a < b)}'; then
        best_s[$name]="$s"
        best_cpu[$name]="$c"
    fi
    [ "$r" -gt "${most_rss[$name]:-0}" ] && most_rss[$name]="$r"
    return 0
}

table="| rows | MB | codebook | concord s | concord CPU s | MB/s | bare s | bare MB/s | ratio | concord peak RSS MB | bare peak RSS MB |
| ---: | ---: | --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |"
for n in "${sizes[@]}"; do
    data="$out/data-$n.csv"
    bytes="$(stat -c %s "$data")"
    best_s=() best_cpu=() most_rss=()
    # The three commands take turns, round after round, so that a change in the machine's
    # load falls on all of them alike.
    for ((i = 0; i < repeat; i++)); do
        keep bare $(once "$bare" "$data")
        keep id $(once "$concord" check --format json -o "$report" "$out/codebook.toml" "$data")
        keep noid $(once "$concord" check --format json -o "$report" "$out/codebook-noid.toml" "$data")
    done
    for variant in id noid; do
        row="$(awk -v n="$n" -v b="$bytes" -v v="$variant" -v s="${best_s[$variant]}" \
                   -v kb="${most_rss[$variant]}" -v cpu="${best_cpu[$variant]}" \
                   -v bs="${best_s[bare]}" -v bkb="${most_rss[bare]}" 'BEGIN {
            mb = b / 1e6
            printf "| %d | %.0f | %s | %.2f | %.2f | %.0f | %.2f | %.0f | %.2f | %.1f | %.1f |", \
                n, mb, (v == "id" ? "with id" : "without id"), s, cpu, mb / s, bs, mb / bs, s / bs, kb / 1024, bkb / 1024 }')"
        table="$table
$row"
        echo "$row" >&2
    done
done

{
    echo "# concord check benchmark"
    echo
    echo "$(date -u +%Y-%m-%dT%H:%MZ), $(nproc) CPUs, $(lscpu | awk -F': *' '/Model name/ {print $2; exit}'), fastest of $repeat interleaved rounds"
    echo "(load average at the end: $(cut -d' ' -f1-3 /proc/loadavg))"
    echo
    echo "$table"
} >"$out/results.md"
echo
cat "$out/results.md"
