#!/usr/bin/env bash
# The C logger (firmware-example/c) under QEMU, checked bit for bit:
# builds the C interface's static library (qc-core/capi) for Cortex-M0 and
# Cortex-M4F with its no-panic handler (feature `nopanic`: every C program
# linked here is a link-time proof that the entry points it calls reach no
# panic; a planted panic must make the link fail), builds the C logger with
# Debian's arm-none-eabi-gcc and newlib (semihosting file I/O), replays a
# day of the `tenmin demo` station on QEMU's microbit (Cortex-M0) and
# mps2-an386 (Cortex-M4F) as a record logger and as a state logger, decodes
# each log with `tenmin decode --strict` and checks it with `tenmin verify`
# against the PC's replay of the samples (exit 0 only when every field is
# identical); compares the logs with the Rust firmware's when
# run-checks.sh left them; prints the budgets (flash share, instructions per
# sample per channel, RAM), measured as the Rust loggers' are. All of it
# for the default library (every logger kind and shape) and for the
# configured ones, state-logger,c8g3 and record-logger,c8g3 (README "From
# C", "Configured builds"), whose logs must be the default library's bytes.
# Installs what is missing (Rust targets, gcc-arm-none-eabi,
# libnewlib-arm-none-eabi, qemu-system-arm).
# Usage: firmware-example/c/check.sh   (from anywhere; about a minute when built)
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
root="$(cd "$here/../.." && pwd)"
out="$root/out/firmware-c"
target="${CARGO_TARGET_DIR:-$root/target}"
mkdir -p "$out"

step() { printf '\n== %s\n' "$*"; }
fail() { echo "c/check.sh: FAILED: $*" >&2; exit 1; }
as_root() { if [ "$(id -u)" = 0 ]; then "$@"; else sudo "$@"; fi; }
apt_updated=0
need_apt() { # need_apt TEST-PATH-OR-COMMAND PACKAGE
  if ! command -v "$1" >/dev/null 2>&1 && [ ! -e "$1" ]; then
    [ $apt_updated = 1 ] || { as_root apt-get update -q; apt_updated=1; }
    as_root apt-get install -y -q --no-install-recommends "$2"
  fi
}

step "tools"
rustup target add thumbv6m-none-eabi thumbv7em-none-eabihf >/dev/null
need_apt arm-none-eabi-gcc gcc-arm-none-eabi
need_apt /usr/lib/arm-none-eabi/newlib/thumb/v6-m/nofp/librdimon_nano.a libnewlib-arm-none-eabi
need_apt qemu-system-arm qemu-system-arm
arm-none-eabi-gcc --version | head -1
qemu-system-arm --version | head -1

step "the C interface's static library (profile capi: opt-level s, LTO, panic abort; feature nopanic)"
cd "$root"
# `cargo rustc --crate-type staticlib`: with the rlib beside it cargo would
# skip the whole-program (LTO) step.
lib() { # lib TARGET FEATURES NAME
  cargo rustc -p qc-capi --profile capi --target "$1" --features "$2" --crate-type staticlib --quiet
  cp "$target/$1/capi/libtenmin_qc.a" "$out/$3"
}
lib thumbv6m-none-eabi nopanic-canary libtenmin_qc-m0-canary.a
lib thumbv6m-none-eabi nopanic libtenmin_qc-m0.a
lib thumbv7em-none-eabihf nopanic libtenmin_qc-m4.a
# Configured builds (README "From C"): one logger kind of one shape, c8g3.
# Then the push is called directly (cfg tm_one_engine) and the other kind's
# entry points answer TM_ERR_NOT_BUILT.
configured=(state-logger record-logger)
for kind in "${configured[@]}"; do
  cargo rustc -p qc-capi --profile capi --target thumbv6m-none-eabi --no-default-features \
    --features "nopanic,$kind,c8g3" --crate-type staticlib --quiet
  cp "$target/thumbv6m-none-eabi/capi/libtenmin_qc.a" "$out/libtenmin_qc-m0-$kind.a"
  cargo rustc -p qc-capi --profile capi --target thumbv7em-none-eabihf --no-default-features \
    --features "nopanic,$kind,c8g3" --crate-type staticlib --quiet
  cp "$target/thumbv7em-none-eabihf/capi/libtenmin_qc.a" "$out/libtenmin_qc-m4-$kind.a"
done
echo "the default library (every kind and shape) and the configured ones (${configured[*]}, shape c8g3)"
step "the configured library's own tests (host; the entry points it leaves out answer TM_ERR_NOT_BUILT)"
for kind in "${configured[@]}"; do
  cargo test -p qc-capi --lib --no-default-features --features "$kind,c8g3" --quiet 2>&1 | grep -E 'test result|FAILED|panicked' \
    || fail "qc-capi's tests in the build $kind,c8g3"
done

step "C builds (arm-none-eabi-gcc, newlib nano, semihosting)"
cd "$here"
cflags=(-std=c99 -Os -g -Wall -Wextra -Werror -ffunction-sections -fdata-sections
  -I "$root/qc-core/capi/include")
ldflags=(-L board -nostartfiles --specs=nano.specs --specs=rdimon.specs -Wl,--gc-sections
  -Wl,--no-warn-execstack)
m0=(-mcpu=cortex-m0 -mthumb -T board/microbit.ld)
m4=(-mcpu=cortex-m4 -mthumb -mfloat-abi=hard -mfpu=fpv4-sp-d16 -T board/mps2-an386.ld)
cc_m0() { arm-none-eabi-gcc "${m0[@]}" "${cflags[@]}" board/startup.c "$@" "${ldflags[@]}"; }
cc_m4() { arm-none-eabi-gcc "${m4[@]}" "${cflags[@]}" board/startup.c "$@" "${ldflags[@]}"; }
lib_m0="$out/libtenmin_qc-m0.a"
lib_m4="$out/libtenmin_qc-m4.a"

step "no-panic proof: the C programs link with a panic handler that calls an undefined symbol"
# First the proof is shown able to fail: with one planted panic the link
# must fail, naming the symbol.
if cc_m0 logger.c stations.c "$out/libtenmin_qc-m0-canary.a" -o "$out/canary.elf" >"$out/canary.txt" 2>&1; then
  fail "the C logger linked with a planted panic: the proof proves nothing"
fi
grep -q 'error_a_panic_is_reachable_in_the_c_interface' "$out/canary.txt" \
  || { cat "$out/canary.txt"; fail "the canary link failed for another reason"; }
echo "with a planted panic the link fails (undefined symbol error_a_panic_is_reachable_in_the_c_interface)"
cc_m0 logger.c stations.c "$lib_m0" -o "$out/logger-m0.elf" || fail "logger (M0): a panic is reachable"
cc_m4 logger.c stations.c "$lib_m4" -o "$out/logger-m4.elf" || fail "logger (M4F): a panic is reachable"
# The same logger on its layout's stored image (stored_layouts.c, image.c).
cc_m0 -DSTORED_LAYOUT logger.c stations.c stored_layouts.c "$lib_m0" -o "$out/logger-stored-m0.elf" \
  || fail "logger, stored layout (M0): a panic is reachable"
cc_m4 -DSTORED_LAYOUT logger.c stations.c stored_layouts.c "$lib_m4" -o "$out/logger-stored-m4.elf" \
  || fail "logger, stored layout (M4F): a panic is reachable"
cc_m0 -DSTATIONS_QUIET -DFOOTPRINT_STATES footprint.c stations.c "$lib_m0" -o "$out/footprint-states.elf"
cc_m0 -DSTATIONS_QUIET -DFOOTPRINT_RECORDS footprint.c stations.c "$lib_m0" -o "$out/footprint-records.elf"
cc_m0 -DSTORED_LAYOUT -DFOOTPRINT_STATES footprint.c stored_layouts.c "$lib_m0" -o "$out/footprint-states-stored.elf"
cc_m0 -DSTORED_LAYOUT -DFOOTPRINT_RECORDS footprint.c stored_layouts.c "$lib_m0" -o "$out/footprint-records-stored.elf"
# The base links the library too, calling none of it: newlib's own calls to
# memcpy, memset and the division helpers then resolve to the library's
# compiler-builtins, as in the loggers (and -u __aeabi_idivmod: the signed
# division the loggers' core pulls in, which serves newlib there), so that
# base and loggers link the same runtime (checked below, README "Budgets").
cc_m0 footprint.c -Wl,--undefined=__aeabi_idivmod "$lib_m0" -o "$out/footprint-base.elf"
cc_m0 budget.c "$lib_m0" -o "$out/budget-m0.elf"
cc_m4 budget.c "$lib_m4" -o "$out/budget-m4.elf"
# Every entry point of every shape (nopanic_all.c; linked only, with the
# larger memory map: its blocks of all shapes do not fit the microbit's RAM).
arm-none-eabi-gcc -mcpu=cortex-m0 -mthumb -T board/mps2-an386.ld "${cflags[@]}" board/startup.c \
  nopanic_all.c "$lib_m0" "${ldflags[@]}" -o "$out/nopanic-all.elf" \
  || fail "nopanic_all: an entry point of the C interface reaches a panic"
for kind in "${configured[@]}"; do
  for m in m0 m4; do
    cc_$m logger.c stations.c "$out/libtenmin_qc-$m-$kind.a" -o "$out/logger-$m-$kind.elf" \
      || fail "logger ($m, library $kind,c8g3): a panic is reachable"
    cc_$m -DSTORED_LAYOUT logger.c stations.c stored_layouts.c "$out/libtenmin_qc-$m-$kind.a" \
      -o "$out/logger-stored-$m-$kind.elf" || fail "logger, stored layout ($m, library $kind,c8g3): a panic is reachable"
  done
  k=STATES; [ $kind = record-logger ] && k=RECORDS
  cc_m0 -DSTATIONS_QUIET -DFOOTPRINT_$k footprint.c stations.c "$out/libtenmin_qc-m0-$kind.a" -o "$out/footprint-$kind.elf"
  cc_m0 -DSTORED_LAYOUT -DFOOTPRINT_$k footprint.c stored_layouts.c "$out/libtenmin_qc-m0-$kind.a" \
    -o "$out/footprint-stored-$kind.elf"
  cc_m0 footprint.c -Wl,--undefined=__aeabi_idivmod "$out/libtenmin_qc-m0-$kind.a" -o "$out/footprint-base-$kind.elf"
  cc_m0 budget.c "$out/libtenmin_qc-m0-$kind.a" -o "$out/budget-m0-$kind.elf"
  arm-none-eabi-gcc -mcpu=cortex-m0 -mthumb -T board/mps2-an386.ld "${cflags[@]}" board/startup.c \
    nopanic_all.c "$out/libtenmin_qc-m0-$kind.a" "${ldflags[@]}" -o "$out/nopanic-all-$kind.elf" \
    || fail "nopanic_all (library $kind,c8g3): an entry point reaches a panic"
done
echo "the logger (record and state, Cortex-M0 and M4F; its layout built at run time, and loaded from its stored image), the footprint and budget programs, and nopanic_all.c (every entry point of every shape) linked: no entry point reaches a panic"
echo "the same with the configured libraries (${configured[*]}, c8g3): the logger of their kind, footprint, budget, nopanic_all"

step "host: tenmin, a day of demo data (tenmin demo, tenmin export)"
cd "$root"
# $TENMIN when set (check.sh passes the one its tests built), else a debug
# build: the same code as a release build, and these checks compare results.
if [ -n "${TENMIN:-}" ]; then
  tenmin="$TENMIN"
else
  cargo build -p host-cli --quiet
  tenmin="$target/debug/tenmin"
fi
[ -x "$tenmin" ] || fail "no tenmin at $tenmin"
cd "$out"
rm -rf demo && "$tenmin" demo --days 1 --out demo >demo.txt
"$tenmin" export -q --config demo/station.toml demo/samples-*.csv -o demo.tmsf

qemu_m0=(qemu-system-arm -machine microbit -cpu cortex-m0 -nographic -monitor none -serial none)
qemu_m4=(qemu-system-arm -machine mps2-an386 -cpu cortex-m4 -nographic -monitor none -serial none)
semi="enable=on,target=native"
run_on() { # run_on m0|m4 ELF [ARGS...]: the program under QEMU with semihosting arguments
  local m=$1 elf=$2; shift 2
  local q=("${qemu_m0[@]}") args=""
  [ "$m" = m4 ] && q=("${qemu_m4[@]}")
  for a in "$@"; do args="$args,arg=$a"; done
  timeout 300 "${q[@]}" -semihosting-config "$semi$args" -kernel "$elf"
}

step "the C logger under QEMU on both targets, tenmin decode, tenmin verify; on its stored layout image, the same bytes"
for m in m0 m4; do
  for kind in records states; do
    extra=()
    [ $kind = states ] && extra=(states)
    for how in "" stored-; do
      log="c-$how$m-$kind.log"
      rm -f "$log"
      run_on $m "$out/logger-$how$m.elf" logger demo.tmsf "$log" "${extra[@]}" | tee "c-$how$m-$kind.txt" \
        || fail "the C logger ($how$m, $kind) exited with an error"
    done
    # The layout loaded from its stored image (stored_layouts.c) gives the
    # bytes of the layout built at run time, so its logs verify as those do.
    cmp "c-stored-$m-$kind.log" "c-$m-$kind.log" \
      || fail "the stored layout's $m $kind log differs from the run-time layout's"
    "$tenmin" decode --strict -q --config demo/station.toml "c-$m-$kind.log" -o "c-$m-$kind.csv" \
      || fail "tenmin decode of the C $m $kind log"
    "$tenmin" verify -q --config demo/station.toml --samples demo/samples-*.csv --records "c-$m-$kind.csv" \
      || fail "tenmin verify of the C $m $kind log"
  done
done
echo "the logs of the stored layout image are byte for byte those of the layout built at run time"
cmp c-m0-records.log c-m4-records.log && cmp c-m0-states.log c-m4-states.log \
  && echo "Cortex-M0 and Cortex-M4F logs are identical (record logs, state logs)"

cmp c-m0-records.csv c-m0-states.csv \
  && echo "records finished on the PC from the C state log = records finished by the C logger"
for kind in "${configured[@]}"; do
  extra=(); k=records
  [ $kind = state-logger ] && { extra=(states); k=states; }
  for m in m0 m4; do
    for how in "" stored-; do
      log="c-$how$m-$kind.log"
      rm -f "$log"
      run_on $m "$out/logger-$how$m-$kind.elf" logger demo.tmsf "$log" "${extra[@]}" >"c-$how$m-$kind.txt" \
        || { cat "c-$how$m-$kind.txt"; fail "the C logger ($how$m, library $kind,c8g3) exited with an error"; }
      # The default library's log verified above: the same bytes verify too.
      cmp "$log" "c-$m-$k.log" || fail "the configured library's ($kind,c8g3) $how$m log differs from the default library's"
    done
  done
done
echo "the configured libraries' logs (${configured[*]}, c8g3; built and stored layout, Cortex-M0 and M4F) are byte for byte the default library's, which tenmin verify checked"
rust="$root/out/firmware"
if [ -f "$rust/demo.tmsf" ] && cmp -s "$rust/demo.tmsf" demo.tmsf && [ -f "$rust/demo-m0.log" ] && [ -f "$rust/states-m0.log" ]; then
  cmp c-m0-records.log "$rust/demo-m0.log" && cmp c-m0-states.log "$rust/states-m0.log" \
    || fail "the C logger's logs differ from the Rust firmware's (run-checks.sh)"
  echo "the C logger's record and state logs are byte for byte the Rust firmware's (run-checks.sh)"
else
  echo "(no Rust firmware logs of the same samples in $rust: run firmware-example/run-checks.sh first to compare)"
fi

step "budgets: the minimal 8-channel loggers run a day under QEMU (footprint-states, footprint-records, footprint-base)"
for b in footprint-states footprint-records footprint-states-stored footprint-records-stored footprint-base; do
  run_on m0 "$out/$b.elf" | tee "$b.txt" || fail "$b on the Cortex-M0"
done

for kind in "${configured[@]}"; do
  for b in footprint-$kind footprint-stored-$kind footprint-base-$kind; do
    run_on m0 "$out/$b.elf" | tee "$b.txt" || fail "$b on the Cortex-M0"
  done
done

step "budgets: instructions (QEMU -icount shift=0: 1 ns of virtual time per instruction)"
timeout 120 "${qemu_m0[@]}" -icount shift=0 -semihosting-config "$semi" -kernel "$out/budget-m0.elf" \
  | tee budget-m0.txt
for kind in "${configured[@]}"; do
  echo "(the configured library $kind,c8g3)"
  timeout 120 "${qemu_m0[@]}" -icount shift=0 -semihosting-config "$semi" -kernel "$out/budget-m0-$kind.elf" \
    | tee "budget-m0-$kind.txt"
done
echo "(Cortex-M4F, for comparison)"
timeout 120 "${qemu_m4[@]}" -icount shift=0 -semihosting-config "$semi" -kernel "$out/budget-m4.elf" \
  | tee budget-m4.txt

step "budgets: flash (arm-none-eabi-size, bytes) and what the C interface adds, by symbol"
flash() { arm-none-eabi-size -A "$1" | awk '$1 ~ /^\.(vectors|text|rodata|data|ARM\.exidx)$/ { s += $2 } END { print s }'; }
base=$(flash "$out/footprint-base.elf")
share=$(($(flash "$out/footprint-states.elf") - base))
record_share=$(($(flash "$out/footprint-records.elf") - base))
stored_share=$(($(flash "$out/footprint-states-stored.elf") - base))
stored_record_share=$(($(flash "$out/footprint-records-stored.elf") - base))
arm-none-eabi-nm -C "$out/footprint-base.elf" | awk '{ $1=""; $2=""; print substr($0,3) }' | sort -u >base.syms
# "measured - base" is the C interface's share alone only when the base links
# nothing the measured logger does not (its runtime: startup, newlib, the
# helpers): every symbol of the base with a size must be in each logger.
for b in footprint-states footprint-records footprint-states-stored footprint-records-stored; do
  arm-none-eabi-nm -C "$out/$b.elf" | awk '{ $1=""; $2=""; print substr($0,3) }' | sort -u >measured.syms
  extra=$(arm-none-eabi-nm -S -C "$out/footprint-base.elf" | awk 'NF >= 4 && $3 ~ /^[tTrRdDwW]$/ {
      $1=""; $2=""; $3=""; print substr($0,4) }' | sort -u | comm -23 - measured.syms)
  [ -z "$extra" ] || fail "footprint-base links what $b does not (its share would be understated): $extra"
done
for kind in "${configured[@]}"; do
  arm-none-eabi-nm -C "$out/footprint-base-$kind.elf" | awk '{ $1=""; $2=""; print substr($0,3) }' | sort -u >base-$kind.syms
  for b in footprint-$kind footprint-stored-$kind; do
    arm-none-eabi-nm -C "$out/$b.elf" | awk '{ $1=""; $2=""; print substr($0,3) }' | sort -u >measured.syms
    extra=$(arm-none-eabi-nm -S -C "$out/footprint-base-$kind.elf" | awk 'NF >= 4 && $3 ~ /^[tTrRdDwW]$/ {
        $1=""; $2=""; $3=""; print substr($0,4) }' | sort -u | comm -23 - measured.syms)
    [ -z "$extra" ] || fail "footprint-base-$kind links what $b does not: $extra"
  done
done
echo "footprint-base links only runtime that every measured C logger links too (each library its own base)"
split() { # split ELF SHARE: what ELF adds over footprint-base, by kind of symbol
  arm-none-eabi-nm -S -C --radix=d "$1" | awk '
    NR==FNR { base[$0]=1; next }
    $3 ~ /^[tTrRdDwW]$/ { size=$2+0; $1=""; $2=""; $3=""; n=substr($0,4);
      if (n in base) next;
      if (n ~ /read_image|load_image|ImageReader|_LAYOUT$|tm_layout_load|crc::crc32$|station::blank$/) c="loading the stored layout (its image, 1,492 B, the checks and the reads)";
      else if (n ~ /Layout<_>::reset|tenmin_qc::placeholder/) c="the placeholder layout a build or load starts from (Layout::reset only where a refusal must leave it)";
      else if (n ~ /Channel::new|validate|Sentinels::new|config_fingerprint|note_codes|cmath::round|cmath::floor|LayoutMem|types::channel|types::station|_defaults|tm_layout_build|_station$|fp_opt|fp_index|Crc32::word/) c="building the layout at run time (the C settings, Layout::rebuild)";
      else if (n ~ /^tm_|tenmin_qc::/) c="the C interface (tm_*, frames into the caller buffer)";
      else if (n ~ /qc_core/) c="qc-core (sampling, state or record frames)";
      else if (n ~ /compiler_builtins|^__/) c="compiler-builtins (soft f64, 64-bit int, mem*)";
      else c="other";
      sum[c]+=size }
    END { for (c in sum) { printf "  %7d  %s\n", sum[c], c; all += sum[c] }
      printf "  %7d  %s\n", share - all, "without a symbol of its own (constants such as the placeholder layout a run-time build starts from, alignment)" }' \
    share="$2" base.syms - | sort -rn
}
echo "footprint-states - footprint-base = $share B:"
split "$out/footprint-states.elf" "$share"
echo "footprint-records - footprint-base = $record_share B:"
split "$out/footprint-records.elf" "$record_share"
echo "footprint-states-stored - footprint-base = $stored_share B (the layout loaded from its image):"
split "$out/footprint-states-stored.elf" "$stored_share"
declare -A cfg_share cfg_stored_share
for kind in "${configured[@]}"; do
  cbase=$(flash "$out/footprint-base-$kind.elf")
  cfg_share[$kind]=$(($(flash "$out/footprint-$kind.elf") - cbase))
  cfg_stored_share[$kind]=$(($(flash "$out/footprint-stored-$kind.elf") - cbase))
done
cp base-state-logger.syms base.syms
echo "footprint-stored-state-logger - its base = ${cfg_stored_share[state-logger]} B (library state-logger,c8g3; the layout loaded from its image):"
split "$out/footprint-stored-state-logger.elf" "${cfg_stored_share[state-logger]}"

step "budgets table (Cortex-M0, thumbv6m-none-eabi, QEMU microbit; C logger)"
num() { grep -F "budget: $1" "${budget:-budget-m0.txt}" | head -1 | sed -n "s/.*$2 *\([0-9]*\).*/\1/p"; }
ram() { sed -n "s/.*$2 \([0-9]*\) B.*/\1/p" "$1" | head -1; }
printf '%-72s %10s\n' measure measured
info() { printf '%-72s %10s\n' "$1" "$2"; }
info "flash share of the C interface, 8-channel state logger, stored layout (B)" "$stored_share"
info "  the same, library configured state-logger,c8g3 (B)" "${cfg_stored_share[state-logger]}"
info "  the same, its layout built at run time, library state-logger,c8g3 (B)" "${cfg_share[state-logger]}"
info "  the record logger, library record-logger,c8g3, stored / built (B)" "${cfg_stored_share[record-logger]} / ${cfg_share[record-logger]}"
info "  the same, its layout built at run time (B)" "$share"
info "  a C logger that also finishes and screens, stored layout / built (B)" "$stored_record_share / $record_share"
info "instructions per speed sample, 8 cups (counts), per channel, state logger" "$(num 'C: 8 x speed, counts (cup), state logger' 'per channel')"
info "  the same, record logger" "$(num 'C: 8 x speed, counts (cup), record logger' 'per channel')"
info "  state logger, library state-logger,c8g3" "$(budget=budget-m0-state-logger.txt num 'C: 8 x speed, counts (cup), state logger' 'per channel')"
info "  record logger, library record-logger,c8g3" "$(budget=budget-m0-record-logger.txt num 'C: 8 x speed, counts (cup), record logger' 'per channel')"
info "instructions per direction sample, 8 vanes (counts), per channel, state logger" "$(num 'C: 8 x direction, counts, state logger' 'per channel')"
info "  the same, record logger" "$(num 'C: 8 x direction, counts, record logger' 'per channel')"
info "  state logger, library state-logger,c8g3" "$(budget=budget-m0-state-logger.txt num 'C: 8 x direction, counts, state logger' 'per channel')"
info "  record logger, library record-logger,c8g3" "$(budget=budget-m0-record-logger.txt num 'C: 8 x direction, counts, record logger' 'per channel')"
info "RAM of 8 channels: state logger block TM_STATE_LOGGER_C8G3_SIZE (B)" "$(sed -n 's/^#define TM_STATE_LOGGER_C8G3_SIZE //p' "$root/qc-core/capi/include/tenmin_qc.h")"
info "  record logger block TM_RECORD_LOGGER_C8G3_SIZE (B)" "$(sed -n 's/^#define TM_RECORD_LOGGER_C8G3_SIZE //p' "$root/qc-core/capi/include/tenmin_qc.h")"
info "  layout block TM_LAYOUT_C8G3_SIZE (B, in RAM: built at run time)" "$(sed -n 's/^#define TM_LAYOUT_C8G3_SIZE //p' "$root/qc-core/capi/include/tenmin_qc.h")"
info "the demo logger's stack at most, record logger, Cortex-M0 (B)" "$(ram c-m0-records.txt stack)"
info "  state logger (B)" "$(ram c-m0-states.txt stack)"
info "  record / state logger on its stored layout image (B)" "$(ram c-stored-m0-records.txt stack) / $(ram c-stored-m0-states.txt stack)"
info "the demo logger's statics (.data + .bss) and newlib's heap (B)" "$(ram c-m0-records.txt statics) + $(ram c-m0-records.txt heap)"
echo
echo "c/check.sh: the C logger's record and state logs verify on both targets (budgets are reported, not enforced)"
