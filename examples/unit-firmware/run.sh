#!/usr/bin/env bash
# The example firmwares of examples/unit-firmware on QEMU's emulated
# Cortex-M0 (microbit, thumbv6m-none-eabi), and their calibration images.
#
#   run.sh images          regenerate data/*.lcim with the lc-host CLI
#                          (simulate a rig log, calibrate it)
#   run.sh run BIN         build BIN (proximity, level, metal) and run it:
#                          one line per reading, then its peak stack
#   run.sh size BIN        flash and RAM of BIN (needs llvm-size)
#
# `cargo test --test firmware_budget` (root package) builds all three,
# measures them against their budgets and compares their readings with the
# host's. Builds go to ${CARGO_TARGET_DIR:-<repo>/target}/unit-firmware.
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
target_dir="${CARGO_TARGET_DIR:-$root/target}/unit-firmware"
triple=thumbv6m-none-eabi
# RUSTFLAGS from the environment would replace the `-Tlink.x` flags of
# .cargo/config.toml and break the link.
unset RUSTFLAGS CARGO_ENCODED_RUSTFLAGS CARGO_BUILD_RUSTFLAGS

usage() {
    awk 'NR > 1 && /^#/ { sub(/^# ?/, ""); print; next } NR > 1 { exit }' "${BASH_SOURCE[0]}"
    exit 2
}

build() {
    (cd "$here" && CARGO_TARGET_DIR="$target_dir" cargo build --release --target "$triple" --bin "$1")
}

case "${1:-}" in
images)
    work="$(mktemp -d)"
    trap 'rm -rf "$work"' EXIT
    # Reproducible images: a fixed calibration time (Unix 0, as the
    # library writes when no time is given; tests/firmware_budget.rs
    # compares the committed files with the library's output).
    lc_host() { (cd "$root" && SOURCE_DATE_EPOCH=0 cargo run -q -p lc-host -- "$@"); }
    lc_host simulate rig --lot DEMO-01 --units 1 --seed 1 -o "$work/rig.csv"
    lc_host simulate level-rig --lot TANK-01 --units 1 --seed 1 -o "$work/level-rig.csv"
    lc_host calibrate "$work/rig.csv" --plan examples/data/demo-plan.toml --lot DEMO-01 \
        --db "$work/units.db" --images "$work/proximity" >/dev/null
    lc_host calibrate "$work/level-rig.csv" --plan "$here/data/level-plan.toml" --lot TANK-01 \
        --db "$work/units.db" --images "$work/level" >/dev/null
    lc_host calibrate "$work/rig.csv" --plan "$here/data/metal-plan.toml" --lot DEMO-01 \
        --db "$work/units.db" --images "$work/metal" >/dev/null
    cp "$work/proximity/DEMO-01-0001.lcim" "$here/data/proximity.lcim"
    cp "$work/level/TANK-01-0001.lcim" "$here/data/level.lcim"
    cp "$work/metal/DEMO-01-0001.lcim" "$here/data/metal.lcim"
    ls -l "$here"/data/*.lcim
    ;;
run)
    [[ $# -eq 2 ]] || usage
    build "$2"
    timeout 60 qemu-system-arm -machine microbit -cpu cortex-m0 \
        -display none -monitor none -serial null \
        -semihosting-config enable=on,target=native \
        -kernel "$target_dir/$triple/release/$2" </dev/null
    ;;
size)
    [[ $# -eq 2 ]] || usage
    build "$2"
    llvm-size -A "$target_dir/$triple/release/$2"
    ;;
*)
    usage
    ;;
esac
