#!/usr/bin/env bash
# Spreadsheet import benchmark: the same rows imported from a CSV file and from an .xlsx
# workbook (written by rust_xlsxwriter from that CSV), each into an empty database, in the same
# run; prints both times, peak RSS and the ratio (target: xlsx within 3 x the CSV).
# Usage: bench/xlsx.sh [PROPERTIES]   (default 2000 = 120,000 rows: 12 circuits x 5 visits)
set -euo pipefail
props="${1:-2000}"
cd "$(dirname "$0")/.."

cargo build --release --quiet --bin ohmtrail --example gen_portfolio --example csv_to_xlsx
work="$(mktemp -d "${TMPDIR:-/tmp}/ohmtrail-xlsx.XXXXXX")"
trap 'rm -rf "$work"' EXIT
target/release/examples/gen_portfolio "$props" "$work/rows.csv"
target/release/examples/csv_to_xlsx "$work/rows.csv" "$work/rows.xlsx"
rows=$(($(wc -l <"$work/rows.csv") - 1))
echo "rows: $rows; csv $(du -h "$work/rows.csv" | cut -f1), xlsx $(du -h "$work/rows.xlsx" | cut -f1)"

# measure NAME CMD...: wall seconds into $work/NAME.secs, peak RSS (kB) and CPU seconds (user,
# system) into $work/NAME.rss. The machine is shared: the CPU ratio is the steadier one.
measure() {
    local name="$1"; shift
    local start end
    start=$(date +%s.%N)
    if [ -x /usr/bin/time ]; then
        /usr/bin/time -f "%M %U %S" -o "$work/$name.rss" "$@" >"$work/$name.log" 2>&1
    else
        "$@" >"$work/$name.log" 2>&1
        echo "? ? ?" >"$work/$name.rss"
    fi
    end=$(date +%s.%N)
    echo "$start $end" | awk '{ printf "%.2f", $2 - $1 }' >"$work/$name.secs"
}

measure csv target/release/ohmtrail --db "$work/csv.db" import "$work/rows.csv"
measure xlsx target/release/ohmtrail --db "$work/xlsx.db" import "$work/rows.xlsx"
head -n 1 "$work/csv.log"; head -n 1 "$work/xlsx.log"
c=$(cat "$work/csv.secs"); x=$(cat "$work/xlsx.secs")
read -r crss cu cs <"$work/csv.rss"; read -r xrss xu xs <"$work/xlsx.rss"
echo "csv import:  ${c} s wall, $(awk -v u="$cu" -v s="$cs" 'BEGIN { print u + s }') s CPU, peak RSS ${crss} kB"
echo "xlsx import: ${x} s wall, $(awk -v u="$xu" -v s="$xs" 'BEGIN { print u + s }') s CPU, peak RSS ${xrss} kB"
awk -v c="$c" -v x="$x" 'BEGIN { printf "ratio xlsx / csv: %.2f wall (target <= 3)\n", x / c }'
awk -v a="$cu" -v b="$cs" -v u="$xu" -v s="$xs" 'BEGIN { printf "ratio xlsx / csv: %.2f CPU\n", (u + s) / (a + b) }'
