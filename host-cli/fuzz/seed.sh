#!/usr/bin/env bash
# Writes the seed inputs of the fuzz corpus (host-cli/fuzz/corpus/<target>/seed-*)
# from real files: a `tenmin demo` day cut short, its records, `tenmin export`
# of it, the logs the example firmware writes of it under QEMU (record and
# state logs; skipped when the firmware or QEMU is missing), and hand-made
# variants of each (bad rows, quoting, line ends, damaged and cut logs).
# The inputs the fuzzers found are kept beside them (`cmin` keeps both kinds).
# Usage: host-cli/fuzz/seed.sh   (from anywhere; run once, then commit. Run again, it
# writes every seed from today's demo and formats: keep what a new target needs and
# review the rest, as the older seeds hold the older formats the readers still take)
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
root="$(cd "$here/../.." && pwd)"
corpus="$here/corpus"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
cd "$root"
cargo build -p host-cli --release --quiet
tenmin="${CARGO_TARGET_DIR:-$root/target}/release/tenmin"
mkdir -p "$corpus"/{samples,station,records,frames,logscan,layouts,columnar,draft,campaign,table,image}

"$tenmin" demo --days 1 --out "$work/demo" >/dev/null
st="$work/demo/station.toml"
day="$(ls "$work"/demo/samples-*.csv | head -1)"

# --- samples: the first rows of the demo day, and variants.
s="$corpus/samples"
head -n 40 "$day" >"$s/seed-demo-40-rows.csv"
head -n 622 "$day" >"$s/seed-demo-interval-boundary.csv"
head -n 40 "$day" | sed 's/$/\r/' >"$s/seed-crlf.csv"
head -n 20 "$day" | awk -F, 'NR==1{print; next}{printf "\"%s\",%s,\"%s\",%s,%s,%s,%s\n",$1,$2,$3,$4,$5,$6,$7}' >"$s/seed-quoted.csv"
printf '\xef\xbb\xbf' | cat - <(head -n 5 "$day") >"$s/seed-bom.csv"
head -n 1 "$day" >"$s/seed-header-only.csv"
: >"$s/seed-empty.csv"
cat >"$s/seed-epoch-and-offsets.csv" <<'EOF'
time,ws80a,ws80b,ws60,wd78,t76,rh76
1737331200,5.1,5.0,4.4,2710,1.1,80
1737331201.25,5.2,5.1,4.5,2715,1.1,80
2025-01-20T01:00:02+01:00,5.3,5.2,4.6,2720,1.2,81
2025-01-20T00:00:03.5Z,5.4,5.3,4.7,2725,1.2,81
2025-01-20T00:10:00Z,6.0,6.1,5.0,2730,1.3,82
EOF
cat >"$s/seed-missing-and-range.csv" <<'EOF'
time,ws80a,ws80b,ws60,wd78,t76,rh76
2025-01-20T00:00:00Z,,NaN,-999,-9999,1.1,80
2025-01-20T00:00:01Z,80,5.1,4.5,3600,51,101
2025-01-20T00:00:02Z,-0.5,5.1,4.5,-1,-41,-0.1
2025-01-20T00:00:02Z,5,5,5,5,5,5
2025-01-20T00:00:01Z,5,5,5,5,5,5
2025-01-20T00:00:04Z,5.123456,5,5,2700.5,1e1,8E1
EOF
cat >"$s/seed-bad-rows.csv" <<'EOF'
wd78,time,ws80b,ws80a,t76,rh76,ws60
2710,2025-01-20T00:00:00Z,5,5,1,80,4
2710,2025-01-20T00:00:01Z,5,5,1,80
2710,not a time,5,5,1,80,4
2710,2025-01-20T00:00:03Z,5.3.1,5,1,80,4
2710,2025-01-20T00:00:04Z,5,5,1,80,4,9
2710,2025-01-20T00:00:05.0001Z,5,5,1,80,4
EOF
cat >"$s/seed-clock-jump.csv" <<'EOF'
time,ws80a,ws80b,ws60,wd78,t76,rh76
2025-01-20T00:00:00Z,5,5,4,2710,1,80
2025-01-21T23:59:00Z,5,5,4,2710,1,80
2025-01-25T00:00:00Z,5,5,4,2710,1,80
9999-12-31T23:59:59Z,5,5,4,2710,1,80
EOF
printf 'time,ws80a,ws80b,ws60,wd78,t76,rh76,extra\n' >"$s/seed-unknown-column.csv"
printf 'time,ws80a\n2025-01-20T00:00:00Z,5\n' >"$s/seed-missing-columns.csv"
printf 'time,ws80a,ws80b,ws60,wd78,t76,rh76\n2025-01-20T00:00:00Z,5,5,4,27\xff0,1,80\n' >"$s/seed-not-utf8.csv"

# --- station: the demo's, the fuzz station's variants, files the core refuses.
t="$corpus/station"
cp "$st" "$t/seed-demo.toml"
# The example station files: declared layouts ([input]), a campaign with its
# side files ([campaign]: named, not beside the fuzzed file, so refused by
# name), another logger's table ([logger_table], [conventions]).
for f in "$root"/examples/*/station.toml "$root"/examples/field-files/*/station.toml; do
  cp "$f" "$t/seed-example-$(basename "$(dirname "$f")").toml"
done
cat >"$t/seed-every-setting.toml" <<'EOF'
[logging]
interval_s = 300
sample_rate_hz = 4
missing_values = [-999, -9999, 9999.5]

[station]
name = "every setting"

[[channel]]
id = "ws"
kind = "speed"
unit = "m/s"
height_m = 80
range = [0, 75]
resolution = 0.01
gust_window_s = 3

[channel.screen]
step_limit = 10
mean_range = [0, 25]
sd_range = [0, 3]
gust_max = 30
min_recovery = 0.9
flat_span_s = 10800
flat_tolerance = 0.1
partner = "wsb"
above = "ws2"
shear_tolerance = 0.5
pair_mean_diff = 0.5
pair_max_diff = 2.0
icing = { temperature = "t", humidity = "rh", max_temperature = 2, min_humidity = 85 }
off = ["spike", "flatline"]

[[channel]]
id = "wsb"
kind = "speed"
slope = 0.049
offset = 0.25
gust_window_s = 2

[[channel]]
id = "ws2"
kind = "speed"
resolution = 0.1

[[channel]]
id = "wd"
kind = "direction"
slope = 0.1
offset_deg = -4
speed_channel = "ws"

[[channel]]
id = "t"
kind = "scalar"
range = [-40, 50]
resolution = 0.1

[[channel]]
id = "rh"
kind = "scalar"
range = [0, 100]
slope = 0.025
offset = -1
EOF
printf '[logging]\nsample_rate_hz = 1\n\n[[channel]]\nid = "ws"\nkind = "speed"\nresolution = 0.01\nspeed = 3\n' >"$t/seed-unknown-key.toml"
printf '[logging]\nsample_rate_hz = 1\n\n[[channel]]\nid = "a"\nkind = "scalar"\nresolution = 0.1\n\n[[channel]]\nid = "a"\nkind = "scalar"\nresolution = 0.1\n' >"$t/seed-duplicate-id.toml"
printf '[logging]\ninterval_s = 7\nsample_rate_hz = 1000\n\n[[channel]]\nid = "w"\nkind = "wind"\n' >"$t/seed-bad-kind.toml"
printf '[logging]\nsample_rate_hz = 4\n\n[[channel]]\nid = "ws"\nkind = "speed"\nresolution = 0.01\ngust_window_s = 40\n' >"$t/seed-long-gust.toml"
printf '[logging]\nsample_rate_hz = 1\n\n[[channel]]\nid = "wd"\nkind = "direction"\nspeed_channel = "nope"\n' >"$t/seed-bad-link.toml"
printf '[logging]\nsample_rate_hz = 1\nmissing_values = []\n' >"$t/seed-no-channels.toml"
{
  printf '[logging]\nsample_rate_hz = 1\n'
  for i in $(seq 1 33); do printf '\n[[channel]]\nid = "t%d"\nkind = "scalar"\nresolution = 0.1\n' "$i"; done
} >"$t/seed-33-channels.toml"
printf '[logging\nsample_rate_hz = 1\n' >"$t/seed-broken-toml.toml"

# --- records: the demo logger's records, a replay's, and variants.
r="$corpus/records"
head -n 13 "$work/demo/logger-records.csv" >"$r/seed-demo-two-intervals.csv"
"$tenmin" replay -q --config "$st" "$s/seed-demo-interval-boundary.csv" -o "$r/seed-replay.csv"
rm -f "$r/seed-replay.csv.provenance.json"   # replay's provenance file: not an input
head -n 7 "$work/demo/logger-records.csv" | cut -d, -f1-11 >"$r/seed-eleven-columns.csv"
head -n 7 "$work/demo/logger-records.csv" | cut -d, -f1-14 >"$r/seed-no-ti-column.csv"
head -n 1 "$work/demo/logger-records.csv" >"$r/seed-header-only.csv"
head -n 7 "$work/demo/logger-records.csv" | awk -F, 'BEGIN{OFS=","}{t=$1;$1=$3;$3=t;print}' >"$r/seed-reordered.csv"
{
  head -n 1 "$work/demo/logger-records.csv"
  sed -n '2p' "$work/demo/logger-records.csv"
  sed -n '2p' "$work/demo/logger-records.csv"
  sed -n '2p' "$work/demo/logger-records.csv" | sed 's/ws80a/nope/'
  sed -n '3p' "$work/demo/logger-records.csv" | sed 's/,,0,0,0,/,spike|icing,0,0,0,/'
  sed -n '4p' "$work/demo/logger-records.csv" | sed 's/,,0,0,0,/,frost,0,0,0,/'
  sed -n '5p' "$work/demo/logger-records.csv" | sed 's/00:10:00Z/00:11:00Z/'
} >"$r/seed-bad-rows.csv"
{
  head -n 1 "$work/demo/logger-records.csv"
  sed -n '8,13p' "$work/demo/logger-records.csv"
  sed -n '2,7p' "$work/demo/logger-records.csv"
} >"$r/seed-out-of-order.csv"
{
  head -n 1 "$work/demo/logger-records.csv"
  sed -n '2p' "$work/demo/logger-records.csv"
  sed -n '2p' "$work/demo/logger-records.csv" | sed 's/2025-01-20/2025-03-20/g'
} >"$r/seed-months-apart.csv"
head -n 4 "$work/demo/logger-records.csv" | sed 's/,/","/g; s/^/"/; s/$/"/' >"$r/seed-quoted.csv"

# --- frames: a sample file, and the frames of the logs below.
f="$corpus/frames"
"$tenmin" export -q --config "$st" "$s/seed-demo-40-rows.csv" -o "$f/seed-demo.tmsf"
"$tenmin" export -q --config "$t/seed-every-setting.toml" <(printf 'time,ws,wsb,ws2,wd,t,rh\n2025-01-20T00:00:00Z,5,100,4,2710,1,3000\n2025-01-20T00:00:00.25Z,,NaN,-999,-9999,1,3000\n') -o "$f/seed-every-setting.tmsf"

# --- logscan: the example firmware's record and state logs of the demo's first
# hour, under QEMU (README of firmware-example); cut, damaged, erased variants.
l="$corpus/logscan"
fw="$root/firmware-example/target/thumbv6m-none-eabi/release/replay"
if [ -x "$fw" ] && command -v qemu-system-arm >/dev/null; then
  head -n 3601 "$day" >"$work/hour.csv"
  "$tenmin" export -q --config "$st" "$work/hour.csv" -o "$work/hour.tmsf"
  q=(qemu-system-arm -machine microbit -cpu cortex-m0 -nographic -monitor none -serial none -kernel "$fw")
  (cd "$work" && timeout 120 "${q[@]}" -semihosting-config enable=on,target=native,arg=replay,arg=hour.tmsf,arg=records.log)
  (cd "$work" && timeout 120 "${q[@]}" -semihosting-config enable=on,target=native,arg=replay,arg=hour.tmsf,arg=states.log,arg=states)
  cp "$work/records.log" "$l/seed-record-log.bin"
  cp "$work/states.log" "$l/seed-state-log.bin"
  head -c 1000 "$work/records.log" >"$l/seed-record-log-cut.bin"
  head -c 2000 "$work/states.log" >"$l/seed-state-log-cut.bin"
  { head -c 640 "$work/states.log"; head -c 300 /dev/zero | tr '\0' '\377'; tail -c +641 "$work/states.log"; } >"$l/seed-state-log-erased-gap.bin"
  { head -c 1280 "$work/records.log"; printf 'garbage in the log'; tail -c +1281 "$work/records.log"; } >"$l/seed-record-log-damaged.bin"
  cat "$work/states.log" "$work/states.log" >"$l/seed-state-log-twice.bin"
  { head -c 768 "$work/records.log"; head -c 768 "$work/states.log"; } >"$l/seed-mixed-kinds.bin"
  head -c 256 "$work/records.log" >"$f/seed-record-frames.bin"
  head -c 256 "$work/states.log" >"$f/seed-state-frames.bin"
else
  echo "seed.sh: no firmware or QEMU: logscan seeds without the firmware's logs" >&2
fi
head -c 500 /dev/zero | tr '\0' '\377' >"$l/seed-erased.bin"
printf '\xd3\x7a\x1c\x5e' >"$l/seed-sync-only.bin"
# --- columnar: a selector byte (0: `.parquet`, 1: `.arrow`), then the file:
# the demo's first rows exported as samples, replayed into records, and cut.
c="$corpus/columnar"
head -n 40 "$day" >"$work/s.csv"
"$tenmin" export -q -c "$st" "$work/s.csv" -o "$work/s.parquet"
"$tenmin" export -q -c "$st" "$work/s.csv" -o "$work/s.arrow"
"$tenmin" replay -q -c "$st" "$work/s.csv" -o "$work/r.parquet"
"$tenmin" replay -q -c "$st" "$work/s.csv" -o "$work/r.arrow"
for f in s r; do
  { printf '\x00'; cat "$work/$f.parquet"; } >"$c/seed-$f-parquet.bin"
  { printf '\x01'; cat "$work/$f.arrow"; } >"$c/seed-$f-arrow.bin"
done
{ printf '\x00'; head -c 100 "$work/s.parquet"; } >"$c/seed-cut-parquet.bin"
{ printf '\x01'; head -c 300 "$work/s.arrow"; } >"$c/seed-cut-arrow.bin"

# --- layouts: a selector byte (the layout of `host_cli::fuzzing::LAYOUTS`),
# then data rows of that layout: 30 seconds (minutes for layout 4) running
# over an interval's end, and variants (bad and missing fields, other
# stations, comments, line ends, a clock change).
y="$corpus/layouts"
mkdir -p "$y"
python3 - "$y" <<'PY'
import sys, datetime as dt
out = sys.argv[1]
t0 = dt.datetime(2025, 1, 20, 9, 59, 45)
def rows(i, k, t):
    s = t.strftime
    ep = int((t - dt.datetime(1970, 1, 1)).total_seconds())
    w = 5 + (k % 7) / 10
    return [
        f"{s('%d.%m.%Y %H:%M:%S')};1,{k % 10};{2700 + k};" + f"{w:.2f}".replace(".", ",") + f";{k % 2}",
        f"{s('%Y-%m-%dT%H:%M:%SZ')},{w:.2f},{2700 + k},1.5",
        f"M{1 + k % 2},{s('%Y-%m-%d %H:%M:%S')},{w:.1f},{270 + k / 2},1.5",
        f"{s('%Y-%m-%d')},{s('%H:%M:%S')},{w * 3.6:.1f},{2700 + k},1.5,M{1 + k % 3 // 2}",
        f" {t.year}  {t.month} {t.day} {t.hour:2d} {t.minute:2d}    {w:.1f} {k % 2}  {270 + k:.1f} 0   -1.5",
        f"{ep}000\t{w:.2f}\t{2700 + k}\t34.{k % 10}",
        f"{s('%Y-%m-%dT%H:%M:%S')};{w:.1f};{k % 3};{2700 + k};0;1.5",
        f"M{1 + k % 2} {s('%Y-%m-%d %H:%M:%S')} {w:.2f} {2700 + k} 1.5",
    ][i]
for i in range(8):
    step = dt.timedelta(minutes=1) if i == 4 else dt.timedelta(seconds=1)
    good = [rows(i, k, t0 + k * step) for k in range(30)]
    variants = {
        "rows": good,
        "crlf": [r + "\r" for r in good],
        "bad": good[:5] + [good[5].replace("5", "x", 1), good[6] + ";9,9", good[7][:-3], "", "# a comment", "NA", good[8].replace("1.5", "NA").replace("1,5", "NAN")] + good[9:15],
    }
    for name, rs in variants.items():
        with open(f"{out}/seed-{i}-{name}.txt", "wb") as f:
            f.write(bytes([i]) + ("\n".join(rs) + "\n").encode())
# A day the clocks go forward in Berlin (layout 2), and back.
for name, day in (("spring", "2025-03-30"), ("autumn", "2025-10-26")):
    rs = [f"M1,{day} {h:02d}:{m:02d}:00,5.0,270,1.5" for h in (1, 2, 3) for m in (0, 30, 59)]
    with open(f"{out}/seed-2-{name}.txt", "wb") as f:
        f.write(bytes([2]) + ("\n".join(rs) + "\n").encode())
PY
# --- draft: the first 6,000 bytes of the real field files of examples/
# (their PROVENANCE.md says where each comes from), the fuzz layouts' 30
# rows (the layouts seeds above) after their preambles, and the demo's own CSV.
g="$corpus/draft"
for d in "$root"/examples/field-files/*/; do
  f="$(ls "$d" | grep -v 'toml\|md' | head -1)"
  head -c 6000 "$d/$f" >"$g/seed-$(basename "$d").txt"
done
python3 - "$g" "$y" "$here/../src/fuzzing.rs" <<'PY'
import re, sys
out, rows, src = sys.argv[1], sys.argv[2], open(sys.argv[3]).read()
pres = re.findall(r'preamble: "(.*?)",\n\s*header: ', src)
for i, pre in enumerate(pres):
    body = open(f"{rows}/seed-{i}-rows.txt", "rb").read()[1:]
    open(f"{out}/seed-layout-{i}.txt", "wb").write(pre.encode().decode("unicode_escape").encode() + body)
PY
head -n 40 "$day" >"$g/seed-own-csv.txt"

# --- campaign: a sensor history, an exclusions file and an events file for
# the fuzz station, parted by a line `%%` (host_cli::fuzzing::PART), set in the
# hour of samples the target replays (2025-01-20, 00:00 to 01:00 UTC).
c="$corpus/campaign"
sensors='[[entry]]
id = "ws80a-1"
channel = "ws80a"
from = "2025-01-20T00:00:00Z"
serial = "A1"
logger = { slope = 0.0462, offset = 0.21 }
certificate = { id = "C-1", date = "2024-11-02", slope = 0.04581, offset = 0.2214, uncertainty = 0.05 }

[[entry]]
id = "ws80a-2"
channel = "ws80a"
from = "2025-01-20T00:25:00Z"
serial = "A2"
logger = { slope = 0.0462, offset = 0.21 }
certificate = { id = "C-2", date = "2025-01-02", slope = 0.04627, offset = 0.1952 }

[[entry]]
id = "t76-1"
channel = "t76"
from = "2025-01-20T00:00:00Z"
to = "2025-01-20T00:40:00Z"
serial = "T1"'
exclusions='channels,from,to,reason,who,entered
ws60,2025-01-20T00:10:00Z,2025-01-20T00:20:00Z,boom re-levelled,crew,2025-01-21
all,2025-01-20T00:45:00Z,2025-01-20T00:46:00Z,"mast climbed, all readings",crew,2025-01-21T08:00:00Z
wd78|t76,2025-01-20T00:30:00Z,2025-01-20T00:30:10Z,short,crew,2025-01-21'
events='# events of the hour
time,kind,text
2025-01-20T00:25:00Z,sensor_swap,ws80a A1 for A2, certificate C-2
2025-01-20T00:45:00Z,site_visit,mast climbed'
printf '%s\n%%%%\n%s\n%%%%\n%s\n' "$sensors" "$exclusions" "$events" >"$c/seed-all-three.txt"
printf '%s\n' "$sensors" >"$c/seed-sensors-only.txt"
printf '\n%%%%\n%s\n' "$exclusions" >"$c/seed-exclusions-only.txt"
printf '\n%%%%\n%s\n%%%%\n%s\n' "channels,from,to,reason,who,entered" "$events" >"$c/seed-events-only.txt"
printf '[[entry]]\nid = "wd78-1"\nchannel = "wd78"\nfrom = "2025-01-20T00:00:00Z"\noffset_deg = 6.5\n' >"$c/seed-vane-offset.txt"
cp "$root"/examples/station-history/sensors.toml "$c/seed-example-sensors.txt"
{ cat "$root"/examples/station-history/sensors.toml; printf '\n%%%%\n'; cat "$root"/examples/station-history/exclusions.csv; } >"$c/seed-example-both.txt"

# --- table: `[logger_table]` and `[conventions]` for the fuzz station, then
# (after a line `%%`) a table of that hour, stamped at each interval's end.
t="$corpus/table"
python3 - "$t" <<'PY'
import sys
out = sys.argv[1]
decl = """[logger_table]
delimiter = ","

[logger_table.time]
column = "time_end"
format = "%Y-%m-%d %H:%M:%S"
zone = "+01:00"
label = "end"

[conventions.ws80a]
mean = { column = "ws_mean", decimals = 2 }
sd = { column = "ws_sd", decimals = 3, divisor = "n-1" }
max = { column = "ws_max", decimals = 2, of = "sample" }
rounding = "unknown"
min_samples = 1

[conventions.wd78]
mean = { column = "wd_mean", decimals = 1, method = "unit_vector", north = "0" }
rounding = "half_even"
"""
rows = ["time_end,ws_mean,ws_sd,ws_max,wd_mean"]
for k in range(1, 7):
    rows.append(f"2025-01-20 01:{k*10 % 60:02d}:00,5.{k}1,0.{k}52,6.{k}0,{250 + k}.4".replace("01:00:00", "02:00:00"))
body = "\n".join(rows) + "\n"
open(f"{out}/seed-table.txt", "w").write(decl + "\n%%\n" + body)
open(f"{out}/seed-table-no-decimals.txt", "w").write(decl.replace(", decimals = 2", "") + "\n%%\n" + body)
open(f"{out}/seed-table-empty-fields.txt", "w").write(decl + "\n%%\n" + body.replace(",5.31,", ",,").replace(",0.452,", ",NaN,"))
# A table that agrees with the samples (host_cli::fuzzing::verify_samples),
# computed here in plain Python: mean, sample standard deviation (n-1), max,
# unit-vector mean direction (the vane's counts times 0.1 plus its 4 degrees).
import math
rows = ["time_end,ws_mean,ws_sd,ws_max,wd_mean"]
for k in range(6):
    ws = [round(5.0 + (i % 17) * 0.13, 2) for i in range(k * 60, (k + 1) * 60)]
    wd = [((2400 + (i * 53) % 900) * 0.1 + 4) % 360 for i in range(k * 60, (k + 1) * 60)]
    m = sum(ws) / len(ws)
    sd = math.sqrt(sum((x - m) ** 2 for x in ws) / (len(ws) - 1))
    d = math.degrees(math.atan2(sum(math.sin(math.radians(a)) for a in wd),
                                sum(math.cos(math.radians(a)) for a in wd))) % 360
    rows.append(f"2025-01-20 {1 + (k + 1) // 6:02d}:{(k + 1) * 10 % 60:02d}:00,{m:.2f},{sd:.3f},{max(ws):.2f},{d:.1f}")
open(f"{out}/seed-table-matching.txt", "w").write(decl + "\n%%\n" + "\n".join(rows) + "\n")
PY

# --- image: layout images of invented four-channel stations
# (host-cli/examples/fuzz_image_seeds.rs), and the sample files above, whose
# stations are stored as images and loaded again.
cargo run -p host-cli --release --quiet --example fuzz_image_seeds -- "$corpus/image"
cp "$corpus"/frames/seed-*.tmsf "$corpus/image/"

echo "seed.sh: seeds written to $corpus"
du -sh "$corpus"/*
