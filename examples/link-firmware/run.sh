#!/usr/bin/env bash
# The live-link example firmware on QEMU's emulated Cortex-M0 (microbit,
# thumbv6m-none-eabi).
#
#   run.sh record FILE     run the firmware with its UART written to FILE
#                          (replay it: lc-host listen FILE --image ...)
#   run.sh serve PORT      run it with its UART on 127.0.0.1:PORT (QEMU
#                          waits for a client: lc-host listen --tcp ...)
#   run.sh cost            instructions per record of the encoder
#                          (SysTick under -icount shift=0)
#
# The end-to-end test is lc-host/tests/link_firmware.rs. Builds go to
# ${CARGO_TARGET_DIR:-<repo>/target}/link-firmware.
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
target_dir="${CARGO_TARGET_DIR:-$root/target}/link-firmware"
triple=thumbv6m-none-eabi
unset RUSTFLAGS CARGO_ENCODED_RUSTFLAGS CARGO_BUILD_RUSTFLAGS

usage() {
    awk 'NR > 1 && /^#/ { sub(/^# ?/, ""); print; next } NR > 1 { exit }' "${BASH_SOURCE[0]}"
    exit 2
}

build() {
    (cd "$here" && CARGO_TARGET_DIR="$target_dir" cargo build --release --target "$triple" --bin "$1" >&2)
}

# qemu SECONDS ARGS...: the machine, bounded in time.
qemu() {
    local t="$1"
    shift
    timeout "$t" qemu-system-arm -machine microbit -cpu cortex-m0 -display none -monitor none \
        -semihosting-config enable=on,target=native "$@" </dev/null
}

case "${1:-}" in
record)
    [[ $# -eq 2 ]] || usage
    build link-firmware
    qemu 60 -serial "file:$2" -kernel "$target_dir/$triple/release/link-firmware"
    ;;
serve)
    [[ $# -eq 2 ]] || usage
    build link-firmware
    qemu 600 -serial "tcp:127.0.0.1:$2,server=on,wait=on" \
        -kernel "$target_dir/$triple/release/link-firmware"
    ;;
cost)
    build cost
    qemu 120 -serial null -icount shift=0 -kernel "$target_dir/$triple/release/cost"
    ;;
*)
    usage
    ;;
esac
