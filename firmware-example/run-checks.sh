#!/usr/bin/env bash
# Firmware checks: build for Cortex-M0 and Cortex-M4F, replay an invented day
# under QEMU on both, compare both record logs bit for bit with the host replay,
# run the sensor-driver demo, and print the budgets table (README "Budgets").
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
step "firmware library tests on the host (drivers against simulated devices, chunked replay)"
host_triple="$(rustc -vV | sed -n 's/^host: //p')"
CARGO_TARGET_DIR="$fw_target" cargo test --lib --target "$host_triple" --quiet

step "host: generate the day"
cd "$root"
CARGO_TARGET_DIR="$host_target" cargo build -p qc-core --example replay_frames --release --quiet
host_tool="$host_target/release/examples/replay_frames"
"$host_tool" generate "$out/day.tmsf"

qemu_m0=(qemu-system-arm -machine microbit -cpu cortex-m0 -nographic -monitor none -serial none)
qemu_m4=(qemu-system-arm -machine mps2-an386 -cpu cortex-m4 -nographic -monitor none -serial none)
semi="enable=on,target=native"
elf() { echo "$fw_target/$1/release/$2"; }

step "replay under QEMU and compare with the host"
cd "$out"
rm -f m0.log m4.log
timeout 120 "${qemu_m0[@]}" -semihosting-config "$semi,arg=replay,arg=day.tmsf,arg=m0.log" \
  -kernel "$(elf thumbv6m-none-eabi replay)"
timeout 120 "${qemu_m4[@]}" -semihosting-config "$semi,arg=replay,arg=day.tmsf,arg=m4.log" \
  -kernel "$(elf thumbv7em-none-eabihf replay)"
"$host_tool" check day.tmsf m0.log
"$host_tool" check day.tmsf m4.log
cmp m0.log m4.log && echo "Cortex-M0 and Cortex-M4F logs are identical"

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

step "budgets: flash and RAM (llvm-size, bytes)"
sections() { # sections ELF -> "vector text rodata data bss"
  llvm-size -A "$1" | awk '
    $1==".vector_table"{v=$2} $1==".text"{t=$2} $1==".rodata"{r=$2} $1==".data"{d=$2} $1==".bss"{b=$2}
    END{printf "%d %d %d %d %d\n", v, t, r, d, b}'
}
printf '%-34s %8s %8s %8s %8s %8s %8s %8s\n' binary vectors .text .rodata .data .bss flash RAM
for t in thumbv6m-none-eabi thumbv7em-none-eabihf; do
  for b in replay baseline; do
    read -r v tx ro da bs < <(sections "$(elf "$t" "$b")")
    printf '%-34s %8d %8d %8d %8d %8d %8d %8d\n' "$b ($t)" "$v" "$tx" "$ro" "$da" "$bs" \
      $((v + tx + ro + da)) $((da + bs))
  done
done
flash() { read -r v tx ro da _ < <(sections "$1"); echo $((v + tx + ro + da)); }
m0_replay=$(flash "$(elf thumbv6m-none-eabi replay)")
m0_base=$(flash "$(elf thumbv6m-none-eabi baseline)")
share=$((m0_replay - m0_base))

echo
echo "qc-core share of flash on thumbv6m, by symbol (llvm-nm sizes; code qc-core inlined into"
echo "the firmware's functions is counted under firmware):"
llvm-nm -S -C --size-sort --radix=d "$(elf thumbv6m-none-eabi replay)" | awk '
  $3 ~ /^[tTrR]$/ { size=$2+0; $1=""; $2=""; $3=""; n=substr($0,4);
    if (n ~ /qc_core/) c="qc-core";
    else if (n ~ /^libm::/) c="libm (qc-core dependency)";
    else if (n ~ /compiler_builtins|^__/) c="compiler-builtins (soft f64, 64-bit int, mem*)";
    else if (n ~ /firmware_example|^replay::/) c="firmware (scenario, replay loop, inlined qc-core)";
    else if (n ~ /semihosting/) c="semihosting";
    else if (n ~ /cortex_m/) c="cortex-m, cortex-m-rt";
    else c="core (fmt, slices) and other";
    sum[c]+=size }
  END { for (c in sum) printf "  %7d  %s\n", sum[c], c }' | sort -rn

m0_ram=$(sections "$(elf thumbv6m-none-eabi replay)" | awk '{print $4 + $5}')
station=$(sed -n 's/.*Station<8,3> \([0-9]*\) B.*/\1/p' budget-m0.txt)
acc=$(sed -n 's/.*IntervalAcc<8,3> \([0-9]*\) B.*/\1/p' budget-m0.txt)
layout=$(sed -n 's/.*Layout<8> \([0-9]*\) B.*/\1/p' budget-m0.txt)
per() { sed -n "s/^budget: $1 *per sample *\([0-9]*\).*/\1/p" budget-m0.txt; }
close_of() { sed -n "s/^budget: $1 *per sample *[0-9]* *interval close *\([0-9]*\).*/\1/p" budget-m0.txt; }
verdict() { if [ "$1" -le "$2" ]; then echo met; else echo "missed by $(($1 - $2))"; fi; }

step "budgets table (Cortex-M0, thumbv6m-none-eabi, QEMU microbit)"
printf '%-58s %10s %10s  %s\n' measure measured target verdict
row() { printf '%-58s %10s %10s  %s\n' "$1" "$2" "$3" "$(verdict "$2" "$3")"; }
row "qc-core flash share: replay - baseline (bytes)" "$share" 16384
row "channel state, 8 channels: Station<8,3> (bytes)" "$station" 2048
row "  of which per-interval accumulators IntervalAcc<8,3>" "$acc" 2048
printf '%-58s %10s\n' "  of which validated layout Layout<8> (could live in flash)" "$layout"
printf '%-58s %10s\n' "logger RAM, static (.data + .bss, bytes)" "$m0_ram"
row "instructions per speed sample (cup, Reading::Counts)" "$(per 'speed, Reading::Counts (cup)')" 150
row "instructions per speed sample (Reading::Value)" "$(per 'speed, Reading::Value')" 150
row "instructions per direction sample (vane, Reading::Counts)" "$(per 'direction, Reading::Counts (vane)')" 300
row "instructions per direction sample (Reading::Value)" "$(per 'direction, Reading::Value')" 300
row "interval close, speed channel (instructions)" "$(close_of 'speed, Reading::Counts (cup)')" 20000
row "interval close, direction channel (instructions)" "$(close_of 'direction, Reading::Counts (vane)')" 20000
row "interval close, scalar channel (instructions)" "$(close_of 'scalar, Reading::Value')" 20000
echo
echo "run-checks.sh: firmware checks passed (budgets are reported, not enforced)"
