#!/usr/bin/env bash
# Firmware checks: build for Cortex-M0 and Cortex-M4F; replay a day of the
# `tenmin demo` station under QEMU on both (sample file from `tenmin export`,
# station built from its header), decode both record logs with `tenmin decode`
# and check them with `tenmin verify` against the samples; cut and damage the
# Cortex-M0 log and check what decode reports; replay the network field file
# with planted bad quality codes (flagged readings) the same way; refuse
# stations that do not fit;
# replay the fixed 8-channel scenario day and compare it bit for bit with the
# host; run the sensor-driver demo; print the budgets table (README "Budgets");
# prove at link time that the minimal loggers have no reachable panic (README
# "No-panic proof").
# Installs what is missing (Rust targets, qemu-system-arm, llvm for llvm-size/nm).
# Usage: firmware-example/run-checks.sh   (from anywhere; about a minute when built)
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
root="$(dirname "$here")"
out="$root/out/firmware"
fw_target="${FW_TARGET_DIR:-$here/target}"
host_target="${CARGO_TARGET_DIR:-$root/target}"
mkdir -p "$out"

step() { printf '\n== %s\n' "$*"; }
fail() { echo "run-checks.sh: FAILED: $*" >&2; exit 1; }
as_root() { if [ "$(id -u)" = 0 ]; then "$@"; else sudo "$@"; fi; }
apt_updated=0
need_apt() { # need_apt COMMAND PACKAGE
  if ! command -v "$1" >/dev/null 2>&1; then
    [ $apt_updated = 1 ] || { as_root apt-get update -q; apt_updated=1; }
    as_root apt-get install -y -q "$2"
  fi
}

step "tools"
rustup target add thumbv6m-none-eabi thumbv7em-none-eabihf >/dev/null
need_apt qemu-system-arm qemu-system-arm
need_apt llvm-size llvm
need_apt llvm-nm llvm
qemu-system-arm --version | head -1

step "build (release) for thumbv6m-none-eabi and thumbv7em-none-eabihf"
cd "$here"
for t in thumbv6m-none-eabi thumbv7em-none-eabihf; do
  CARGO_TARGET_DIR="$fw_target" cargo build --release --target "$t" --quiet
done
step "defmt feature compiles (check only: a board adds a global logger to link)"
for t in thumbv6m-none-eabi thumbv7em-none-eabihf; do
  CARGO_TARGET_DIR="$fw_target" cargo check --release --target "$t" --features defmt --quiet
done
step "no-panic proof: the minimal loggers link with a panic handler that calls an undefined symbol"
# README "No-panic proof". First the proof is shown able to fail: with one
# planted out-of-bounds index the link must fail, naming the symbol.
fw_m0=(--release --target thumbv6m-none-eabi --no-default-features)
if CARGO_TARGET_DIR="$fw_target" cargo build "${fw_m0[@]}" --features nopanic-canary \
  --bin nopanic_states --quiet >"$out/nopanic-canary.txt" 2>&1; then
  fail "the no-panic proof linked with a planted panic: it proves nothing"
fi
grep -q 'undefined symbol: error_a_panic_is_reachable_in_the_logger' "$out/nopanic-canary.txt" \
  || { cat "$out/nopanic-canary.txt"; fail "the canary build failed for another reason"; }
echo "with a planted panic the link fails (undefined symbol error_a_panic_is_reachable_in_the_logger)"
for b in nopanic_states nopanic_records; do
  CARGO_TARGET_DIR="$fw_target" cargo build "${fw_m0[@]}" --features nopanic --bin "$b" --quiet \
    || fail "$b: a panic is reachable in the logger (README \"No-panic proof\" says how to find it)"
  timeout 60 qemu-system-arm -machine microbit -cpu cortex-m0 -nographic -monitor none -serial none \
    -semihosting-config enable=on,target=native -kernel "$fw_target/thumbv6m-none-eabi/release/$b" \
    || fail "$b did not run its day on the Cortex-M0"
  echo "$b: linked without a panic handler's symbol, and ran a day of samples on the Cortex-M0"
done

step "firmware library tests on the host (drivers against simulated devices, replay loop)"
host_triple="$(rustc -vV | sed -n 's/^host: //p')"
CARGO_TARGET_DIR="$fw_target" cargo test --lib --target "$host_triple" --quiet

qemu_m0=(qemu-system-arm -machine microbit -cpu cortex-m0 -nographic -monitor none -serial none)
qemu_m4=(qemu-system-arm -machine mps2-an386 -cpu cortex-m4 -nographic -monitor none -serial none)
semi="enable=on,target=native"
elf() { echo "$fw_target/$1/release/$2"; }
# replay_on m0|m4 SAMPLES LOG: the replay board under QEMU; its exit status.
replay_on() {
  local q
  if [ "$1" = m0 ]; then q=("${qemu_m0[@]}"); else q=("${qemu_m4[@]}"); fi
  local t=thumbv6m-none-eabi
  [ "$1" = m4 ] && t=thumbv7em-none-eabihf
  local extra=""
  [ -n "${4:-}" ] && extra=",arg=$4"
  timeout 120 "${q[@]}" -semihosting-config "$semi,arg=replay,arg=$2,arg=$3$extra" -kernel "$(elf "$t" replay)"
}

step "stack guard: the stack lies below the statics (memory/microbit.x)"
# Overflowing the stack then runs off the start of RAM and faults (QEMU:
# "Lockup", exit status 134) instead of overwriting the logger.
nm_of() { llvm-nm "$(elf thumbv6m-none-eabi replay)" | awk -v s="$1" '$3==s{print $1}'; }
stack_top=$((16#$(nm_of _stack_start))); stack_bottom=$((16#$(nm_of _stack_end)))
bss_start=$((16#$(nm_of __sbss))); bss_end=$((16#$(nm_of __ebss)))
printf 'stack 0x%08x-0x%08x (%d B), statics 0x%08x-0x%08x (%d B)\n' \
  "$stack_bottom" "$stack_top" $((stack_top - stack_bottom)) "$bss_start" "$bss_end" $((bss_end - bss_start))
[ "$stack_bottom" = $((16#20000000)) ] && [ "$stack_top" -le "$bss_start" ] \
  || fail "the stack is not below the statics"

step "host: tenmin and the scenario example"
cd "$root"
# The tenmin to check against: $TENMIN when set (check.sh passes the one its
# tests built), else a debug build. It is the same code as a release build and
# these checks compare results, not speed; a release build of host-cli's
# dependencies takes minutes more on a small machine.
if [ -n "${TENMIN:-}" ]; then
  tenmin="$TENMIN"
else
  CARGO_TARGET_DIR="$host_target" cargo build -p host-cli --quiet
  tenmin="$host_target/debug/tenmin"
fi
[ -x "$tenmin" ] || fail "no tenmin at $tenmin"
# The scenario tool in the dev profile, with the features of `cargo test
# --workspace --all-features` (check.sh), which has built it then: a release
# build compiled qc-core's dev-dependencies again (a minute and a half on the
# 2-core CI machine) for the same bits, and other features half a minute.
CARGO_TARGET_DIR="$host_target" cargo build --workspace --all-features --example replay_frames --quiet
host_tool="$host_target/debug/examples/replay_frames"

step "a day of demo data: tenmin demo, tenmin export"
cd "$out"
rm -rf demo && "$tenmin" demo --days 1 --out demo >demo.txt
grep '^verify:' demo.txt
"$tenmin" export --config demo/station.toml demo/samples-*.csv -o demo.tmsf

step "replay under QEMU on both targets, tenmin decode, tenmin verify"
rm -f demo-m0.log demo-m4.log
replay_on m0 demo.tmsf demo-m0.log
replay_on m4 demo.tmsf demo-m4.log
for m in m0 m4; do
  "$tenmin" decode --strict --config demo/station.toml "demo-$m.log" -o "decoded-$m.csv"
  "$tenmin" verify -q --config demo/station.toml --samples demo/samples-*.csv --records "decoded-$m.csv" \
    || fail "tenmin verify of the $m log"
done
cmp demo-m0.log demo-m4.log && echo "Cortex-M0 and Cortex-M4F logs are identical"
rows=$(($(wc -l <decoded-m0.csv) - 1))

step "state logger: replay under QEMU writing state frames, finished by tenmin decode on the PC"
rm -f states-m0.log states-m4.log
replay_on m0 demo.tmsf states-m0.log states
replay_on m4 demo.tmsf states-m4.log states
cmp states-m0.log states-m4.log && echo "Cortex-M0 and Cortex-M4F state logs are identical"
for m in m0 m4; do
  "$tenmin" decode --strict --config demo/station.toml "states-$m.log" -o "states-$m.csv"
  "$tenmin" verify -q --config demo/station.toml --samples demo/samples-*.csv --records "states-$m.csv" \
    || fail "tenmin verify of the $m state log"
done
cmp states-m0.csv decoded-m0.csv \
  && echo "records finished on the PC from the state log = records finished on the logger"

step "flagged readings: a field file with bad quality codes, replayed under QEMU (record and state logs)"
# The network example with invented bad codes planted (every 7th minute's
# speed code 1, every 11th minute's direction code 2; the file's delimiter is
# any run of spaces): tenmin export carries them as flagged readings (sample
# tag 3); the loggers count them apart (n_flagged), and decode + verify must
# give the replay's records bit for bit.
net="$root/examples/field-files/surfrad-1min"
awk 'NR>2 && NR%7==0 {$44="1"} NR>2 && NR%11==0 {$46="2"} {print}' \
  "$net/surfrad-alamosa-2016-001-1min.dat" >planted.dat
"$tenmin" export -q --config "$net/station.toml" planted.dat -o planted.tmsf
for m in m0 m4; do
  for kind in records states; do
    rm -f "planted-$m-$kind.log"
    if [ $kind = states ]; then
      replay_on $m planted.tmsf "planted-$m-$kind.log" states
    else
      replay_on $m planted.tmsf "planted-$m-$kind.log"
    fi
    "$tenmin" decode --strict -q --config "$net/station.toml" "planted-$m-$kind.log" -o "planted-$m-$kind.csv"
    "$tenmin" verify -q --config "$net/station.toml" --samples planted.dat --records "planted-$m-$kind.csv" \
      || fail "tenmin verify of the $m $kind log with flagged readings"
  done
done
flagged=$(awk -F, 'NR == 1 { for (i = 1; i <= NF; i++) if ($i == "n_flagged") c = i; next } { s += $c } END { print s + 0 }' planted-m0-records.csv)
[ "$flagged" -gt 0 ] || fail "the planted bad codes were not counted as flagged"
echo "$flagged flagged readings counted on both targets, in record and state logs, as the replay counts them"

step "damaged logs: tenmin decode reports the damage, everything before it verifies"
# damage_check NAME FILE: FILE is a damaged copy of the M0 log. decode --strict
# must exit 1 and name the damage with byte offsets; verify must find exactly the
# rows the decode could not write missing, and every other row identical.
damage_check() {
  local name=$1 file=$2 st=0
  "$tenmin" decode --strict -q --config demo/station.toml "$file" -o "$name.csv" 2>"$name.err" || st=$?
  [ $st = 1 ] || fail "$name: decode --strict exit status $st, expected 1"
  grep -m 2 -E 'bytes [0-9]+ to [0-9]+' "$name.err" || fail "$name: decode named no damaged bytes"
  st=0
  "$tenmin" verify -q --max-diffs 100000 --config demo/station.toml --samples demo/samples-*.csv \
    --records "$name.csv" >"$name.verify" || st=$?
  [ $st = 1 ] || fail "$name: verify exit status $st, expected 1 (rows missing)"
  kept=$(($(wc -l <"$name.csv") - 1))
  local missing total
  missing=$(grep -c 'row missing from the logger records' "$name.verify" || true)
  total=$(sed -n 's/^verify: \([0-9]*\) difference.*/\1/p' "$name.verify")
  [ "$missing" = $((rows - kept)) ] && [ "$total" = "$missing" ] \
    || fail "$name: $total differences, $missing rows missing; expected only the $((rows - kept)) rows not decoded"
  echo "$name: the $kept rows decoded are identical to the replay's, the $missing others reported missing"
}
frame=128
# Cuts inside frame 100, just past frame 400's start, and inside the last frame:
# the rows decoded are the first rows of the whole log's.
for cut in $((frame * 100 + 57)) $((frame * 400 + 1)) $((frame * 857 + 127)); do
  head -c "$cut" demo-m0.log >"cut-$cut.log"
  damage_check "cut-$cut" "cut-$cut.log"
  head -n $((kept + 1)) decoded-m0.csv | cmp -s - "cut-$cut.csv" \
    || fail "cut at byte $cut: the decoded rows are not the first $kept rows of the whole log's"
done
# One bit of frame 300 flipped: that frame alone is lost.
cp demo-m0.log flipped.log
at=$((frame * 300 + 70))
byte=$(od -An -tu1 -j "$at" -N1 demo-m0.log | tr -d ' ')
printf "\\$(printf '%03o' $((byte ^ 0x20)))" | dd of=flipped.log bs=1 seek="$at" conv=notrunc status=none
cmp -s demo-m0.log flipped.log && fail "the byte was not flipped"
damage_check flipped flipped.log
[ "$kept" = $((rows - 1)) ] || fail "flipped bit: $kept rows decoded, expected $((rows - 1))"

step "stations that do not fit the replay board are refused, with the reason"
mkdir -p misfit
{
  printf '[logging]\nsample_rate_hz = 1\n'
  for i in 1 2 3 4 5 6 7 8 9; do printf '\n[[channel]]\nid = "t%d"\nkind = "scalar"\nresolution = 0.1\n' "$i"; done
} >misfit/nine.toml
printf 'time,t1,t2,t3,t4,t5,t6,t7,t8,t9\n2025-01-20T00:00:00Z,1,2,3,4,5,6,7,8,9\n' >misfit/nine.csv
printf '[logging]\nsample_rate_hz = 4\n\n[[channel]]\nid = "ws"\nkind = "speed"\nresolution = 0.01\ngust_window_s = 4\n' >misfit/gust.toml
printf 'time,ws\n2025-01-20T00:00:00Z,5.5\n' >misfit/gust.csv
for case in nine gust; do
  "$tenmin" export -q --config "misfit/$case.toml" "misfit/$case.csv" -o "misfit/$case.tmsf"
  st=0
  replay_on m0 "misfit/$case.tmsf" "misfit/$case.log" 2>"misfit/$case.err" || st=$?
  cat "misfit/$case.err"
  [ $st = 1 ] && grep -q 'this logger holds at most' "misfit/$case.err" || fail "$case: exit status $st"
done

step "the fixed scenario day (8 channels, raw counts) under QEMU, bit for bit against the host"
"$host_tool" generate day.tmsf
rm -f m0.log m4.log
replay_on m0 day.tmsf m0.log
replay_on m4 day.tmsf m4.log
"$host_tool" check day.tmsf m0.log
"$host_tool" check day.tmsf m4.log

step "sensor drivers on simulated devices under QEMU"
timeout 60 "${qemu_m0[@]}" -semihosting-config "$semi" -kernel "$(elf thumbv6m-none-eabi sensors)" >sensors-m0.txt
timeout 60 "${qemu_m4[@]}" -semihosting-config "$semi" -kernel "$(elf thumbv7em-none-eabihf sensors)" >sensors-m4.txt
tail -1 sensors-m0.txt
cmp sensors-m0.txt sensors-m4.txt && echo "Cortex-M0 and Cortex-M4F print the same records"

step "budgets: instructions (QEMU -icount shift=0: 1 ns of virtual time per instruction)"
timeout 120 "${qemu_m0[@]}" -icount shift=0 -semihosting-config "$semi" \
  -kernel "$(elf thumbv6m-none-eabi budget)" | tee budget-m0.txt
echo "(Cortex-M4F, for comparison)"
timeout 120 "${qemu_m4[@]}" -icount shift=0 -semihosting-config "$semi" \
  -kernel "$(elf thumbv7em-none-eabihf budget)" | tee budget-m4.txt

step "budgets: the minimal 8-channel logger runs a day under QEMU (footprint, footprint_base)"
for b in footprint footprint_base; do
  timeout 60 "${qemu_m0[@]}" -semihosting-config "$semi" -kernel "$(elf thumbv6m-none-eabi $b)" \
    || fail "$b on the Cortex-M0"
  timeout 60 "${qemu_m4[@]}" -semihosting-config "$semi" -kernel "$(elf thumbv7em-none-eabihf $b)" \
    || fail "$b on the Cortex-M4F"
done
echo "footprint and footprint_base ran a day of samples on both targets"

step "budgets: flash and RAM (llvm-size, bytes)"
sections() { # sections ELF -> "vector text rodata data bss"
  llvm-size -A "$1" | awk '
    $1==".vector_table"{v=$2} $1==".text"{t=$2} $1==".rodata"{r=$2} $1==".data"{d=$2} $1==".bss"{b=$2}
    END{printf "%d %d %d %d %d\n", v, t, r, d, b}'
}
printf '%-38s %8s %8s %8s %8s %8s %8s %8s\n' binary vectors .text .rodata .data .bss flash RAM
for t in thumbv6m-none-eabi thumbv7em-none-eabihf; do
  for b in footprint footprint_states footprint_base replay baseline; do
    read -r v tx ro da bs < <(sections "$(elf "$t" "$b")")
    printf '%-38s %8d %8d %8d %8d %8d %8d %8d\n' "$b ($t)" "$v" "$tx" "$ro" "$da" "$bs" \
      $((v + tx + ro + da)) $((da + bs))
  done
done
flash() { read -r v tx ro da _ < <(sections "$1"); echo $((v + tx + ro + da)); }
share=$(($(flash "$(elf thumbv6m-none-eabi footprint)") - $(flash "$(elf thumbv6m-none-eabi footprint_base)")))
state_share=$(($(flash "$(elf thumbv6m-none-eabi footprint_states)") - $(flash "$(elf thumbv6m-none-eabi footprint_base)")))
replay_share=$(($(flash "$(elf thumbv6m-none-eabi replay)") - $(flash "$(elf thumbv6m-none-eabi baseline)")))

# The base must link exactly the runtime the measured loggers link (startup,
# semihosting exit, the helpers of its own loop), so that "measured - base" is
# qc-core's share alone (README "Methods and their limits"): every symbol of
# footprint_base with a size, but its own program's, must be in each.
base_only() { # base_only BINARY: footprint_base's symbols BINARY lacks
  llvm-nm -C "$(elf thumbv6m-none-eabi "$1")" | awk '{ $1=""; $2=""; print substr($0,3) }' \
    | sed 's/::h[0-9a-f]\{16\}$//' | sort -u >"$out/measured.syms"
  llvm-nm -S -C "$(elf thumbv6m-none-eabi footprint_base)" | awk 'NF >= 4 && $3 ~ /^[tTrRdD]$/ {
      $1=""; $2=""; $3=""; print substr($0,4) }' | sed 's/::h[0-9a-f]\{16\}$//' \
    | grep -v '^footprint_base::' | sort -u | comm -23 - "$out/measured.syms"
}
for b in footprint_states footprint; do
  extra=$(base_only "$b")
  [ -z "$extra" ] || fail "footprint_base links what $b does not (the share would be understated): $extra"
done
echo "footprint_base links only runtime that footprint_states and footprint link too (no panic handler, no core::fmt)"
echo
# split BINARY: what BINARY adds to flash over footprint_base, by symbol (llvm-nm
# sizes of the symbols it has and footprint_base has not; qc-core inlined into
# the logger counts as logger).
split() {
  llvm-nm -C "$(elf thumbv6m-none-eabi footprint_base)" | awk '{ $1=""; $2=""; print substr($0,3) }' \
    | sed 's/::h[0-9a-f]\{16\}$//' | sort -u >"$out/base.syms"
  llvm-nm -S -C --radix=d "$(elf thumbv6m-none-eabi "$1")" | awk '
    NR==FNR { base[$0]=1; next }
    $3 ~ /^[tTrRdD]$/ { size=$2+0; $1=""; $2=""; $3=""; n=substr($0,4); sub(/::h[0-9a-f]+$/, "", n);
      if (n in base) next;
      if (n ~ /qc_core/) c="qc-core";
      else if (n ~ /^libm::/) c="libm (qc-core dependency)";
      else if (n ~ /compiler_builtins|^__/) c="compiler-builtins (soft f64, 64-bit int, mem*)";
      else if (n ~ /scenario::LAYOUT/) c="the validated layout (data, in flash)";
      else if (n ~ /firmware_example/) c="logger (firmware_example::logger, inlined qc-core)";
      else c="the program itself and core";
      sum[c]+=size }
    END { for (c in sum) printf "  %7d  %s\n", sum[c], c }' "$out/base.syms" - | sort -rn
}
echo
echo "what the minimal logger that finishes on board (footprint) adds to flash on thumbv6m, by symbol:"
split footprint
echo "what the minimal state logger (footprint_states) adds, by symbol:"
split footprint_states

m0_ram=$(sections "$(elf thumbv6m-none-eabi replay)" | awk '{print $4 + $5}')
fp_ram=$(sections "$(elf thumbv6m-none-eabi footprint)" | awk '{print $4 + $5}')
field() { sed -n "s/.*$1 \([0-9]*\) B.*/\1/p" budget-m0.txt | head -1; }
state=$(field 'Station<8,3,&Layout>')
layout=$(field 'Layout<8>')
acc=$(field 'IntervalAcc<8,3>')
rec=$(field '8 x Recovery')
scr=$(field 'Screener<8>')
# budget_line NAME: the numbers after "per sample" on the budget line NAME
line() { grep -F "budget: $1 " budget-m0.txt | head -1; }
num() { line "$1" | sed -n "s/.*$2 *\([0-9]*\).*/\1/p"; }
verdict() { if [ "$1" -le "$2" ]; then echo met; else echo "missed by $(($1 - $2))"; fi; }

step "budgets table (Cortex-M0, thumbv6m-none-eabi, QEMU microbit)"
printf '%-64s %10s %8s  %s\n' measure measured target verdict
row() { printf '%-64s %10s %8s  %s\n' "$1" "$2" "$3" "$(verdict "$2" "$3")"; }
info() { printf '%-64s %10s\n' "$1" "$2"; }
row "qc-core flash share, 8-channel state logger: footprint_states - base (B)" "$state_share" 16384
info "  a logger that also finishes and screens: footprint - base (B)" "$share"
info "  the replay board (both kinds of logger): replay - baseline (B)" "$replay_share"
row "channel state, 8 channels: Station<8,3,&Layout> (B)" "$state" 2048
info "  of which interval accumulators IntervalAcc<8,3>" "$acc"
info "  of which running recovery, 8 x Recovery" "$rec"
info "  of which flat-line history, Screener<8>" "$scr"
info "  the state logger's running state, Sampler<8,3,&Layout> (B)" "$(field 'Sampler<8,3,&Layout>')"
info "  the validated layout Layout<8>, in flash (B)" "$layout"
info "  the 8-channel logger's static RAM (.data + .bss, B)" "$fp_ram"
info "  the replay board's static RAM (.data + .bss, B)" "$m0_ram"
info "  the replay board's stack region (memory/microbit.x, B)" $((stack_top - stack_bottom))
row "instructions per speed sample, 8 cups (counts), per channel" "$(num '8 x speed, Reading::Counts (cup)' 'per channel')" 150
info "  the same, a 1-channel station (station's work not shared)" "$(num 'speed, Reading::Counts (cup)' 'per sample')"
info "  the same, Reading::Value (soft floating point)" "$(num 'speed, Reading::Value' 'per sample')"
row "instructions per direction sample, 8 vanes (counts), per channel" "$(num '8 x direction, Reading::Counts' 'per channel')" 300
info "  the same, a 1-channel station (station's work not shared)" "$(num 'direction, Reading::Counts (vane)' 'per sample')"
info "  the same, Reading::Value (soft floating point)" "$(num 'direction, Reading::Value' 'per sample')"
info "  the station's own work per sample (no channel)" "$(num 'station alone (0 channels)' 'per sample')"
info "instructions per scalar sample, raw counts, 1-channel station" "$(num 'scalar, Reading::Counts (ADC)' 'per sample')"
info "  the same, Reading::Value (soft floating point)" "$(num 'scalar, Reading::Value' 'per sample')"
row "interval close, speed channel (steady state)" "$(num 'speed, Reading::Counts (cup)' 'interval close')" 20000
row "interval close, direction channel (steady state)" "$(num 'direction, Reading::Counts (vane)' 'interval close')" 20000
row "interval close, scalar channel (steady state)" "$(num 'scalar, Reading::Value' 'interval close')" 20000
row "interval close, 8-channel scenario logger incl. frames, per channel" "$(line 'scenario logger (8 channels)' | sed -n 's/.*(\([0-9]*\) per channel.*/\1/p')" 20000
row "interval close, 8-channel state logger incl. state frames, per channel" "$(line 'state logger (8 channels)' | sed -n 's/.*(\([0-9]*\) per channel.*/\1/p')" 20000
info "  the first close of a calendar month, station alone" "$(num 'station alone (0 channels)' 'first of a month')"
echo
echo "run-checks.sh: firmware checks passed (budgets are reported, not enforced)"
