#!/usr/bin/env bash
# Time, memory and size of the lot report of a large simulated lot
# (docs/performance.md, "Lot report"). Calibrates the same rig log twice,
# without and with --report, so the difference is the report's cost.
#
#   bash benches/report/measure.sh [UNITS]     # default 10 000
#
# Needs GNU time (/usr/bin/time, Debian package `time`) for the peak memory.
set -euo pipefail
cd "$(dirname "$0")/../.."
units=${1:-10000}
cargo build --release -p lc-host --quiet
bin=target/release/lc-host
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
plan=examples/data/demo-plan.toml
"$bin" simulate rig --lot BIG --units "$units" --seed 1 --bad-every 50 --corrupt-every 200 \
    -o "$dir/rig.csv" 2>/dev/null
echo "rig log: $units units, $(stat -c %s "$dir/rig.csv") bytes"

run() {
    # $1: label; the rest: extra calibrate arguments
    local label=$1
    shift
    rm -rf "$dir/db.sqlite" "$dir/db.sqlite-wal" "$dir/db.sqlite-shm" "$dir/img"
    /usr/bin/time -f "$label: %e s wall, %U s user, %M KiB peak RSS" \
        "$bin" calibrate "$dir/rig.csv" --plan "$plan" --lot BIG \
        --db "$dir/db.sqlite" --images "$dir/img" "$@" >/dev/null 2>"$dir/err" || {
        cat "$dir/err"
        exit 1
    }
    grep -E "s wall" "$dir/err"
}
run "calibrate, no report"
run "calibrate with --report" --report "$dir/report"
r=$dir/report
echo "report: $(du -sb "$r" | cut -f1) bytes in $(find "$r" -type f | wc -l) files"
echo "  index.html: $(stat -c %s "$r/index.html") bytes"
echo "  plots/: $(du -sb "$r/plots" | cut -f1) bytes in $(find "$r/plots" -type f | wc -l) files"
echo "  unit pages: $(find "$r/units" -name '*.html' | wc -l), $(find "$r/units" -name '*.html' -print0 | du -cb --files0-from=- | tail -1 | cut -f1) bytes"
echo "  unit plots: $(find "$r/units" -name '*.svg' | wc -l), $(find "$r/units" -name '*.svg' -print0 | du -cb --files0-from=- | tail -1 | cut -f1) bytes"
