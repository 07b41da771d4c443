#!/usr/bin/env bash
# Every test of biasjig, from a fresh machine: installs what the tests need (Rust targets for the
# microcontroller builds, QEMU's ARM emulator for the firmware test, PostgreSQL for the store
# tests), then runs format and lint
# checks, the documentation's links, the no_std builds of the core, the whole workspace's tests, and the firmware's own tests.
set -euo pipefail
cd "$(dirname "$0")/.."

step() { printf '\n== %s\n' "$*"; }

step "set-up: rustup targets and qemu-system-arm (installed when missing)"
bash scripts/firmware-tools.sh
rustup component add clippy rustfmt >/dev/null 2>&1 || true

step "set-up: PostgreSQL for the results-store tests (Debian's package, installed when missing)"
# The store tests start their own cluster in a temporary folder, run as its own user, and stop it.
bash scripts/postgres-test.sh install

step "format"
cargo fmt --all -- --check

step "lint (warnings denied)"
cargo clippy --workspace --all-targets --locked -- -D warnings
# The core as the instrument's budget build uses it (no design search, no Monte Carlo console).
cargo clippy --locked -p biasjig-core --no-default-features -- -D warnings

step "documentation: every doc link resolves (warnings denied)"
RUSTDOCFLAGS="-D warnings" cargo doc --workspace --no-deps --locked
(cd firmware-example && RUSTDOCFLAGS="-D warnings" cargo doc --no-deps --locked)

step "core builds with no std and no alloc (Cortex-M0+ without FPU, Cortex-M4F)"
cargo build --locked -p biasjig-core --target thumbv6m-none-eabi
cargo build --locked -p biasjig-core --target thumbv7em-none-eabihf
cargo build --locked -p biasjig-core --target thumbv7em-none-eabihf --no-default-features

step "core unit tests as the instrument's budget build uses it (no default features)"
cargo test --locked -p biasjig-core --no-default-features --lib

step "firmware: application unit tests on the host"
(cd firmware-example && cargo test --locked --target x86_64-unknown-linux-gnu --lib)
# The budget build's own unit tests (no design search, no Monte Carlo in the console).
(cd firmware-example && cargo test --locked --target x86_64-unknown-linux-gnu --lib --no-default-features)

step "fuzz targets: their checks over the seeds and drawn inputs (stable Rust; cargo fuzz needs nightly)"
# The fuzz crate is its own workspace. The targets' code lives in its library; the corpus
# harness runs it on stable, so a fresh machine with the one toolchain builds and runs it. With
# nightly and cargo-fuzz: `cd fuzz && cargo +nightly fuzz run NAME seeds/NAME`. Not --locked:
# fuzz/Cargo.lock follows the core's dependencies, and a change there must not stop the run (the
# versions it already pins stay; commit the updated lock).
(cd fuzz && cargo test)

step "workspace tests (core, host command line, cross-crate, firmware under QEMU)"
cargo test --workspace --locked
