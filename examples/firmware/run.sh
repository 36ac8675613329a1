#!/usr/bin/env bash
# Build and run the lc-core firmware example on QEMU's emulated Cortex-M0
# (microbit, thumbv6m-none-eabi) and Cortex-M4F (mps2-an386,
# thumbv7em-none-eabihf). See docs/performance.md.
#
#   run.sh build               build every binary for both cores
#   run.sh pipeline m0|m4f     print the stage and readout tables from the emulator
#   run.sh cost m0|m4f         print instructions per reading
#   run.sh profile m0|m4f      instructions per function of one full reading
#                              (instruction trace; needs awk)
#   run.sh panic-check         build the panic-never proof for both cores,
#                              without and with overflow checks (profile
#                              release-checked), and run it if QEMU is
#                              installed
#   run.sh footprint           flash and RAM of the pipeline binary
#   run.sh stack               peak stack of the pipeline binary on the M0
#
# Builds go to ${CARGO_TARGET_DIR:-<repo>/target}/firmware, the directory
# tests/emulator.rs uses too.
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
root="$(cd "$here/../.." && pwd)"
target_dir="${CARGO_TARGET_DIR:-$root/target}/firmware"
cargo="${CARGO:-cargo}"
timeout_s="${LC_FIRMWARE_TIMEOUT:-60}"

# RUSTFLAGS from the environment would replace the `-Tlink.x` flags of
# .cargo/config.toml and break the link, so they are set here whole: the
# same `-Tlink.x`, and the checkout's path mapped to `/lc` so that the
# panic locations, and with them the binaries' sizes, do not depend on where
# the repository was cloned (scripts/perf-figures.sh checks the sizes).
unset RUSTFLAGS CARGO_BUILD_RUSTFLAGS
CARGO_ENCODED_RUSTFLAGS=$(printf -- '-Clink-arg=-Tlink.x\x1f--remap-path-prefix=%s=/lc' "$root")
export CARGO_ENCODED_RUSTFLAGS

die() {
    echo "run.sh: $*" >&2
    exit 1
}

usage() {
    # The comment block at the top of this file.
    awk 'NR > 1 && /^#/ { sub(/^# ?/, ""); print; next } NR > 1 { exit }' "${BASH_SOURCE[0]}"
    exit 2
}

triple_of() {
    case "$1" in
    m0) echo thumbv6m-none-eabi ;;
    m4f) echo thumbv7em-none-eabihf ;;
    *) die "unknown core '$1': use m0 (Cortex-M0) or m4f (Cortex-M4F)" ;;
    esac
}

# qemu_args_of CORE [ELF]: the emulated machine. The pipeline and the
# panic-never proof run in the microbit's own 16 KiB of SRAM; the measuring
# harnesses (cost, profile) hold a reader and its f32 twin per path, so
# for them the SRAM is enlarged to 64 KiB and their stack starts at its top
# (build.rs). Instruction counts do not depend on the SRAM size.
qemu_args_of() {
    case "$1" in
    m0)
        case "$(basename "${2:-}")" in
        cost | profile) echo "-machine microbit -cpu cortex-m0 -global nrf51-soc.sram-size=65536" ;;
        *) echo "-machine microbit -cpu cortex-m0" ;;
        esac
        ;;
    m4f) echo "-machine mps2-an386 -cpu cortex-m4" ;;
    esac
}

need_targets() {
    command -v rustup >/dev/null 2>&1 || return 0
    local installed missing=()
    installed="$(rustup target list --installed)"
    for t in "$@"; do
        grep -qx "$t" <<<"$installed" || missing+=("$t")
    done
    if ((${#missing[@]})); then
        die "Rust target(s) not installed: ${missing[*]}; install with: rustup target add ${missing[*]}"
    fi
}

need_qemu() {
    command -v qemu-system-arm >/dev/null 2>&1 ||
        die "qemu-system-arm not found; install it with: apt-get install qemu-system-arm"
}

# build TRIPLE BIN [cargo args...]   (PROFILE=release-checked for checks)
build() {
    local triple="$1" bin="$2"
    shift 2
    need_targets "$triple"
    (cd "$here" && CARGO_TARGET_DIR="$target_dir" "$cargo" build --profile "${PROFILE:-release}" \
        --target "$triple" --bin "$bin" "$@")
}

elf() {
    echo "$target_dir/$1/${PROFILE:-release}/$2"
}

# emulate CORE ELF: run under QEMU, one instruction per virtual nanosecond.
emulate() {
    need_qemu
    local core="$1" image="$2"
    # shellcheck disable=SC2046 # word splitting of the machine arguments is intended
    timeout "$timeout_s" qemu-system-arm $(qemu_args_of "$core" "$image") \
        -display none -monitor none -serial null \
        -semihosting-config enable=on,target=native \
        -icount shift=0 -kernel "$image" </dev/null
}

size_tool() {
    local t
    for t in arm-none-eabi-size llvm-size $(compgen -c llvm-size- | sort -rV) rust-size; do
        if command -v "$t" >/dev/null 2>&1; then
            echo "$t"
            return
        fi
    done
    die "no size tool found; install one with: apt-get install binutils-arm-none-eabi (or: apt-get install llvm)"
}

cmd="${1:-}"
case "$cmd" in
build)
    for core in m0 m4f; do
        triple="$(triple_of "$core")"
        build "$triple" pipeline
        build "$triple" cost
        build "$triple" profile
        build "$triple" panic_proof --features panic-never
    done
    ;;
pipeline | cost)
    [[ $# -eq 2 ]] || usage
    triple="$(triple_of "$2")"
    build "$triple" "$cmd"
    emulate "$2" "$(elf "$triple" "$cmd")"
    ;;
profile)
    # One instruction per translation block (-singlestep), each logged with
    # its function's symbol (-d exec,nochain), straight into awk: between
    # the markers profile::path_<name>, instructions per function, per
    # reading (each path runs eight readings). Symbols are Rust's mangled
    # names; c++filt demangles them when installed.
    [[ $# -eq 2 ]] || usage
    triple="$(triple_of "$2")"
    build "$triple" profile
    need_qemu
    demangle=cat
    command -v c++filt >/dev/null 2>&1 && demangle=c++filt
    # shellcheck disable=SC2046 # word splitting of the machine arguments is intended
    timeout "$((timeout_s * 5))" qemu-system-arm $(qemu_args_of "$2" profile) \
        -display none -monitor none -serial null \
        -semihosting-config enable=on,target=native \
        -singlestep -d exec,nochain -D /dev/stdout \
        -kernel "$(elf "$triple" profile)" </dev/null |
        awk -v readings=8 '
            /^Trace / {
                sym = $NF
                if (match(sym, /7profile[0-9]+path_[a-z0-9_]+/)) {
                    if (!inmark) {
                        path = substr(sym, RSTART, RLENGTH)
                        sub(/^7profile[0-9]+path_/, "", path)
                        sub(/[0-9]+h[0-9a-f]+$/, "", path) # the mangled name'"'"'s hash
                        inmark = 1
                    }
                    next
                }
                inmark = 0
                if (path == "" || path == "end") next
                n[path SUBSEP sym]++; total[path]++
            }
            END {
                for (k in n) {
                    split(k, p, SUBSEP)
                    printf "%s\t%09.1f\t%s\n", p[1], n[k] / readings, p[2]
                }
                for (q in total) printf "%s\t%09.1f\t(total per reading)\n", q, total[q] / readings
            }' | sort -t "$(printf '\t')" -k1,1 -k2,2r | $demangle |
        sed -E 's/::h[0-9a-f]{16}$//; s/\[[0-9a-f]{16}\]//g' |
        awk -F '\t' '{ sub(/^0+/, "", $2); sub(/^\./, "0.", $2); if ($1 != last) { print "== " $1; last = $1 } printf "%10s  %s\n", $2, $3 }'
    ;;
panic-check)
    for PROFILE in release release-checked; do
        for core in m0 m4f; do
            triple="$(triple_of "$core")"
            build "$triple" panic_proof --features panic-never ||
                die "panic-never build ($PROFILE) for $triple failed: a panic path is reachable (see the linker error above)"
            echo "panic-never proof links for $triple ($PROFILE)"
            if command -v qemu-system-arm >/dev/null 2>&1; then
                emulate "$core" "$(elf "$triple" panic_proof)"
            fi
        done
    done
    ;;
footprint)
    tool="$(size_tool)"
    for core in m0 m4f; do
        triple="$(triple_of "$core")"
        build "$triple" pipeline
        echo "== pipeline, $triple ($tool)"
        "$tool" "$(elf "$triple" pipeline)"
        "$tool" -A "$(elf "$triple" pipeline)" | grep -E '^(section|\.vector_table|\.text|\.rodata|\.data|\.bss|\.uninit)'
    done
    ;;
stack)
    # Peak stack of the pipeline on the M0: the stack is moved to the
    # bottom of RAM, just N bytes deep, where an overflow faults (the
    # memory below 0x20000000 is unmapped on the microbit machine). The
    # smallest N whose run still prints the full table is the peak, to
    # 8 bytes (the stack's alignment). N is searched up to the board's
    # 16 KiB of SRAM.
    triple=thumbv6m-none-eabi
    build "$triple" pipeline
    expected="$(emulate m0 "$(elf "$triple" pipeline)")"
    low=0 high=16384
    while ((high - low > 8)); do
        mid=$(((low + high) / 2 / 8 * 8))
        (cd "$here" && LC_FIRMWARE_STACK_BYTES=$mid CARGO_TARGET_DIR="$target_dir/stack" \
            "$cargo" build -q --release --target "$triple" --bin pipeline)
        got="$(timeout_s=5 emulate m0 "$target_dir/stack/$triple/release/pipeline" 2>/dev/null || true)"
        if [[ "$got" == "$expected" ]]; then high=$mid; else low=$mid; fi
    done
    echo "pipeline peak stack on $triple: at most $high bytes (fails with $low)"
    ;;
*)
    usage
    ;;
esac
