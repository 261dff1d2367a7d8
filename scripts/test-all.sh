#!/usr/bin/env bash
# The whole test suite, from a fresh machine: installs what the tests need, then runs
# formatting and lint checks, the unit, property and end-to-end tests, the bare-metal
# builds, the firmware on emulated Cortex-M0/M4 (QEMU) and the main job on the demo plant.
set -euo pipefail
cd "$(dirname "$0")/.."

# Each step's wall time, printed as it ends and summed up at the end, so that what
# dominates the command is visible in its own output.
step_name=""
step_start=$SECONDS
timings=()
end_step() {
  if [ -n "$step_name" ]; then
    timings+=("$(printf '%5d s  %s' $((SECONDS - step_start)) "$step_name")")
  fi
}
step() {
  end_step
  step_name="$*"
  step_start=$SECONDS
  printf '\n==> %s\n' "$*"
}

step "what this script cannot install"
# A Rust toolchain at least as new as the workspace's rust-version (one fact, one place:
# read it from Cargo.toml) and a C linker for the host builds. Check before anything runs.
need_rust=$(sed -n 's/^rust-version *= *"\([0-9.]*\)".*/\1/p' Cargo.toml | head -n 1)
if ! command -v cargo >/dev/null 2>&1 || ! command -v rustup >/dev/null 2>&1; then
  echo "Rust is missing: install rustup (https://rustup.rs) and a toolchain >= $need_rust, then rerun" >&2
  exit 1
fi
have_rust=$(rustc --version | sed -n 's/^rustc \([0-9][0-9.]*\).*/\1/p')
if [ "$(printf '%s\n%s\n' "$need_rust" "$have_rust" | sort -V | head -n 1)" != "$need_rust" ]; then
  echo "rustc $have_rust is older than the workspace's rust-version $need_rust: run 'rustup update stable'" >&2
  exit 1
fi
if ! command -v cc >/dev/null 2>&1; then
  echo "no C linker (cc) found: install one (Debian/Ubuntu: sudo apt-get install build-essential)" >&2
  exit 1
fi
echo "rustc $have_rust (workspace needs >= $need_rust), linker $(command -v cc)"

step "toolchain components and targets"
for c in rustfmt clippy; do
  if ! rustup component list --installed | grep -q "^$c"; then
    rustup component add "$c"
  fi
done
for t in thumbv6m-none-eabi thumbv7em-none-eabihf; do
  if ! rustup target list --installed | grep -qx "$t"; then
    rustup target add "$t"
  fi
done

step "qemu-system-arm"
if ! command -v qemu-system-arm >/dev/null 2>&1; then
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
    apt-get update -qq
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq qemu-system-arm >/dev/null
  else
    echo "qemu-system-arm is missing: install it (Debian/Ubuntu: sudo apt-get install qemu-system-arm)" >&2
    exit 1
  fi
fi
qemu-system-arm --version | head -n 1

step "format and lints"
cargo fmt --all --check
cargo clippy --workspace --all-targets -- -D warnings

step "unit, property and end-to-end tests"
# One fixed seed for the property tests here, so that a run of this command is repeatable
# (the saved regression cases replay first either way); `cargo run -p xtask -- soak` explores
# fresh seeds for as long as asked. Set PROPTEST_RNG_SEED to try another seed.
export PROPTEST_RNG_SEED="${PROPTEST_RNG_SEED:-20261202}"
cargo test --workspace

step "bare-metal check of the core with defmt"
# The plain core is built for both targets by the firmware step below (release, as it
# ships); here only what the firmware does not build: the `defmt` feature. A library has
# nothing to link, so a check (types, borrows, the derives' expansions) is what a build
# would prove, without its code generation.
for t in thumbv6m-none-eabi thumbv7em-none-eabihf; do
  cargo check -p tidewire-core --target "$t" --features defmt
done

step "firmware on emulated Cortex-M0 and Cortex-M4"
cargo run -p xtask -- firmware
cargo run -p xtask -- firmware --inject-panic

step "rig end to end on the emulated Cortex-M4 (control link, capture, overruns)"
cargo run -p xtask -- rig

step "rig firmware for the reference board (STM32F407 Discovery; build only)"
# Into the emulated rig's target folder (the path `xtask rig` uses): both are thumbv7em
# release builds with the same profile, so the core, the link and the cortex-m crates the
# rig step compiled are reused instead of compiled again (107 s alone, 68 s after the rig,
# fresh targets).
rig_target="${CARGO_TARGET_DIR:+$CARGO_TARGET_DIR/rig-fw}"
(cd examples/rig-board && CARGO_TARGET_DIR="${rig_target:-$PWD/../rig/target}" cargo build --release)

step "main job on the built-in demo plant"
# The dev build the tests above already made: a release build of the host tools costs
# minutes on a fresh clone for a demo that runs in seconds in either profile (same output).
cargo run -p tidewire-host -- demo --out target/demo-check

end_step
echo
printf '%s\n' "${timings[@]}"
echo "all checks passed in $SECONDS s"
