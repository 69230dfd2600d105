#!/usr/bin/env bash
# The project's test command (README "Test"). Installs what it needs on a fresh
# machine, then runs every check CI runs. Usage: ./check.sh [--quick]
#   --quick  skips the cross builds, the browser check and the firmware under QEMU.
set -euo pipefail
cd "$(dirname "$0")"
quick=0
[ "${1:-}" = "--quick" ] && quick=1

step() { printf '\n== %s\n' "$*"; }

step "toolchain components and targets"
rustup component add rustfmt clippy >/dev/null 2>&1 || true
if [ $quick = 0 ]; then
  rustup target add thumbv6m-none-eabi thumbv7em-none-eabihf
fi

step "format"
cargo fmt --all --check

step "clippy (warnings are errors)"
cargo clippy --workspace --all-targets --all-features -- -D warnings

step "docs (warnings are errors)"
RUSTDOCFLAGS="-D warnings" cargo doc --workspace --no-deps --all-features --quiet

step "tests"
cargo test --workspace --all-features

if [ $quick = 0 ]; then
  step "qc-core on bare-metal targets (no std available there), with and without defmt"
  for target in thumbv6m-none-eabi thumbv7em-none-eabihf; do
    cargo build -p qc-core --release --target "$target"
    cargo build -p qc-core --release --target "$target" --features defmt
  done
  step "report page in headless Chromium (installs Debian chromium when missing)"
  host-cli/tests/report-browser/check.sh

  if [ -x firmware-example/run-checks.sh ]; then
    step "firmware under QEMU"
    firmware-example/run-checks.sh
  fi
  if [ -x firmware-example/c/check.sh ]; then
    step "the C logger over the C interface, under QEMU"
    firmware-example/c/check.sh
  fi
fi
echo
echo "check.sh: all checks passed"
