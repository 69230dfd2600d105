#!/usr/bin/env bash
# Runs the fuzz targets of the tenmin readers with cargo-fuzz (libFuzzer),
# one after another, each for SECONDS (default 60), starting from the committed
# corpus (corpus/<target>/). Installs cargo-fuzz when it is missing.
#
# Usage: host-cli/fuzz/run.sh [SECONDS] [TARGET...]
#        host-cli/fuzz/run.sh --merge [TARGET...]
# Targets: samples layouts columnar draft station records frames logscan campaign table image (default: all).
#
# New inputs go to new/<target>/ (not committed). `--merge` adds those of them
# that reach new code to corpus/<target>/ (libFuzzer's -merge=1, which keeps
# the smallest input per edge), ready to commit. Keep the corpus small (a few
# hundred KB in all): the committed one holds the seeds (seed-*, seed.sh) and
# the smallest inputs the fuzzers found (found-*), about 45 KB a target.
# A crash or hang is saved under artifacts-found/<target>/ (not committed) and
# stops that target; `cargo test -p host-cli --test fuzz_corpus` replays a
# file put into corpus/<target>/ on stable once the cause is fixed.
#
# cargo-fuzz passes nightly-only compiler flags (the sanitizer, coverage
# instrumentation). With only a stable toolchain, RUSTC_BOOTSTRAP=1 lets the
# stable compiler take them; a nightly toolchain works too (then drop it).
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
all=(samples layouts columnar draft station records frames logscan campaign table image)

merge=0
secs=60
if [ "${1:-}" = "--merge" ]; then
  merge=1
  shift
elif [[ "${1:-}" =~ ^[0-9]+$ ]]; then
  secs=$1
  shift
fi
targets=("$@")
[ ${#targets[@]} -gt 0 ] || targets=("${all[@]}")

command -v cargo-fuzz >/dev/null 2>&1 || cargo install cargo-fuzz --locked
export RUSTC_BOOTSTRAP="${RUSTC_BOOTSTRAP:-1}"
cd "$here/.."   # host-cli: cargo fuzz finds fuzz/ here

failed=()
for t in "${targets[@]}"; do
  mkdir -p "fuzz/new/$t" "fuzz/artifacts-found/$t"
  if [ $merge = 1 ]; then
    echo "== $t: merging fuzz/new/$t into fuzz/corpus/$t"
    cargo fuzz run "$t" "fuzz/corpus/$t" "fuzz/new/$t" -- -merge=1 -use_counters=0
  else
    echo "== $t: $secs s"
    # The first corpus folder receives the new inputs; the committed one is read.
    # The replay's threads (--jobs 2, the read-ahead) may still be running
    # their thread-local destructors when an input ends: LeakSanitizer then
    # reports std's per-thread channel context as leaked (112 bytes from
    # __cxa_thread_atexit_impl; seen on the layouts target), a false alarm.
    leaks=1
    case "$t" in samples|layouts|columnar|draft|campaign|table) leaks=0 ;; esac
    cargo fuzz run "$t" "fuzz/new/$t" "fuzz/corpus/$t" -- \
      -max_total_time="$secs" -timeout=30 -rss_limit_mb=2048 -print_final_stats=1 \
      -detect_leaks="$leaks" \
      -artifact_prefix="fuzz/artifacts-found/$t/" \
      || { echo "== $t: stopped on a crash or hang, input in host-cli/fuzz/artifacts-found/$t/"; failed+=("$t"); }
  fi
done
du -sh fuzz/corpus/* 2>/dev/null || true
if [ ${#failed[@]} -gt 0 ]; then
  echo "run.sh: crashes or hangs in: ${failed[*]}" >&2
  exit 1
fi
