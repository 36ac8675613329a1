#!/usr/bin/env bash
# Side-by-side: `lc-host convert` against a pandas/numpy script doing the
# same formulas, on one simulated field log. Prints wall time and peak
# memory of each and their ratio. docs/performance.md records a run.
#
#   bash benches/convert/compare.sh [ROWS]     (default 10 000 000)
#
# Needs: python3 with pandas and numpy (pip install pandas numpy), and
# GNU time (/usr/bin/time, Debian package "time").
set -euo pipefail
cd "$(dirname "$0")/../.."
rows=${1:-10000000}
work=${TMPDIR:-/tmp}/lc-convert-bench
mkdir -p "$work"
cargo build --release -q -p lc-host
bin=target/release/lc-host
here=benches/convert

# A lot to calibrate one unit from, and that unit's field log.
"$bin" simulate rig --lot BENCH --units 1 --seed 4 -o "$work/rig.csv"
rm -f "$work/units.db"
"$bin" calibrate "$work/rig.csv" --plan examples/data/demo-plan.toml --lot BENCH \
    --db "$work/units.db" --images "$work/img" > /dev/null
image="$work/img/BENCH-0001.lcim"
"$bin" inspect --json "$image" > "$work/image.json"
duration=$(python3 -c "print($rows / 10)")
"$bin" simulate field --lot BENCH --seed 4 --unit 1 --duration "$duration" --rate 10 \
    --fault dropout@100+1000 -o "$work/field.csv" 2> /dev/null
echo "field log: $(($(wc -l < "$work/field.csv") - 2)) rows, $(du -h "$work/field.csv" | cut -f1)"

measure() { # label, command...
    local label=$1; shift
    /usr/bin/time -f "%e %M" -o "$work/time.txt" "$@" > /dev/null 2>&1
    read -r secs kib < "$work/time.txt"
    printf '%-28s %8.2f s %8.1f MiB\n' "$label" "$secs" "$(echo "$kib / 1024" | bc -l)"
    echo "$secs"  > "$work/$label.secs"
}

measure lc-host "$bin" convert "$work/field.csv" --image "$image" -o "$work/out-rust.csv"
measure pandas python3 "$here/pandas_convert.py" "$work/image.json" "$work/field.csv" "$work/out-pandas.csv"
ratio=$(echo "$(cat "$work/pandas.secs") / $(cat "$work/lc-host.secs")" | bc -l)
printf 'lc-host is %.2f times faster than the pandas script\n' "$ratio"
