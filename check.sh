#!/usr/bin/env bash
# The project's test command (README "Test"). Installs what it needs on a fresh
# machine, then runs every check CI runs. Usage: ./check.sh [--quick]
#   --quick  skips the cross builds, the browser check and the firmware under QEMU.
set -euo pipefail
cd "$(dirname "$0")"
quick=0
[ "${1:-}" = "--quick" ] && quick=1

# Each step's heading shows the minutes and seconds since the start, so a
# slow CI run shows which step took the time.
start=$SECONDS
step() { printf '\n== [%dm%02ds] %s\n' $(((SECONDS - start) / 60)) $(((SECONDS - start) % 60)) "$*"; }

step "toolchain components and targets"
rustup component add rustfmt clippy >/dev/null 2>&1 || true
if [ $quick = 0 ]; then
  rustup target add thumbv6m-none-eabi thumbv7em-none-eabihf
fi

# The Python packages pytest needs install beside the Rust steps (about 50 s
# of pip on one core, which the builds leave idle now and then); the Python
# step waits for them.
venv=target/pyvenv
mkdir -p target
pip_log="$PWD/target/pip.log"
bash -c "[ -x $venv/bin/python ] || python3 -m venv $venv
  exec $venv/bin/pip install -q maturin pytest 'dask[distributed]' pandas polars pyarrow" >"$pip_log" 2>&1 &
pip_pid=$!
trap 'kill $pip_pid 2>/dev/null || true' EXIT

step "format"
cargo fmt --all --check

step "clippy (warnings are errors)"
cargo clippy --workspace --all-targets --all-features -- -D warnings

step "docs (warnings are errors)"
RUSTDOCFLAGS="-D warnings" cargo doc --workspace --no-deps --all-features --quiet

step "tests"
cargo test --workspace --all-features
# The tenmin the tests ran (debug; overflow checks on): the later steps check
# their results against it, so none builds host-cli's dependencies again in
# release (minutes on a 2-core machine).
export TENMIN="$PWD/target/debug/tenmin"
[ -x "$TENMIN" ] || { echo "check.sh: no $TENMIN after the tests" >&2; exit 1; }

step "Python package (python/, its own cargo workspace): format, clippy, wheel, pytest"
# pyo3's extension module leaves Python's symbols to the interpreter, so the
# crate stays out of `cargo test --workspace`; its Rust is checked here.
export CARGO_TARGET_DIR="$PWD/target"
# Its dependencies are reused from the tests' build only at the versions of
# the top-level Cargo.lock (and with the same dev profile settings): say so
# when python/Cargo.lock has drifted (minutes of compiling, not an error).
python3 - <<'PY'
import tomllib
top = {(p["name"], p["version"]) for p in tomllib.load(open("Cargo.lock", "rb"))["package"]}
names = {n for n, _ in top}
py = tomllib.load(open("python/Cargo.lock", "rb"))["package"]
drift = sorted(f'{p["name"]} {p["version"]}' for p in py
               if p["name"] in names and (p["name"], p["version"]) not in top)
if drift:
    print("check.sh: warning: python/Cargo.lock differs from Cargo.lock in", ", ".join(drift),
          "(compiled twice); align it with `cargo update --manifest-path python/Cargo.toml"
          " -p NAME --precise VERSION`")
PY
cargo fmt --manifest-path python/Cargo.toml --check
cargo clippy --manifest-path python/Cargo.toml --all-targets -- -D warnings
pip_status=0
wait $pip_pid || pip_status=$?
trap - EXIT
if [ $pip_status != 0 ]; then
  cat "$pip_log"
  echo "check.sh: installing the Python packages failed (exit $pip_status)" >&2
  exit 1
fi
# The extension in the dev profile: it reuses the dependencies the tests
# compiled (a release build of arrow and parquet alone took 8 minutes on the
# 2-core CI machine), and pytest checks results, not speed. `pip install
# ./python` without this builds the release extension users get.
MATURIN_PEP517_ARGS="--profile dev" "$venv/bin/pip" install -q --force-reinstall --no-deps ./python
# --quick: fewer random splits (the other checks are the same).
trials=12
[ $quick = 1 ] && trials=4
# pytest runs on one core for about 2.5 minutes: it runs beside the steps
# below (builds and QEMU runs; their budgets count instructions, not time),
# and its output and status come at the end.
pytest_log="$PWD/target/pytest.log"
TENMIN_BIN="$TENMIN" TENMIN_SPLIT_TRIALS=$trials "$venv/bin/python" -m pytest -q python/tests \
  >"$pytest_log" 2>&1 &
pytest_pid=$!
trap 'kill $pytest_pid 2>/dev/null || true' EXIT
echo "pytest started beside the next steps (log: $pytest_log)"
unset CARGO_TARGET_DIR

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

step "pytest (python/tests), run beside the steps above"
pytest_status=0
wait $pytest_pid || pytest_status=$?
trap - EXIT
cat "$pytest_log"
if [ $pytest_status != 0 ]; then
  echo "check.sh: pytest failed (exit $pytest_status)" >&2
  exit 1
fi
echo
echo "check.sh: all checks passed in $(((SECONDS - start) / 60)) min $(((SECONDS - start) % 60)) s"
