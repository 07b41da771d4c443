#!/usr/bin/env bash
# Idempotent set-up of what the firmware build and its emulated test need, on a fresh Debian
# machine as root: the two bare-metal Rust targets and QEMU's ARM system emulator.
# Quiet on success; on failure it says which step failed and shows that step's output.
set -u

log="$(mktemp)"
trap 'rm -f "$log"' EXIT

fail() {
    echo "firmware-tools: $1 failed:" >&2
    cat "$log" >&2
    exit 1
}

# Rust targets: thumbv7em-none-eabihf (Cortex-M4F jig images), thumbv6m-none-eabi (core's M0+ check).
installed="$(rustup target list --installed 2>/dev/null || true)"
for t in thumbv7em-none-eabihf thumbv6m-none-eabi; do
    if ! grep -qx "$t" <<<"$installed"; then
        rustup target add "$t" >"$log" 2>&1 || fail "rustup target add $t"
    fi
done

# QEMU for the emulated jig image (netduinoplus2 machine).
if ! command -v qemu-system-arm >/dev/null 2>&1; then
    if [ "$(id -u)" -ne 0 ]; then
        echo "firmware-tools: qemu-system-arm is missing and this is not root; install it with 'apt-get install qemu-system-arm'" >&2
        exit 1
    fi
    export DEBIAN_FRONTEND=noninteractive
    apt-get update >"$log" 2>&1 || fail "apt-get update"
    apt-get install -y qemu-system-arm >"$log" 2>&1 || fail "apt-get install qemu-system-arm"
    command -v qemu-system-arm >/dev/null 2>&1 || { echo "firmware-tools: qemu-system-arm still missing after install" >&2; exit 1; }
fi

# `firmware-tools.sh size`: flash/RAM of the built images with whichever size tool exists
# (Debian's llvm-size works on these ELF files; the emulated test parses the ELF headers itself,
# so no size tool is required).
if [ "${1:-}" = "size" ]; then
    dir="$(cd "$(dirname "$0")/../firmware-example" && pwd)/target/thumbv7em-none-eabihf/release"
    for tool in arm-none-eabi-size llvm-size rust-size; do
        if command -v "$tool" >/dev/null 2>&1; then
            exec "$tool" "$dir/jig-stm32f411" "$dir/jig-emulated"
        fi
    done
    echo "firmware-tools: no size tool (arm-none-eabi-size, llvm-size, rust-size) found" >&2
    exit 1
fi
exit 0
