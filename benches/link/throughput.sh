#!/usr/bin/env bash
# Decoding and conversion rate of `lc-host listen` from a replay file: the
# example firmware's stream (examples/link-firmware, QEMU microbit, 606
# frames with its injected faults) repeated COPIES times (default 2 000:
# 1.2 million frames, 39 MB; each copy starts with the unit's start
# hello, so the sequence runs restart), replayed through the demo
# proximity image, without and with recording (raw stream and field log).
# Prints frames per second of each run (wall clock, best of three).
#
#   bash benches/link/throughput.sh [COPIES]
set -euo pipefail
cd "$(dirname "$0")/../.."
copies="${1:-2000}"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT

bash examples/link-firmware/run.sh record "$work/one.lclink" >/dev/null 2>&1
for _ in $(seq "$copies"); do cat "$work/one.lclink"; done >"$work/replay.lclink"
cargo build --release -q -p lc-host
bin="${CARGO_TARGET_DIR:-target}/release/lc-host"
image=examples/firmware/data/demo-proximity.lcim

run() {
    # $1 label, then extra arguments
    local label="$1" best=""
    shift
    for _ in 1 2 3; do
        rm -rf "$work/rec"
        local t0 t1 frames
        t0=$(date +%s.%N)
        frames=$("$bin" listen "$work/replay.lclink" --image "$image" --json "$@" 2>/dev/null |
            awk -F: '/"frames"/ && !done { gsub(/[ ,]/, "", $2); print $2; done = 1 }')
        t1=$(date +%s.%N)
        local rate
        rate=$(awk -v f="$frames" -v a="$t0" -v b="$t1" 'BEGIN { printf "%.0f", f / (b - a) }')
        if [ -z "$best" ] || [ "$rate" -gt "$best" ]; then best=$rate; fi
    done
    printf '%-28s %s frames, %s frames/s\n' "$label" "$frames" "$best"
}
printf 'replay of %s bytes (%s copies of the firmware stream)\n' \
    "$(stat -c %s "$work/replay.lclink")" "$copies"
run "decode + convert"
run "decode + convert + record" --record "$work/rec"
