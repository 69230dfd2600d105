#!/usr/bin/env bash
# Side-by-side timings of `tenmin replay`, as ratios from alternating runs in
# one session (issue 11's and issue 18's speed goals; figures in
# host-cli/PERF.md). Run it on a quiet machine: wall times under load say little.
#
#   bash bench/compare.sh [BASE_REV]      # BASE_REV: default f5873be
#   ROUNDS=7 DAYS=30 BENCH_DIR=/tmp/tenmin-compare bash bench/compare.sh
#
# Builds the working tree and BASE_REV (from `git archive`, in BENCH_DIR, its
# own target directory), writes the demo station's DAYS-day samples (1 Hz, 6
# channels, `tenmin demo --seed 1`) as one file, the same samples as a
# declared layout (bench/field_layout.py) and as a .zst, and creates a venv in
# BENCH_DIR with numpy, pandas, polars and duckdb for the peers (the
# system's python3 only builds the files and the tables). Then, ROUNDS times, runs every command below once, in an
# order that rotates from round to round:
#
#   base1   BASE_REV's tenmin, --jobs 1, own CSV, -o FILE
#   own1    working tree, --jobs 1, own CSV, -o FILE (so with the provenance
#           file: each samples file's SHA-256, computed while it is read)
#   own2    the same, --jobs 2
#   own1s base1s  own1 and base1 with the records to stdout (no -o, so no
#           provenance file; stdout goes to /dev/null by redirection)
#   layout1 working tree, --jobs 1, declared layout
#   layoutm1 the same with a missing-value text in its [input]
#   layoutq1 layout2t1 layoutw1 layoutf1  the same samples with a quality
#           column, with the time in two columns, split at whitespace, and
#           after rows of another mast (a filter; bench/layout_variants.py)
#   camp1 camp2  working tree, --jobs 1 and 2, the demo station with its
#           [campaign] files (sensor history, exclusions, events), own CSV
#   zst1    working tree, --jobs 1, .zst of the own CSV
#   gz1     the same, .gz (gzip -6)
#   pandas  bench/pandas_reference.py (one thread)
#   polars1 polars2 duckdb1 duckdb2   bench/polars_reference.py and
#           bench/duckdb_reference.py with 1 and 2 threads
#
# and prints each ratio of two of them, computed per round (both runs of one
# round), as the median with the smallest and largest over the rounds. Before
# timing it checks that the records of the layout and the .zst are the own
# CSV's, and spot-checks each peer's statistics against tenmin's records (1e-9;
# directions 1e-6 degrees). Whole processes are timed (start-up included).
#
# Needs: git, cargo, python3 (3.11+), zstd, network for pip (the peers run in
# a venv at BENCH_DIR/venv with numpy, pandas, polars and duckdb, made when
# missing). SKIP_PEERS=1 leaves
# the peers out; SKIP_BASE=1 the baseline build.
set -euo pipefail

cd "$(dirname "$0")/.."
ROOT=$PWD
BASE_REV=${1:-f5873be}
ROUNDS=${ROUNDS:-7}
DAYS=${DAYS:-30}
DIR=${BENCH_DIR:-/tmp/tenmin-compare}
SKIP_PEERS=${SKIP_PEERS:-0}
SKIP_BASE=${SKIP_BASE:-0}
PEERS_PIP=${PEERS_PIP:-"numpy pandas polars duckdb"}
mkdir -p "$DIR"

echo "machine: $(nproc) cores, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2- | sed 's/^ *//'), load $(cut -d' ' -f1-3 /proc/loadavg)"
echo "working tree: $(git rev-parse --short HEAD)$(git diff --quiet HEAD || echo ' (with changes)'), baseline: $BASE_REV"

CARGO_TARGET_DIR=${CARGO_TARGET_DIR:-$ROOT/target} cargo build --release -q -p host-cli
BIN=${CARGO_TARGET_DIR:-$ROOT/target}/release/tenmin

if [ "$SKIP_BASE" != 1 ]; then
    src="$DIR/base-$BASE_REV"
    if [ ! -d "$src" ]; then
        mkdir -p "$src.tmp"
        git archive "$BASE_REV" | tar -x -C "$src.tmp"
        mv "$src.tmp" "$src"
    fi
    (cd "$src" && CARGO_TARGET_DIR="$DIR/base-target" cargo build --release -q -p host-cli)
    BASE_BIN=$DIR/base-target/release/tenmin
fi

# The samples: the demo's daily files joined into one (one header).
S="$DIR/samples-${DAYS}d.csv"
if [ ! -s "$S" ]; then
    "$BIN" demo --out "$DIR/demo-${DAYS}d" --days "$DAYS" --seed 1 >/dev/null
    {
        head -n 1 "$(ls "$DIR/demo-${DAYS}d"/samples-*.csv | head -n 1)"
        for f in "$DIR/demo-${DAYS}d"/samples-*.csv; do tail -n +2 "$f"; done
    } >"$S.tmp"
    mv "$S.tmp" "$S"
fi
# The demo's station without its [campaign] side files (sensor history,
# exclusions, events): the baseline reads no such section, and every build
# then replays the same plain station.
STATION="$DIR/station-plain.toml"
awk '/^\[campaign\]/{skip=1; next} skip && /^\[/{skip=0} !skip' \
    "$DIR/demo-${DAYS}d/station.toml" >"$STATION"
# The declared layout's files, one folder per DAYS (a smoke run with few days
# must not leave its short file to a later full run).
FD="$DIR/field-${DAYS}d"
mkdir -p "$FD"
[ -s "$FD/field.csv" ] || python3 bench/field_layout.py "$STATION" "$S" "$FD"
[ -s "$S.zst" ] || zstd -q -f -k "$S" -o "$S.zst"
[ -s "$S.gz" ] || gzip -c -6 "$S" >"$S.gz"
# The declared layout with a missing-value text (no field holds it): each
# field is compared with it.
sed 's/^decimal = ","$/decimal = ","\nmissing = ["NAN"]/' "$FD/field.toml" >"$FD/field-m.toml"
# The declared layout with a quality column, with its time in two columns,
# split at whitespace, and after rows of another mast (bench/layout_variants.py).
[ -s "$FD/field-f.toml" ] || python3 bench/layout_variants.py "$FD"
# The demo station with its [campaign] files (sensor history with a swap,
# exclusions, events): what a campaign replays.
CAMP="$DIR/demo-${DAYS}d/station.toml"

if [ "$SKIP_PEERS" != 1 ]; then
    VPY="$DIR/venv/bin/python"
    if ! "$VPY" -c "import numpy, pandas, polars, duckdb" 2>/dev/null; then
        python3 -m venv "$DIR/venv"
        # shellcheck disable=SC2086
        "$DIR/venv/bin/pip" install -q $PEERS_PIP
    fi
    "$VPY" -c "import numpy, pandas, polars, duckdb" || { echo "$DIR/venv lacks a peer's package (or SKIP_PEERS=1)"; exit 1; }
fi

own_b=$(stat -c %s "$S")
lay_b=$(stat -c %s "$FD/field.csv")
echo "samples: $S ($own_b bytes, $(($(wc -l <"$S") - 1)) rows); declared layout $lay_b bytes"

# Commands by name.
declare -A CMD
CMD[own1]="$BIN replay -q -j 1 -c $STATION $S -o $DIR/r-own1.csv"
CMD[own1s]="$BIN replay -q -j 1 -c $STATION $S"
CMD[own2]="$BIN replay -q -j 2 -c $STATION $S -o $DIR/r-own2.csv"
CMD[layout1]="$BIN replay -q -j 1 -c $FD/field.toml $FD/field.csv -o $DIR/r-layout1.csv"
CMD[zst1]="$BIN replay -q -j 1 -c $STATION $S.zst -o $DIR/r-zst1.csv"
CMD[gz1]="$BIN replay -q -j 1 -c $STATION $S.gz -o $DIR/r-gz1.csv"
CMD[layoutm1]="$BIN replay -q -j 1 -c $FD/field-m.toml $FD/field.csv -o $DIR/r-layoutm1.csv"
for v in q 2t w f; do
    CMD[layout${v}1]="$BIN replay -q -j 1 -c $FD/field-$v.toml $FD/field-$v.csv -o $DIR/r-layout${v}1.csv"
done
CMD[camp1]="$BIN replay -q -j 1 -c $CAMP $S -o $DIR/r-camp1.csv"
CMD[camp2]="$BIN replay -q -j 2 -c $CAMP $S -o $DIR/r-camp2.csv"
names="own1 own1s own2 layout1 zst1 gz1 layoutm1 layoutq1 layout2t1 layoutw1 layoutf1 camp1 camp2"
if [ "$SKIP_BASE" != 1 ]; then
    # Never `-o /dev/null` for the baseline: it replaces its -o target by rename.
    CMD[base1]="$BASE_BIN replay -q -j 1 -c $STATION $S -o $DIR/r-base1.csv"
    CMD[base1s]="$BASE_BIN replay -q -j 1 -c $STATION $S"
    names="$names base1 base1s"
fi
if [ "$SKIP_PEERS" != 1 ]; then
    CMD[pandas]="$VPY bench/pandas_reference.py $STATION $S"
    for j in 1 2; do
        CMD[polars$j]="$VPY bench/polars_reference.py $STATION $S --threads $j"
        CMD[duckdb$j]="$VPY bench/duckdb_reference.py $STATION $S --threads $j"
    done
    names="$names pandas polars1 polars2 duckdb1 duckdb2"
fi

echo
echo "## checks"
${CMD[own1]}
for k in own2 layout1 zst1 gz1 layoutm1 layout2t1 layoutw1 layoutf1 base1; do
    [ -n "${CMD[$k]:-}" ] || continue
    ${CMD[$k]}
    if cmp -s "$DIR/r-own1.csv" "$DIR/r-$k.csv"; then
        echo "$k: records identical to own1's"
    else
        echo "$k: records differ from own1's (expected of a baseline whose records lack later columns, e.g. f5873be has no n_flagged, n_excluded, sensor_entries; or one from before dc49c38, whose f64 statistics differ in the last bits; host-cli/PERF.md)"
    fi
done
${CMD[layoutq1]}
${CMD[camp1]}
${CMD[camp2]}
if cmp -s "$DIR/r-camp1.csv" "$DIR/r-camp2.csv"; then
    echo "camp2: records identical to camp1's"
else
    echo "camp2: records DIFFER from camp1's"
fi
if [ "$SKIP_PEERS" != 1 ]; then
    "$VPY" bench/pandas_reference.py "$STATION" "$S" --check "$DIR/r-own1.csv" 2>&1 | sed 's/^/  /'
    for p in polars duckdb; do
        "$VPY" "bench/${p}_reference.py" "$STATION" "$S" --threads 2 --check "$DIR/r-own1.csv" 2>&1 | sed 's/^/  /'
    done
fi

now() { date +%s.%N; }
# Runs command `$1`, prints its wall seconds.
timed() {
    local t0 t1
    t0=$(now)
    ${CMD[$1]} >/dev/null 2>&1
    t1=$(now)
    echo "$t1 - $t0" | bc -l
}

echo
echo "## $ROUNDS rounds (load at start $(cut -d' ' -f1-3 /proc/loadavg))"
for k in $names; do timed "$k" >/dev/null; done # warm-up
read -r -a order <<<"$names"
: >"$DIR/times.tsv"
for r in $(seq "$ROUNDS"); do
    n=${#order[@]}
    line="$r"
    for i in $(seq 0 $((n - 1))); do
        k=${order[$(((i + r) % n))]}
        printf '%s\t%s\t%s\n' "$r" "$k" "$(timed "$k")" >>"$DIR/times.tsv"
    done
    printf '.' >&2
done
echo >&2
echo "load at end $(cut -d' ' -f1-3 /proc/loadavg)"

# Ratio of two commands per round: median (min .. max). Optional scale.
python3 - "$DIR/times.tsv" "$own_b" "$lay_b" "$FD" <<'PY'
import os, statistics, sys
from collections import defaultdict
t = defaultdict(dict)
for line in open(sys.argv[1]):
    r, k, s = line.split()
    t[int(r)][k] = float(s)
own_b, lay_b = int(sys.argv[2]), int(sys.argv[3])
size = lambda v: os.path.getsize(f"{sys.argv[4]}/field-{v}.csv")
rounds = sorted(t)

def show(label, f, unit="", fmt="{:.2f}"):
    vals = []
    for r in rounds:
        try:
            vals.append(f(t[r]))
        except KeyError:
            return
    med = statistics.median(vals)
    print(f"{label:<64} {fmt.format(med)}{unit}  ({fmt.format(min(vals))} .. {fmt.format(max(vals))})")

print(f"{'':<64} median  (min .. max over {len(rounds)} rounds)")
show("tenmin --jobs 1, own CSV", lambda x: own_b / x["own1"] / 1e6, " MB/s", "{:.0f}")
show("tenmin --jobs 2, own CSV", lambda x: own_b / x["own2"] / 1e6, " MB/s", "{:.0f}")
show("--jobs 2 speed-up over --jobs 1", lambda x: x["own1"] / x["own2"])
show("own CSV, -o FILE: working tree / baseline, time (goal <= 1)", lambda x: x["own1"] / x["base1"])
show("own CSV, to stdout: working tree / baseline, time", lambda x: x["own1s"] / x["base1s"])
show("own CSV: -o FILE (provenance) / to stdout, time", lambda x: x["own1"] / x["own1s"])
show("declared layout / own CSV, time per input byte (goal <= 1.3)",
     lambda x: (x["layout1"] / lay_b) / (x["own1"] / own_b))
show(".zst / own CSV, time (goal <= 1.5)", lambda x: x["zst1"] / x["own1"])
show(".gz / own CSV, time", lambda x: x["gz1"] / x["own1"])
show("declared layout with a missing-value text / without, time", lambda x: x["layoutm1"] / x["layout1"])
for v, what in [("q", "quality column / none"), ("2t", "time in two columns / one"),
                ("w", "whitespace, two time columns / `;`")]:
    show(f"declared layout, {what}, per byte",
         lambda x, v=v: (x[f"layout{v}1"] / size(v)) / (x["layout1"] / lay_b))
show("declared layout, another mast's row before each / none, time",
     lambda x: x["layoutf1"] / x["layout1"])
show("campaign station / plain station, time, --jobs 1", lambda x: x["camp1"] / x["own1"])
show("campaign station / plain station, time, --jobs 2", lambda x: x["camp2"] / x["own2"])
show("pandas / tenmin --jobs 1 (goal >= 20)", lambda x: x["pandas"] / x["own1"])
show("polars 1 thread / tenmin --jobs 1 (goal >= 12)", lambda x: x["polars1"] / x["own1"])
show("duckdb 1 thread / tenmin --jobs 1 (goal >= 12)", lambda x: x["duckdb1"] / x["own1"])
# The peers read and compute, and write nothing; `own1s` writes the records
# to stdout (/dev/null), without the provenance file and its input hash.
show("pandas / tenmin --jobs 1 to stdout", lambda x: x["pandas"] / x["own1s"])
show("polars 1 thread / tenmin --jobs 1 to stdout", lambda x: x["polars1"] / x["own1s"])
show("duckdb 1 thread / tenmin --jobs 1 to stdout", lambda x: x["duckdb1"] / x["own1s"])
show("pandas / tenmin --jobs 2", lambda x: x["pandas"] / x["own2"])
show("polars 2 threads / tenmin --jobs 2 (goal >= 12)", lambda x: x["polars2"] / x["own2"])
show("duckdb 2 threads / tenmin --jobs 2 (goal >= 12)", lambda x: x["duckdb2"] / x["own2"])
PY

echo
echo "## peak resident memory (tenmin, own CSV)"
if [ -x /usr/bin/time ]; then
    for j in 1 2; do
        kb=$(/usr/bin/time -v ${CMD[own$j]} 2>&1 | awk -F: '/Maximum resident set size/ {gsub(/ /, "", $2); print $2}')
        printf -- "--jobs %d  %6.1f MiB (goal with 2: under 16 MiB)\n" "$j" "$(echo "$kb / 1024" | bc -l)"
    done
else
    echo "(no /usr/bin/time: apt-get install time)"
fi
