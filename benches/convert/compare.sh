#!/usr/bin/env bash
# Side by side, in one run: `lc-host convert` against
#   - a lean single-pass, single-threaded Rust conversion with lc-core's
#     reader (benches/convert/lean.rs): the machine's limit, same bytes out;
#   - pandas with its Arrow CSV engine, numpy formulas and Arrow's CSV
#     writer (benches/convert/pandas_convert.py): the same statuses and the
#     image's own cubic curve, checked row for row against convert's output.
# Each is run RUNS times, interleaved; the script prints every run, the
# medians, the ratios, the peak resident memory and the load average.
# docs/performance.md records a run.
#
#   bash benches/convert/compare.sh [ROWS] [RUNS]     (default 10 000 000, 3)
#
# Environment: WORK (scratch directory, default /tmp/lc-convert-bench; the
# field log of 10^7 rows is 316 MB and each output 460 MB), THREADS (passed
# to convert's --threads; default: one per core), BASELINE (another lc-host
# binary to time as well; its output must be byte-identical).
#
# Needs: python3 with venv and pip (pandas, pyarrow and numpy are installed
# into $WORK/venv on first use), GNU time (/usr/bin/time, Debian package
# "time"). CI does not run this benchmark.
set -euo pipefail
cd "$(dirname "$0")/../.."
rows=${1:-10000000}
runs=${2:-3}
work=${WORK:-/tmp/lc-convert-bench}
mkdir -p "$work"
cargo build --release -q -p lc-host
cargo build --release -q --example convert_lean
bin=$PWD/target/release/lc-host
lean=$PWD/target/release/examples/convert_lean
here=$PWD/benches/convert

if ! "$work/venv/bin/python" -c "import pandas, pyarrow, numpy" 2> /dev/null; then
    python3 -m venv "$work/venv"
    "$work/venv/bin/pip" install -q pandas pyarrow numpy
fi
py=$work/venv/bin/python

# A lot to calibrate one unit from (the demo plan: 32-node monotone cubic
# curve, drift model), and that unit's field log with faults injected.
if [ ! -s "$work/field-$rows.csv" ]; then
    "$bin" simulate rig --lot BENCH --units 1 --seed 4 -o "$work/rig.csv"
    rm -f "$work/units.db"
    "$bin" calibrate "$work/rig.csv" --plan examples/data/demo-plan.toml --lot BENCH \
        --db "$work/units.db" --images "$work/img" > /dev/null
    duration=$(python3 -c "print($rows / 10)")
    "$bin" simulate field --lot BENCH --seed 4 --unit 1 --duration "$duration" --rate 10 \
        --fault dropout@100+1000 --fault open@5000+30 --fault short@90000+20 --fault stuck@200000+50 \
        -o "$work/field-$rows.csv" 2> /dev/null
fi
image="$work/img/BENCH-0001.lcim"
"$bin" inspect --json "$image" > "$work/image.json"
field="$work/field-$rows.csv"
echo "field log: $(($(wc -l < "$field") - 2)) rows, $(du -h "$field" | cut -f1); $(nproc) cores"

measure() { # label, command...
    local label=$1; shift
    local load; load=$(cut -d' ' -f1 /proc/loadavg)
    /usr/bin/time -f "%e %M" -o "$work/time.txt" "$@" > /dev/null 2>&1
    read -r secs kib < "$work/time.txt"
    printf '  %-10s %8.2f s %8.1f MiB   (load %s)\n' "$label" "$secs" "$(echo "$kib / 1024" | bc -l)" "$load"
    echo "$secs $kib" >> "$work/$label.runs"
}

threads=()
[ -n "${THREADS:-}" ] && threads=(--threads "$THREADS")
rm -f "$work"/*.runs
for run in $(seq "$runs"); do
    echo "run $run:"
    measure convert "$bin" convert "$field" --image "$image" -o "$work/out-convert.csv" "${threads[@]}"
    measure lean "$lean" "$image" "$field" "$work/out-lean.csv"
    measure pandas "$py" "$here/pandas_convert.py" "$work/image.json" "$field" "$work/out-pandas.csv"
    if [ -n "${BASELINE:-}" ]; then
        measure baseline "$BASELINE" convert --image "$image" --input "$field" -o "$work/out-baseline.csv"
    fi
done

cmp "$work/out-convert.csv" "$work/out-lean.csv"
echo "lean output: byte-identical to convert's"
if [ -n "${BASELINE:-}" ]; then
    cmp "$work/out-convert.csv" "$work/out-baseline.csv"
    echo "baseline output: byte-identical to convert's"
fi
"$py" "$here/pandas_convert.py" --check "$work/out-convert.csv" "$work/out-pandas.csv" "$work/image.json"

median() { sort -n -k"$2" "$work/$1.runs" | awk -v c="$2" '{v[NR]=$c} END {print v[int((NR+1)/2)]}'; }
echo "medians of $runs runs ($rows rows):"
for label in convert lean pandas ${BASELINE:+baseline}; do
    secs=$(median "$label" 1)
    printf '  %-10s %8.2f s %8.1f MiB peak %10.0f rows/s\n' "$label" "$secs" \
        "$(echo "$(median "$label" 2) / 1024" | bc -l)" "$(echo "$rows / $secs" | bc -l)"
done
c=$(median convert 1)
printf 'convert is %.2f times faster than pandas (Arrow engine), %.2f times the lean conversion'"'"'s time\n' \
    "$(echo "$(median pandas 1) / $c" | bc -l)" "$(echo "$c / $(median lean 1)" | bc -l)"
if [ -n "${BASELINE:-}" ]; then
    printf 'convert is %.2f times faster than the baseline\n' "$(echo "$(median baseline 1) / $c" | bc -l)"
fi
