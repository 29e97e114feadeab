#!/usr/bin/env bash
# Import benchmark: times `ohmtrail import` of a synthetic portfolio against the sqlite3
# shell's unchecked `.import` of the same file into one untyped table, and reports peak RSS.
# Usage: bench/import.sh [PROPERTIES]   (default 10000 = 600,000 rows: 12 circuits x 5 visits)
set -euo pipefail
props="${1:-10000}"
cd "$(dirname "$0")/.."

if ! command -v sqlite3 >/dev/null; then
    echo "installing Debian's sqlite3 for the comparison" >&2
    if [ "$(id -u)" -eq 0 ]; then apt-get update -qq && apt-get install -y -qq sqlite3
    else sudo apt-get update -qq && sudo apt-get install -y -qq sqlite3; fi
fi

cargo build --release --quiet --bin ohmtrail --example gen_portfolio
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
file="$work/portfolio.csv"
target/release/examples/gen_portfolio "$props" "$file"
rows=$(($(wc -l <"$file") - 1))
echo "file: $rows rows, $(du -h "$file" | cut -f1)"

# Seconds (wall clock) and peak RSS in kB of a command, via /usr/bin/time when present.
measure() {
    local out="$1"; shift
    local start end
    start=$(date +%s.%N)
    if [ -x /usr/bin/time ]; then
        /usr/bin/time -f "%M" -o "$out.rss" "$@" >"$out.log" 2>&1
    else
        "$@" >"$out.log" 2>&1
        echo "?" >"$out.rss"
    fi
    end=$(date +%s.%N)
    echo "$start $end" | awk '{ printf "%.2f", $2 - $1 }' >"$out.secs"
}

# ohmtrail: every cell parsed and checked, the register built, one transaction.
measure "$work/ohmtrail" target/release/ohmtrail --db "$work/ohmtrail.db" import "$file"
tail -n 12 "$work/ohmtrail.log"

# sqlite3 shell: the same file into one untyped table, nothing checked.
columns=$(head -n 1 "$file")
sqlite3 "$work/shell.db" "CREATE TABLE readings($columns);"
measure "$work/shell" sqlite3 "$work/shell.db" ".import --csv --skip 1 $file readings"
echo "sqlite3 rows: $(sqlite3 "$work/shell.db" 'SELECT count(*) FROM readings')"

o=$(cat "$work/ohmtrail.secs"); s=$(cat "$work/shell.secs")
echo "ohmtrail import: ${o} s, peak RSS $(cat "$work/ohmtrail.rss") kB"
echo "sqlite3 .import: ${s} s, peak RSS $(cat "$work/shell.rss") kB"
awk -v o="$o" -v s="$s" 'BEGIN { printf "ratio ohmtrail / sqlite3: %.2f (target <= 1)\n", o / s }'
