#!/usr/bin/env bash
# The benchmark suite: ohmtrail against outside anchors on the same synthetic, invented
# portfolio, in the same run, as ratios with peak RSS.
#   1. generate the portfolio (PROPERTIES x 12 circuits x 5 visits);
#   2. `ohmtrail import` against the sqlite3 shell's unchecked `.import` into one table;
#   3. `ohmtrail flags --json` (the whole analysis, from its database) against DuckDB's
#      regr_slope of R1+R2 per circuit over the same CSV;
#   4. `ohmtrail report PROPERTY -o FILE` for one property (30 circuits x 10 visits) in
#      portfolios of 1,000 and 100,000 properties, the median of seven runs (skipped while the
#      command is missing);
#   5. appending to a living history: the earlier four visits of a portfolio into an empty
#      database, then the newest visit of every property into it, then that file again; per
#      row against the first import's per row, each the median of five runs;
#   6. a table on stdout and the same rows in a CSV.
#
# Usage: bench/run.sh [--properties N] [--large N] [--report-sizes "A B"] [--no-report]
#                     [--append-sizes "A B"] [--append-only] [--out FILE]
#   --properties N      portfolio size for steps 1-3 (default 10000 = 120,000 circuits)
#   --large N           also run step 3 at N properties (84000 is about 1,000,000 circuits)
#   --report-sizes "A B"  portfolio sizes for step 4 (default "1000 100000")
#   --append-sizes "A B"  portfolio sizes for step 5, in properties (default "2000 16667": about
#                       120,000 and 1,000,000 stored records after the append; "" skips it)
#   --append-only       run step 5 alone
#   --out FILE          the CSV (default bench/results.csv)
# Installs Debian's sqlite3 and time packages and DuckDB's Python package when missing.
# Timings are wall-clock seconds of one run each (step 4: the median); the machine is shared,
# so repeat to trust.
set -euo pipefail
cd "$(dirname "$0")/.."

props=10000
large=""
report_sizes="1000 100000"
do_report=1
append_sizes="2000 16667"
append_only=0
append_runs=5
out="bench/results.csv"
while [ $# -gt 0 ]; do
    case "$1" in
        --properties) props="$2"; shift 2 ;;
        --large) large="$2"; shift 2 ;;
        --report-sizes) report_sizes="$2"; shift 2 ;;
        --no-report) do_report=0; shift ;;
        --append-sizes) append_sizes="$2"; shift 2 ;;
        --append-only) append_only=1; shift ;;
        --out) out="$2"; shift 2 ;;
        -h|--help) sed -n '2,27p' "$0"; exit 0 ;;
        *) echo "unknown option $1 (see --help)" >&2; exit 2 ;;
    esac
done

as_root() { if [ "$(id -u)" -eq 0 ]; then "$@"; else sudo "$@"; fi; }
apt_updated=0
need_deb() { # command package
    command -v "$1" >/dev/null && return 0
    echo "installing Debian's $2 for the benchmark" >&2
    if [ "$apt_updated" -eq 0 ]; then as_root apt-get update -qq; apt_updated=1; fi
    as_root apt-get install -y -qq "$2" >/dev/null
}
[ -x /usr/bin/time ] || { need_deb /usr/bin/time time; }
[ "$append_only" -eq 1 ] || need_deb sqlite3 sqlite3
if [ "$append_only" -eq 0 ] && ! python3 -c 'import duckdb' 2>/dev/null; then
    echo "installing DuckDB's Python package for the benchmark" >&2
    python3 -m pip install --quiet duckdb
fi

cargo build --release --quiet --bin ohmtrail --example gen_portfolio
bin="$(pwd)/target/release/ohmtrail"
gen="$(pwd)/target/release/examples/gen_portfolio"
work="$(mktemp -d "${TMPDIR:-/tmp}/ohmtrail-bench.XXXXXX")"
trap 'rm -rf "$work"' EXIT

# measure NAME CMD...: wall seconds into $work/NAME.secs, peak RSS (kB) into $work/NAME.rss,
# output into $work/NAME.log. A failing command stops the suite.
measure() {
    local name="$1"; shift
    local start end
    start=$(date +%s.%N)
    if ! /usr/bin/time -f "%U %S
%M" -o "$work/$name.rss" "$@" >"$work/$name.log" 2>"$work/$name.err"; then
        echo "$name failed:" >&2; tail -n 20 "$work/$name.err" >&2; exit 1
    fi
    end=$(date +%s.%N)
    awk -v a="$start" -v b="$end" 'BEGIN { printf "%.3f", b - a }' >"$work/$name.secs"
}
# measure_median NAME K CMD...: `measure` K times; NAME.secs gets the median wall seconds and
# NAME.rss the largest peak RSS. For steps of a few milliseconds, where one run is mostly noise.
measure_median() {
    local name="$1" k="$2" i
    shift 2
    for i in $(seq 1 "$k"); do measure "$name-run$i" "$@"; done
    for i in $(seq 1 "$k"); do cat "$work/$name-run$i.secs"; echo; done | sort -n |
        awk '{ v[NR] = $1 } END { printf "%s", (NR % 2) ? v[(NR + 1) / 2] : (v[NR / 2] + v[NR / 2 + 1]) / 2 }' \
        >"$work/$name.secs"
    for i in $(seq 1 "$k"); do tail -n 1 "$work/$name-run$i.rss"; done | sort -n | tail -n 1 >"$work/$name.rss"
}
secs() { cat "$work/$1.secs"; }
# CPU seconds (user + system) of a measured step, from the line before its peak RSS.
cpu() { tail -n 2 "$work/$1.rss" | head -n 1 | awk '{ printf "%.3f", $1 + $2 }'; }
rss() { tail -n 1 "$work/$1.rss"; }

echo "step,size,ohmtrail_s,ohmtrail_rss_kb,reference,reference_s,reference_rss_kb,ratio,ratio_target,ratio_met,rss_limit_mb,rss_met" >"$out"
table=()
# record STEP SIZE OHM_S OHM_RSS REF REF_S REF_RSS TARGET_RATIO [RSS_LIMIT_MB]
record() {
    local ratio ratio_met rss_met="" limit="${9:-}" mem
    ratio=$(awk -v o="$3" -v r="$6" 'BEGIN { if (r > 0) printf "%.2f", o / r; else print "" }')
    ratio_met=$(awk -v x="$ratio" -v t="$8" 'BEGIN { print (x != "" && x <= t) ? "yes" : "no" }')
    mem="$(($4 / 1000)) MB"
    if [ -n "$limit" ]; then
        rss_met=$([ "$4" -lt $((limit * 1000)) ] && echo yes || echo no)
        mem="$mem (< $limit MB: $rss_met)"
    fi
    echo "$1,$2,$3,$4,$5,$6,$7,$ratio,$8,$ratio_met,$limit,$rss_met" >>"$out"
    table+=("$(printf '%-7s %7s | ohmtrail %7ss %-20s | %-17s %7ss %5s MB | ratio %5s (<= %s: %s)' \
        "$1" "$2" "$3" "$mem" "$5" "$6" "$(($7 / 1000))" "$ratio" "$8" "$ratio_met")")
}

portfolio() { # PROPERTIES -> path of the generated file
    local f="$work/portfolio-$1.csv"
    [ -f "$f" ] || "$gen" "$1" "$f"
    echo "$f"
}

if [ "$append_only" -eq 0 ]; then
# Steps 1 and 2.
file=$(portfolio "$props")
rows=$(($(wc -l <"$file") - 1))
echo "portfolio: $props properties, $rows rows, $(du -h "$file" | cut -f1)"
db="$work/ohmtrail-$props.db"
measure import "$bin" --db "$db" import "$file"
sqlite3 "$work/shell.db" "CREATE TABLE readings($(head -n 1 "$file"));"
measure shell sqlite3 "$work/shell.db" ".import --csv --skip 1 $file readings"
shell_rows=$(sqlite3 "$work/shell.db" 'SELECT count(*) FROM readings')
[ "$shell_rows" -eq "$rows" ] || { echo "sqlite3 imported $shell_rows rows of $rows" >&2; exit 1; }
rm -f "$work/shell.db"
record import "$props" "$(secs import)" "$(rss import)" "sqlite3 .import" "$(secs shell)" "$(rss shell)" 1 100

# Step 3, at the main size and, when asked, at the large one.
flags_step() { # PROPERTIES DB FILE
    measure "flags-$1" sh -c "\"$bin\" --db \"$2\" flags --json >/dev/null"
    measure "duckdb-$1" python3 bench/duckdb_slopes.py "$3"
    local q
    q=$(sed -n 's/.*query_seconds \([0-9.]*\).*/\1/p' "$work/duckdb-$1.log")
    # The stricter anchor: DuckDB's query alone, without Python's start-up and import.
    record flags "$1" "$(secs "flags-$1")" "$(rss "flags-$1")" "duckdb regr_slope" "$q" "$(rss "duckdb-$1")" 1 200
    echo "  duckdb process with start-up: $(secs "duckdb-$1") s; $(cat "$work/duckdb-$1.log")"
}
flags_step "$props" "$db" "$file"
if [ -n "$large" ]; then
    lfile=$(portfolio "$large")
    ldb="$work/ohmtrail-$large.db"
    echo "large portfolio: $large properties, $(($(wc -l <"$lfile") - 1)) rows"
    measure "import-$large" "$bin" --db "$ldb" import "$lfile"
    echo "  import of the large portfolio: $(secs "import-$large") s, peak RSS $(($(rss "import-$large") / 1000)) MB"
    flags_step "$large" "$ldb" "$lfile"
    rm -f "$lfile" "$ldb" "$ldb"-*
fi

# Step 4.
if [ "$do_report" -eq 1 ]; then
    if ! "$bin" report --help >/dev/null 2>&1; then
        echo "report: skipped: this build has no \`ohmtrail report\` command yet"
        echo "report,,,,,,,,1.2,skipped,," >>"$out"
    else
        # One property of 30 circuits x 10 visits, the same in every portfolio.
        target="$work/target.csv"
        "$gen" 1 "$target" 30 10 RPT
        base_s=""
        for n in $report_sizes; do
            rdb="$work/report-$n.db"
            "$bin" --db "$rdb" import "$(portfolio "$n")" >/dev/null
            "$bin" --db "$rdb" import "$target" >/dev/null
            "$bin" --db "$rdb" report RPT-00000 -o "$work/warm.html" >/dev/null # warm the cache
            measure_median "report-$n" 7 "$bin" --db "$rdb" report RPT-00000 -o "$work/report-$n.html"
            s=$(secs "report-$n")
            if [ -z "$base_s" ]; then
                base_s="$s"; base_rss=$(rss "report-$n"); base_n="$n"
                # The absolute target: under 50 ms for the one property.
                record report "$n" "$s" "$base_rss" "50 ms budget" 0.050 0 1
            else
                record report "$n" "$s" "$(rss "report-$n")" "report at $base_n" "$base_s" "$base_rss" 1.2
            fi
            rm -f "$rdb" "$rdb"-*
        done
    fi
fi
fi # append_only

# Step 5. The first import of the earlier visits is the anchor: appending the newest visit of
# every property should cost no more per row (target 1.2), and importing that file again, when
# every row is already stored, no more per row than importing it did (target 1.0).
for n in $append_sizes; do
    earlier="$work/history-$n.csv"
    newest="$work/history-$n.newest.csv"
    "$gen" "$n" "$earlier" 12 5 SMP --newest-apart
    first_rows=$(($(wc -l <"$earlier") - 1))
    new_rows=$(($(wc -l <"$newest") - 1))
    adb="$work/append-$n.db"
    for i in $(seq 1 "$append_runs"); do
        rm -f "$adb" "$adb"-*
        measure "first-$n-run$i" "$bin" --db "$adb" import "$earlier"
        measure "append-$n-run$i" "$bin" --db "$adb" import "$newest"
        grep -q "test records written *$new_rows" "$work/append-$n-run$i.log" ||
            { echo "append at $n did not write $new_rows records" >&2; exit 1; }
        measure "again-$n-run$i" "$bin" --db "$adb" import "$newest"
        grep -q "test records unchanged *$new_rows" "$work/again-$n-run$i.log" ||
            { echo "re-import at $n did not find $new_rows records unchanged" >&2; exit 1; }
    done
    rm -f "$adb" "$adb"-* "$earlier" "$newest"
    for step in first append again; do
        for i in $(seq 1 "$append_runs"); do cat "$work/$step-$n-run$i.secs"; echo; done |
            sort -n | sed -n "$(((append_runs + 1) / 2))p" | tr -d '\n' >"$work/$step-$n.secs"
        for i in $(seq 1 "$append_runs"); do tail -n 1 "$work/$step-$n-run$i.rss"; done |
            sort -n | tail -n 1 >"$work/$step-$n.rss"
        for i in $(seq 1 "$append_runs"); do cpu "$step-$n-run$i"; echo; done | sort -n |
            sed -n "$(((append_runs + 1) / 2))p" | tr -d '\n' >"$work/$step-$n.cpu"
        echo "  $step at $n, every run: $(for i in $(seq 1 "$append_runs"); do
            printf '%s ' "$(cat "$work/$step-$n-run$i.secs")"; done)s"
    done
    # The anchors scaled to the appended file's rows, so the ratios are per row.
    first_scaled=$(awk -v s="$(secs "first-$n")" -v a="$first_rows" -v b="$new_rows" \
        'BEGIN { printf "%.3f", s * b / a }')
    stored=$((first_rows + new_rows))
    echo "append at $stored stored records: first import $first_rows rows $(secs "first-$n") s," \
        "append $new_rows rows $(secs "append-$n") s, again $(secs "again-$n") s; µs a row:" \
        "$(awk -v f="$(secs "first-$n")" -v a="$first_rows" -v p="$(secs "append-$n")" \
            -v q="$(secs "again-$n")" -v b="$new_rows" \
            'BEGIN { printf "first %.2f, append %.2f, again %.2f", f * 1e6 / a, p * 1e6 / b, q * 1e6 / b }')"
    # CPU time as well: on a shared machine the wall clock also holds waits for the disk
    # (the commit's and checkpoint's fsyncs, a fixed cost a file) and for a core.
    echo "  CPU seconds (median): first $(cat "$work/first-$n.cpu"), append $(cat "$work/append-$n.cpu")," \
        "again $(cat "$work/again-$n.cpu"); CPU a row, append / first:" \
        "$(awk -v f="$(cat "$work/first-$n.cpu")" -v a="$first_rows" -v p="$(cat "$work/append-$n.cpu")" \
            -v b="$new_rows" 'BEGIN { printf "%.2f", (p / b) / (f / a) }')"
    record append "$stored" "$(secs "append-$n")" "$(rss "append-$n")" "first import/row" \
        "$first_scaled" "$(rss "first-$n")" 1.2 100
    record again "$stored" "$(secs "again-$n")" "$(rss "again-$n")" "append/row" \
        "$(secs "append-$n")" "$(rss "append-$n")" 1.0 100
done

echo
echo "machine: $(nproc) cores, $(lscpu | sed -n 's/^Model name: *//p' | head -n 1)"
for line in "${table[@]}"; do echo "$line"; done
echo "results: $out"
