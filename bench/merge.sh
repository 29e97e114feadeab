#!/usr/bin/env bash
# Merge benchmark: `ohmtrail merge` of an archive into an empty database against
# `ohmtrail import` of the same portfolio's visit file into an empty database (target: merge no
# slower, ratio <= 1.0). The portfolio is the import benchmark's, from examples/gen_portfolio.rs.
#   1. generate the portfolio (PROPERTIES x 12 circuits x 5 visits) as a visit file;
#   2. import it into an empty database (timed);
#   3. write that database's archive with `export --archive` (timed, for information);
#   4. merge the archive into an empty database (timed), and check the two databases' row
#      counts agree; repeat steps 2 and 4 RUNS times and take the median of each.
# Usage: bench/merge.sh [PROPERTIES] [RUNS]   (default 10000 = 600,000 test records; 3 runs)
set -euo pipefail
props="${1:-10000}"
runs="${2:-3}"
cd "$(dirname "$0")/.."

cargo build --release --quiet --bin ohmtrail --example gen_portfolio
bin="$(pwd)/target/release/ohmtrail"
work="$(mktemp -d "${TMPDIR:-/tmp}/ohmtrail-merge.XXXXXX")"
trap 'rm -rf "$work"' EXIT
file="$work/portfolio.csv"
target/release/examples/gen_portfolio "$props" "$file"
rows=$(($(wc -l <"$file") - 1))
echo "portfolio: $props properties, $rows rows, $(du -h "$file" | cut -f1)"

# secs CMD...: wall seconds of one run, printed, and its CPU seconds (user + system) appended
# to $work/cpu.log; the command's output goes to $work/last.log. On a shared machine the wall
# clock also holds waits for a core, so both are shown.
secs() {
    local start end
    start=$(date +%s.%N)
    /usr/bin/time -f "%U %S" -o "$work/time.log" "$@" >"$work/last.log" 2>&1 ||
        { cat "$work/last.log" >&2; exit 1; }
    end=$(date +%s.%N)
    awk '{ printf "%.3f\n", $1 + $2 }' "$work/time.log" >>"$work/cpu.log"
    awk -v a="$start" -v b="$end" 'BEGIN { printf "%.3f", b - a }'
}
cpu_last() { tail -n 1 "$work/cpu.log"; }
median() { sort -n | awk '{ v[NR] = $1 } END { print (NR % 2) ? v[(NR + 1) / 2] : (v[NR / 2] + v[NR / 2 + 1]) / 2 }'; }

[ -x /usr/bin/time ] || { echo "needs /usr/bin/time (Debian's time package)" >&2; exit 1; }
imports=(); merges=(); import_cpu=(); merge_cpu=()
for i in $(seq 1 "$runs"); do
    rm -f "$work/imported.db"* "$work/merged.db"*
    imports+=("$(secs "$bin" --db "$work/imported.db" import "$file")")
    import_cpu+=("$(cpu_last)")
    if [ "$i" -eq 1 ]; then
        export_s=$(secs "$bin" --db "$work/imported.db" export --archive "$work/all.jsonl")
        echo "archive: $(du -h "$work/all.jsonl" | cut -f1), written in ${export_s} s"
    fi
    merges+=("$(secs "$bin" --db "$work/merged.db" merge "$work/all.jsonl")")
    merge_cpu+=("$(cpu_last)")
    echo "run $i: import ${imports[-1]} s (CPU ${import_cpu[-1]} s), merge ${merges[-1]} s (CPU ${merge_cpu[-1]} s)"
done
a=$("$bin" --db "$work/imported.db" visit list --json | python3 -c 'import json,sys; print(sum(v["test_records"] for v in json.load(sys.stdin)))')
b=$("$bin" --db "$work/merged.db" visit list --json | python3 -c 'import json,sys; print(sum(v["test_records"] for v in json.load(sys.stdin)))')
[ "$a" -eq "$b" ] && [ "$a" -eq "$rows" ] || { echo "records: imported $a, merged $b, file $rows" >&2; exit 1; }
im=$(printf '%s\n' "${imports[@]}" | median)
me=$(printf '%s\n' "${merges[@]}" | median)
ic=$(printf '%s\n' "${import_cpu[@]}" | median)
mc=$(printf '%s\n' "${merge_cpu[@]}" | median)
echo "machine: $(nproc) cores, load $(cut -d' ' -f1-3 /proc/loadavg)"
awk -v m="$me" -v i="$im" 'BEGIN { printf "median wall: merge %.3f s, import %.3f s; ratio merge / import %.2f (target <= 1.0: %s)\n", m, i, m / i, (m / i <= 1.0) ? "met" : "not met" }'
awk -v m="$mc" -v i="$ic" 'BEGIN { printf "median CPU:  merge %.3f s, import %.3f s; ratio merge / import %.2f\n", m, i, m / i }'
