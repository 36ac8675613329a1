#!/usr/bin/env bash
# The C example firmwares for the Cortex-M0 of QEMU's microbit machine,
# with Debian's ARM cross toolchain (apt-get install gcc-arm-none-eabi):
# one proximity, level and metal unit each, linking lc-core's C API.
#
#   build.sh [LIBS [OUT]]  build OUT/{proximity,level,metal}.elf, each
#                          linking LIBS/<unit>/liblc_core_capi.a: the
#                          library for thumbv6m-none-eabi built with that
#                          unit's reader alone (cargo feature; default:
#                          built here with cargo into
#                          <repo>/target/capi/units; OUT default:
#                          <repo>/target/c-firmware)
#   build.sh run BIN       build and run BIN in QEMU: one line per reading,
#                          then its peak stack
#
# tests/c_firmware.rs builds them with this script, runs them and
# compares their readings with the Rust firmwares' and the host's.
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
cc=${ARM_CC:-arm-none-eabi-gcc}

units=(proximity level metal)

build_libs() {
    # What a product ships: opt-level "s", LTO, one codegen unit, and the
    # unit's own entry points only (`--no-default-features --features
    # panic-handler,<unit>`: lc_<unit>_reader_open, lc_<unit>_read), so
    # that the library is optimised for them alone. `cargo rustc
    # --crate-type staticlib`: with the package's two crate types
    # (staticlib, rlib) Cargo would leave LTO out.
    local libs="$root/target/capi/units" unit
    for unit in "${units[@]}"; do
        (cd "$root" && CARGO_TARGET_DIR="$root/target/capi" \
            CARGO_PROFILE_RELEASE_OPT_LEVEL=s CARGO_PROFILE_RELEASE_LTO=true \
            CARGO_PROFILE_RELEASE_CODEGEN_UNITS=1 \
            cargo rustc -q --release -p lc-core-capi --lib --crate-type staticlib \
            --no-default-features --features "panic-handler,crc-nibble,$unit" \
            --target thumbv6m-none-eabi)
        mkdir -p "$libs/$unit"
        cp "$root/target/capi/thumbv6m-none-eabi/release/liblc_core_capi.a" "$libs/$unit/"
    done
    echo "$libs"
}

if [[ "${1:-}" == run ]]; then
    [[ $# -eq 2 ]] || { echo "usage: build.sh run proximity|level|metal" >&2; exit 2; }
    "$0"
    exec timeout 60 qemu-system-arm -machine microbit -cpu cortex-m0 \
        -global nrf51-soc.sram-size=65536 \
        -display none -monitor none -serial null \
        -semihosting-config enable=on,target=native \
        -kernel "$root/target/c-firmware/$2.elf" </dev/null
fi

libs="${1:-$(build_libs)}"
out="${2:-$root/target/c-firmware}"
mkdir -p "$out"
command -v "$cc" >/dev/null 2>&1 ||
    { echo "build.sh: $cc not found; install it with: apt-get install gcc-arm-none-eabi" >&2; exit 1; }

# The Rust unit firmwares' care in C: -Os (opt-level "s"), LTO over the
# C files (-flto; the library is one LTO unit of its own), a section per
# function and object, unused ones dropped (--gc-sections).
cflags=(-mcpu=cortex-m0 -mthumb -std=gnu11 -Os -flto -g -ffreestanding -ffunction-sections
    -fdata-sections -Wall -Wextra -Werror -I "$root/lc-core/capi/include" -I "$here/src")
for unit in "${units[@]}"; do
    upper=$(tr '[:lower:]' '[:upper:]' <<<"$unit")
    "$cc" "${cflags[@]}" -DUNIT_"$upper" \
        -DLC_IMAGE_FILE="\"$root/examples/unit-firmware/data/$unit.lcim\"" \
        "$here/src/main.c" "$here/src/board.c" "$here/src/report.c" "$here/src/script.c" \
        "$here/src/image.S" \
        -nostdlib -nostartfiles -T "$here/link.ld" -Wl,--gc-sections -Wl,-z,noexecstack \
        "$libs/$unit/liblc_core_capi.a" -lgcc -o "$out/$unit.elf"
done
