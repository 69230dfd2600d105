#!/usr/bin/env bash
# Throughput, peak memory and a numpy/pandas comparison for `tenmin replay`.
# The figures and the machine they came from are in host-cli/PERF.md.
#
#   bash bench/run.sh            # RUNS=5 by default; BENCH_DIR=/tmp/tenmin-bench
#
# Builds release, writes the demo station's 1-day and 30-day samples as one
# file each (1 Hz, 6 channels), then measures on each:
#   - wall time of `tenmin replay -q -o FILE` with --jobs 1 and --jobs 2
#     (hyperfine when installed, else RUNS runs and the median), as MB/s of CSV;
#   - peak resident memory (`/usr/bin/time -v`, "Maximum resident set size");
#   - tenmin against bench/pandas_reference.py on the 30-day file, runs
#     alternating in the same session, the ratio of the medians.
# Needs: cargo; optional hyperfine and time (Debian packages), python3 with
# numpy and pandas (pip install numpy pandas) for the comparison.
set -euo pipefail

cd "$(dirname "$0")/.."
RUNS=${RUNS:-5}
DIR=${BENCH_DIR:-/tmp/tenmin-bench}
export CARGO_TARGET_DIR=${CARGO_TARGET_DIR:-$PWD/target}
cargo build --release -p host-cli >&2
BIN=$CARGO_TARGET_DIR/release/tenmin
mkdir -p "$DIR"

echo "machine: $(nproc) cores, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2- | sed 's/^ *//'), load $(cut -d' ' -f1-3 /proc/loadavg)"

# The demo's daily files, joined into one samples file (one header).
make_samples() {
    local days=$1
    local out="$DIR/samples-${days}d.csv"
    if [ ! -s "$out" ]; then
        "$BIN" demo --out "$DIR/demo-${days}d" --days "$days" --seed 1 >/dev/null
        {
            head -n 1 "$DIR/demo-${days}d/samples-2025-01-20.csv"
            for f in "$DIR/demo-${days}d"/samples-*.csv; do tail -n +2 "$f"; done
        } >"$out"
    fi
    echo "$out"
}
S1=$(make_samples 1)
S30=$(make_samples 30)
STATION="$DIR/demo-1d/station.toml"

now() { date +%s.%N; }
median() { sort -g | awk '{a[NR]=$1} END {print (NR % 2) ? a[(NR+1)/2] : (a[NR/2] + a[NR/2+1]) / 2}'; }
mb() { awk -v b="$(stat -c %s "$1")" 'BEGIN {printf "%.1f", b / 1e6}'; }

# Median wall seconds of RUNS runs of a command (after one warm-up run).
wall() {
    "$@" >/dev/null 2>&1
    for _ in $(seq "$RUNS"); do
        local t0 t1
        t0=$(now)
        "$@" >/dev/null 2>&1
        t1=$(now)
        echo "$t1 - $t0" | bc -l
    done | median
}

echo
echo "## throughput (median of $RUNS runs)"
for s in "$S1" "$S30"; do
    for j in 1 2; do
        if command -v hyperfine >/dev/null; then
            json="$DIR/hyperfine.json"
            hyperfine -N -w 1 -r "$RUNS" --export-json "$json" \
                "$BIN replay -q -j $j -c $STATION $s -o $DIR/records.csv" >/dev/null
            secs=$(python3 -c "import json,sys; print(json.load(open(sys.argv[1]))['results'][0]['median'])" "$json")
        else
            secs=$(wall "$BIN" replay -q -j "$j" -c "$STATION" "$s" -o "$DIR/records.csv")
        fi
        awk -v f="$(basename "$s")" -v mb="$(mb "$s")" -v s="$secs" -v j="$j" \
            'BEGIN {printf "%-18s %7.1f MB  --jobs %d  %.3f s  %6.1f MB/s\n", f, mb, j, s, mb / s}'
    done
done

echo
echo "## peak resident memory"
if [ -x /usr/bin/time ]; then
    for s in "$S1" "$S30"; do
        for j in 1 2; do
            kb=$(/usr/bin/time -v "$BIN" replay -q -j "$j" -c "$STATION" "$s" -o "$DIR/records.csv" 2>&1 |
                awk -F: '/Maximum resident set size/ {gsub(/ /, "", $2); print $2}')
            printf "%-18s --jobs %d  %6.1f MiB\n" "$(basename "$s")" "$j" "$(echo "$kb / 1024" | bc -l)"
        done
    done
else
    echo "(no /usr/bin/time: apt-get install time)"
fi

echo
echo "## declared layout and compressed input (30 days, --jobs 1, alternating runs, median of $RUNS)"
# The same samples as a field file (semicolons, decimal commas, local time with
# end labels, bench/field_layout.py) and as a .zst of the own CSV: the same
# records, so the ratios time the reader alone.
python3 bench/field_layout.py "$STATION" "$S30" "$DIR"
zstd -q -f -k "$S30" -o "$S30.zst" 2>/dev/null || true
"$BIN" replay -q -j 1 -c "$STATION" "$S30" -o "$DIR/own.csv"
"$BIN" replay -q -j 1 -c "$DIR/field.toml" "$DIR/field.csv" -o "$DIR/layout.csv"
cmp -s "$DIR/own.csv" "$DIR/layout.csv" && echo "declared layout: records identical to the own CSV's"
kinds="own layout"
if [ -s "$S30.zst" ]; then
    "$BIN" replay -q -j 1 -c "$STATION" "$S30.zst" -o "$DIR/zst.csv"
    cmp -s "$DIR/own.csv" "$DIR/zst.csv" && echo ".zst: records identical to the plain file's"
    kinds="$kinds zst"
else
    echo "(no zstd command: apt-get install zstd for the .zst comparison)"
fi
for k in $kinds; do : >"$DIR/t-$k"; done
for _ in $(seq "$RUNS"); do
    for k in $kinds; do
        case $k in
            own) args=(-c "$STATION" "$S30") ;;
            layout) args=(-c "$DIR/field.toml" "$DIR/field.csv") ;;
            zst) args=(-c "$STATION" "$S30.zst") ;;
        esac
        t0=$(now)
        "$BIN" replay -q -j 1 "${args[@]}" -o "$DIR/x.csv"
        t1=$(now)
        echo "$t1 - $t0" | bc -l >>"$DIR/t-$k"
    done
done
own=$(median <"$DIR/t-own")
own_b=$(stat -c %s "$S30")
for k in $kinds; do
    t=$(median <"$DIR/t-$k")
    case $k in
        layout) b=$(stat -c %s "$DIR/field.csv") ;;
        *) b=$own_b ;;
    esac
    awk -v k="$k" -v t="$t" -v o="$own" -v b="$b" -v ob="$own_b" \
        'BEGIN {printf "%-7s %.3f s  %.2f times the own CSV'"'"'s time per input byte\n", k, t, (t / b) / (o / ob)}'
done

echo
echo "## against numpy/pandas (30 days, alternating runs, median of $RUNS)"
if python3 -c "import numpy, pandas" 2>/dev/null; then
    ref=(python3 bench/pandas_reference.py "$STATION" "$S30")
    "$BIN" replay -q -j 1 -c "$STATION" "$S30" -o "$DIR/records.csv"
    "${ref[@]}" --check "$DIR/records.csv" 2>&1 | sed 's/^/  /'
    : >"$DIR/t1" && : >"$DIR/t2" && : >"$DIR/tp"
    for _ in $(seq "$RUNS"); do
        for which in 1 2 p; do
            t0=$(now)
            if [ "$which" = p ]; then
                "${ref[@]}" >/dev/null 2>&1
            else
                "$BIN" replay -q -j "$which" -c "$STATION" "$S30" -o "$DIR/records.csv"
            fi
            t1=$(now)
            echo "$t1 - $t0" | bc -l >>"$DIR/t$which"
        done
    done
    p=$(median <"$DIR/tp")
    for j in 1 2; do
        t=$(median <"$DIR/t$j")
        awk -v t="$t" -v p="$p" -v j="$j" \
            'BEGIN {printf "tenmin --jobs %d %.3f s, pandas %.3f s: pandas takes %.1f times as long\n", j, t, p, p / t}'
    done
else
    echo "(python3 with numpy and pandas not found: pip install numpy pandas)"
fi
